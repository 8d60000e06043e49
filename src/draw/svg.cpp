// The SVG document builder: escaping, compact numbers, elements with presentation attributes.
#include "shelfstage/draw/svg.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdint>

namespace shelfstage::draw {

namespace {

/// Length of the UTF-8 sequence starting at s[i] if it is well formed (RFC 3629), else 0.
std::size_t utf8_length(std::string_view s, std::size_t i) {
  const auto b = static_cast<unsigned char>(s[i]);
  std::size_t n = 0;
  std::uint32_t cp = 0;
  if (b < 0x80) return 1;
  if (b >= 0xC2 && b <= 0xDF) {
    n = 2;
    cp = b & 0x1Fu;
  } else if (b >= 0xE0 && b <= 0xEF) {
    n = 3;
    cp = b & 0x0Fu;
  } else if (b >= 0xF0 && b <= 0xF4) {
    n = 4;
    cp = b & 0x07u;
  } else {
    return 0;
  }
  if (i + n > s.size()) return 0;
  for (std::size_t k = 1; k < n; ++k) {
    const auto c = static_cast<unsigned char>(s[i + k]);
    if ((c & 0xC0u) != 0x80u) return 0;
    cp = (cp << 6) | (c & 0x3Fu);
  }
  // Overlong forms, surrogates and values past U+10FFFF are not UTF-8; U+FFFE/U+FFFF are
  // not XML characters.
  if ((n == 3 && cp < 0x800) || (n == 4 && cp < 0x10000) || (cp >= 0xD800 && cp <= 0xDFFF) || cp > 0x10FFFF ||
      cp == 0xFFFE || cp == 0xFFFF)
    return 0;
  return n;
}

std::string other_attrs(const Attrs& attrs) {
  std::string a;
  for (const auto& [k, v] : attrs) a += fmt::format(" {}=\"{}\"", k, xml_escape(v));
  return a;
}

std::string points_attr(const std::vector<Point>& pts) {
  std::string s;
  for (const auto& p : pts) {
    if (!s.empty()) s += ' ';
    s += num(p.x);
    s += ',';
    s += num(p.y);
  }
  return s;
}

}  // namespace

std::string xml_escape(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (std::size_t i = 0; i < text.size();) {
    const char c = text[i];
    switch (c) {
      case '&':
        out += "&amp;";
        ++i;
        continue;
      case '<':
        out += "&lt;";
        ++i;
        continue;
      case '>':
        out += "&gt;";
        ++i;
        continue;
      case '"':
        out += "&quot;";
        ++i;
        continue;
      case '\'':
        out += "&#39;";
        ++i;
        continue;
      default: break;
    }
    const auto b = static_cast<unsigned char>(c);
    if (b < 0x20) {
      if (c == '\t' || c == '\n' || c == '\r') out += c;
      ++i;
      continue;
    }
    const std::size_t n = utf8_length(text, i);
    if (n == 0) {
      out += "\xEF\xBF\xBD";  // U+FFFD REPLACEMENT CHARACTER
      ++i;
      continue;
    }
    out.append(text.substr(i, n));
    i += n;
  }
  return out;
}

std::string Paint::attributes() const {
  std::string a;
  if (!stroke_.empty()) a += fmt::format(" stroke=\"{}\"", xml_escape(stroke_));
  if (stroke_width_ > 0) a += fmt::format(" stroke-width=\"{}\"", num(stroke_width_));
  if (!fill_.empty()) a += fmt::format(" fill=\"{}\"", xml_escape(fill_));
  if (opacity_ < 1) a += fmt::format(" fill-opacity=\"{0}\" stroke-opacity=\"{0}\"", num(std::max(0.0, opacity_)));
  if (!dash_.empty()) a += fmt::format(" stroke-dasharray=\"{}\"", xml_escape(dash_));
  if (round_) a += " stroke-linecap=\"round\" stroke-linejoin=\"round\"";
  return a;
}

std::string num(double v) {
  if (!std::isfinite(v)) return "0";
  std::string s = fmt::format("{:.2f}", v);
  while (s.back() == '0') s.pop_back();
  if (s.back() == '.') s.pop_back();
  if (s == "-0") s = "0";
  return s;
}

Svg::Svg(double width, double height, std::string_view label) : width_(width), height_(height) {
  head_ = fmt::format(
      "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{0}\" height=\"{1}\" viewBox=\"0 0 {0} {1}\" "
      "font-family=\"'DejaVu Sans', 'Liberation Sans', Arial, sans-serif\"",
      num(width), num(height));
  if (!label.empty()) head_ += fmt::format(" role=\"img\" aria-label=\"{}\"", xml_escape(label));
  head_ += ">";
  if (!label.empty()) head_ += fmt::format("<title>{}</title>", xml_escape(label));
}

void Svg::element(std::string_view tag, const Paint& paint, const Attrs& attrs, std::string_view extra) {
  body_ += fmt::format("<{}{}{}{}/>", tag, extra, paint.attributes(), other_attrs(attrs));
}

void Svg::open(std::string_view tag, const Paint& paint, const Attrs& attrs) {
  body_ += fmt::format("<{}{}{}>", tag, paint.attributes(), other_attrs(attrs));
  open_.emplace_back(tag);
}

void Svg::close() {
  if (open_.empty()) return;
  body_ += fmt::format("</{}>", open_.back());
  open_.pop_back();
}

void Svg::line(Point a, Point b, const Paint& paint, const Attrs& attrs) {
  element("line", paint, attrs,
          fmt::format(" x1=\"{}\" y1=\"{}\" x2=\"{}\" y2=\"{}\"", num(a.x), num(a.y), num(b.x), num(b.y)));
}

void Svg::polyline(const std::vector<Point>& pts, const Paint& paint, const Attrs& attrs) {
  if (pts.size() < 2) return;
  element("polyline", paint, attrs, fmt::format(" points=\"{}\"", points_attr(pts)));
}

void Svg::polygon(const std::vector<Point>& pts, const Paint& paint, const Attrs& attrs) {
  if (pts.size() < 3) return;
  element("polygon", paint, attrs, fmt::format(" points=\"{}\"", points_attr(pts)));
}

void Svg::rect(double x, double y, double w, double h, const Paint& paint, const Attrs& attrs) {
  element("rect", paint, attrs,
          fmt::format(" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"", num(x), num(y), num(std::max(0.0, w)),
                      num(std::max(0.0, h))));
}

void Svg::circle(Point c, double r, const Paint& paint, const Attrs& attrs) {
  element("circle", paint, attrs, fmt::format(" cx=\"{}\" cy=\"{}\" r=\"{}\"", num(c.x), num(c.y), num(r)));
}

void Svg::path(std::string_view d, const Paint& paint, const Attrs& attrs) {
  element("path", paint, attrs, fmt::format(" d=\"{}\"", xml_escape(d)));
}

void Svg::text(Point at, std::string_view content, double size, std::string_view anchor, std::string_view colour,
               std::string_view weight, const Attrs& attrs) {
  std::string a = fmt::format(" x=\"{}\" y=\"{}\" font-size=\"{}\"", num(at.x), num(at.y), num(size));
  if (!anchor.empty() && anchor != "start") a += fmt::format(" text-anchor=\"{}\"", xml_escape(anchor));
  if (!colour.empty()) a += fmt::format(" fill=\"{}\"", xml_escape(colour));
  if (!weight.empty()) a += fmt::format(" font-weight=\"{}\"", xml_escape(weight));
  body_ += fmt::format("<text{}{}>{}</text>", a, other_attrs(attrs), xml_escape(content));
}

void Svg::title(std::string_view content) { body_ += fmt::format("<title>{}</title>", xml_escape(content)); }

void Svg::raw(std::string_view markup) { body_.append(markup); }

std::string Svg::str() const {
  std::string s = head_ + body_;
  for (auto it = open_.rbegin(); it != open_.rend(); ++it) s += fmt::format("</{}>", *it);
  s += "</svg>";
  return s;
}

}  // namespace shelfstage::draw
