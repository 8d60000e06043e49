// An SVG document builder: elements with escaped attributes and text, coordinates written
// compactly, and strokes and fills given as presentation attributes so that a drawing looks
// the same on its own, inlined in HTML, or printed.
#pragma once
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace shelfstage::draw {

/// A point in drawing units (SVG user units, px at 100 % zoom).
struct Point {
  double x = 0;
  double y = 0;
  friend bool operator==(const Point&, const Point&) = default;
};

/// Text escaped for XML character data and attribute values: & < > " ' become entities;
/// control characters other than tab, newline and carriage return (not allowed in XML 1.0)
/// are dropped; invalid UTF-8 bytes become U+FFFD.
std::string xml_escape(std::string_view text);

/// A coordinate or length written compactly: at most two decimals, trailing zeros and a
/// trailing point dropped, no negative zero: 12.0 -> "12", 0.5 -> "0.5", -0.001 -> "0",
/// 1234.567 -> "1234.57". Non-finite values become "0" (SVG cannot hold them).
std::string num(double v);

/// How a shape is painted, built by chaining: Paint().stroke(palette::ink, 2).fill("none").
/// Attributes not set are left out (the SVG default applies, or the enclosing group's).
class Paint {
 public:
  /// Stroke colour ("none" for no stroke; empty leaves it out) and width (0 leaves it out).
  Paint& stroke(std::string colour, double width = 0) {
    stroke_ = std::move(colour);
    stroke_width_ = width;
    return *this;
  }
  Paint& fill(std::string colour) {
    fill_ = std::move(colour);
    return *this;
  }
  /// fill-opacity and stroke-opacity, 0..1 (1 leaves them out).
  Paint& opacity(double o) {
    opacity_ = o;
    return *this;
  }
  /// stroke-dasharray ("4 3"); empty leaves it out.
  Paint& dash(std::string pattern) {
    dash_ = std::move(pattern);
    return *this;
  }
  /// Round line caps and joins.
  Paint& round() {
    round_ = true;
    return *this;
  }
  /// The attributes, each with a leading space: ` stroke="#1d2b3a" stroke-width="2"`.
  std::string attributes() const;

 private:
  std::string stroke_, fill_, dash_;
  double stroke_width_ = 0, opacity_ = 1;
  bool round_ = false;
};

/// Attributes beyond the paint: (name, value) pairs, values escaped on output.
using Attrs = std::vector<std::pair<std::string, std::string>>;

/// An SVG document under construction. Groups nest with open()/close(); str() closes any
/// left open and returns the whole document.
class Svg {
 public:
  /// A document width x height user units, viewBox at the origin. `label` becomes the
  /// accessible name (role="img" and a <title>) when not empty.
  Svg(double width, double height, std::string_view label = {});

  double width() const { return width_; }
  double height() const { return height_; }

  /// <g ...> with paint and attributes; close() ends it.
  void open(std::string_view tag, const Paint& paint = {}, const Attrs& attrs = {});
  void close();

  void line(Point a, Point b, const Paint& paint, const Attrs& attrs = {});
  /// An open polyline (at least two points; fewer draw nothing).
  void polyline(const std::vector<Point>& pts, const Paint& paint, const Attrs& attrs = {});
  /// A closed polygon (at least three points; fewer draw nothing).
  void polygon(const std::vector<Point>& pts, const Paint& paint, const Attrs& attrs = {});
  void rect(double x, double y, double w, double h, const Paint& paint, const Attrs& attrs = {});
  void circle(Point c, double r, const Paint& paint, const Attrs& attrs = {});
  /// A path from SVG path data built by the caller with num() ("M1 2L3 4").
  void path(std::string_view d, const Paint& paint, const Attrs& attrs = {});
  /// Text at a point. `anchor`: "start", "middle" or "end"; size in user units; `weight`
  /// "bold" or empty. Newlines are not interpreted (use several calls).
  void text(Point at, std::string_view content, double size, std::string_view anchor = "start",
            std::string_view colour = {}, std::string_view weight = {}, const Attrs& attrs = {});
  /// A <title> (a tooltip in browsers) inside the current group.
  void title(std::string_view content);
  /// Raw, already well-formed markup (for a nested document). The caller vouches for it.
  void raw(std::string_view markup);

  /// The whole document: <svg xmlns=...> ... </svg>.
  std::string str() const;

 private:
  void element(std::string_view tag, const Paint& paint, const Attrs& attrs, std::string_view extra);
  double width_, height_;
  std::string head_;
  std::string body_;
  std::vector<std::string> open_;
};

}  // namespace shelfstage::draw
