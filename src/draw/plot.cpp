// Plots as SVG: tick generation (Heckbert's nice numbers; 1-2-5 decades), frame, grid,
// data layers and legend.
#include "shelfstage/draw/plot.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "shelfstage/draw/palette.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::draw {

namespace {

constexpr double kTitleH = 26;  // title band above the plot area
constexpr double kLeft = 64;    // room for y tick labels and the y title
constexpr double kRight = 16;
constexpr double kAxisBelow = 40;  // x tick labels and the x title
constexpr double kLegendRow = 17;
constexpr double kFont = 11;

const char* const kInk = palette::ink;
const char* const kGridMajor = palette::grid_major;
const char* const kGridMinor = palette::grid_minor;

bool finite(Point p) { return std::isfinite(p.x) && std::isfinite(p.y); }

std::string linear_label(double v, double step) {
  const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step) + 1e-9)));
  std::string s = fmt::format("{:.{}f}", v, decimals);
  if (s.find_first_not_of("-0.") == std::string::npos) s = "0";
  // A proper minus sign reads better than a hyphen in a plot.
  if (!s.empty() && s[0] == '-') s = "\u2212" + s.substr(1);
  return s;
}

/// The data range along one coordinate, skipping non-finite values (and non-positive ones on
/// a log axis).
struct Extent {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  bool log = false;
  void add(double v) {
    if (!std::isfinite(v) || (log && v <= 0)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool empty() const { return !(lo <= hi); }
};

struct Settled {
  double lo, hi;
  std::vector<Tick> ticks;
};

Settled settle(const Axis& a, Extent e) {
  if (a.fixed) {
    if (a.scale == Scale::log) {
      LogTicks t = log_ticks(a.lo, a.hi);
      std::vector<Tick> in;
      for (const auto& k : t.ticks)
        if (k.value >= a.lo * (1 - 1e-9) && k.value <= a.hi * (1 + 1e-9)) in.push_back(k);
      return {a.lo, a.hi, in};
    }
    LinearTicks t = linear_ticks(a.lo, a.hi);
    std::vector<Tick> in;
    for (const auto& k : t.ticks)
      if (k.value >= a.lo - 1e-9 * t.step && k.value <= a.hi + 1e-9 * t.step) in.push_back(k);
    return {a.lo, a.hi, in};
  }
  if (a.scale == Scale::log) {
    if (e.empty()) e = {1, 10, true};
    LogTicks t = log_ticks(e.lo, e.hi);
    return {t.lo, t.hi, t.ticks};
  }
  if (e.empty()) e = {0, 1, false};
  if (a.include_zero) {
    e.lo = std::min(e.lo, 0.0);
    e.hi = std::max(e.hi, 0.0);
  }
  LinearTicks t = linear_ticks(e.lo, e.hi);
  return {t.lo, t.hi, t.ticks};
}

struct LegendItem {
  enum Kind { line, swatch, dot } kind;
  std::string name, colour, dash;
  double opacity = 1;
  double width = 2;
};

std::vector<LegendItem> legend_items(const Plot& p) {
  std::vector<LegendItem> items;
  for (const auto& s : p.series)
    if (s.legend && !s.name.empty()) items.push_back({LegendItem::line, s.name, s.colour, s.dash, 1, s.width});
  for (const auto& e : p.envelopes)
    if (!e.name.empty()) items.push_back({LegendItem::swatch, e.name, e.colour, {}, std::max(e.opacity, 0.3), 0});
  for (const auto& c : p.clouds)
    if (!c.name.empty()) items.push_back({LegendItem::dot, c.name, c.colour, c.hollow ? "hollow" : "", c.opacity, 0});
  for (const auto& r : p.regions)
    if (!r.name.empty()) items.push_back({LegendItem::swatch, r.name, r.colour, {}, std::max(r.opacity, 0.3), 0});
  for (const auto& s : p.spans)
    if (!s.name.empty()) items.push_back({LegendItem::swatch, s.name, s.colour, {}, std::max(s.opacity, 0.3), 0});
  return items;
}

/// Approximate advance of a label in user units (sans-serif, average glyph about 0.58 em).
double text_width(const std::string& s, double size) {
  std::size_t chars = 0;
  for (unsigned char c : s)
    if ((c & 0xC0u) != 0x80u) ++chars;
  return 0.58 * size * static_cast<double>(chars);
}

/// Legend entries laid out in rows across the width; returns the rows' x positions.
std::vector<std::vector<std::pair<double, std::size_t>>> legend_rows(const std::vector<LegendItem>& items,
                                                                     double width) {
  std::vector<std::vector<std::pair<double, std::size_t>>> rows;
  double x = kLeft;
  for (std::size_t i = 0; i < items.size(); ++i) {
    const double w = 26 + text_width(items[i].name, kFont) + 18;
    if (rows.empty() || (x + w > width - kRight && x > kLeft)) {
      rows.emplace_back();
      x = kLeft;
    }
    rows.back().push_back({x, i});
    x += w;
  }
  return rows;
}

}  // namespace

double nice_number(double x, bool round) {
  if (!(x > 0) || !std::isfinite(x)) return 1;
  const double e = std::floor(std::log10(x));
  const double f = x / std::pow(10.0, e);
  double nf;
  if (round)
    nf = f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10;
  else
    nf = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
  return nf * std::pow(10.0, e);
}

LinearTicks linear_ticks(double lo, double hi, int target) {
  if (!std::isfinite(lo) || !std::isfinite(hi)) lo = 0, hi = 1;
  if (lo > hi) std::swap(lo, hi);
  if (hi - lo <= 1e-12 * std::max(std::abs(lo), std::abs(hi))) {
    const double pad = lo == 0 ? 1 : 0.1 * std::abs(lo);
    lo -= pad;
    hi += pad;
  }
  target = std::max(target, 2);
  const double range = nice_number(hi - lo, false);
  const double step = nice_number(range / (target - 1), true);
  LinearTicks t;
  t.step = step;
  t.lo = std::floor(lo / step + 1e-9) * step;
  t.hi = std::ceil(hi / step - 1e-9) * step;
  const long n = std::lround((t.hi - t.lo) / step);
  for (long i = 0; i <= n; ++i) {
    double v = t.lo + static_cast<double>(i) * step;
    if (std::abs(v) < 1e-9 * step) v = 0;
    t.ticks.push_back({v, linear_label(v, step), true});
  }
  return t;
}

LogTicks log_ticks(double lo, double hi) {
  if (!(hi > 0) || !std::isfinite(hi)) hi = 10;
  if (!(lo > 0) || !std::isfinite(lo)) lo = hi / 10;
  if (lo > hi) std::swap(lo, hi);
  // Whole decades, found with a little slack so that 1000 stays the decade 1000 despite
  // rounding in log10.
  const int d_lo = static_cast<int>(std::floor(std::log10(lo) + 1e-9));
  int d_hi = static_cast<int>(std::ceil(std::log10(hi) - 1e-9));
  if (d_hi <= d_lo) d_hi = d_lo + 1;
  LogTicks t;
  t.lo = std::pow(10.0, d_lo);
  t.hi = std::pow(10.0, d_hi);
  const bool label_125 = d_hi - d_lo <= 4;
  for (int d = d_lo; d <= d_hi; ++d) {
    for (int m : {1, 2, 5}) {
      if (d == d_hi && m > 1) break;
      // 10^d exactly for whole decades (pow keeps integers exact in this range).
      const double v = m * std::pow(10.0, d);
      Tick k;
      k.value = v;
      k.major = m == 1;
      if (m == 1 || label_125) k.label = units::format_value(v, units::Unit::none);
      t.ticks.push_back(k);
    }
  }
  return t;
}

Point Frame::to_px(Point d) const {
  auto map = [](double v, double lo, double hi, bool log, double a, double b) {
    const double u = log ? (std::log10(v) - std::log10(lo)) / (std::log10(hi) - std::log10(lo)) : (v - lo) / (hi - lo);
    return a + u * (b - a);
  };
  return {map(d.x, x_lo, x_hi, x_log, left, right), map(d.y, y_lo, y_hi, y_log, bottom, top)};
}

Frame frame_of(const Plot& p) {
  Extent ex, ey;
  ex.log = p.x.scale == Scale::log;
  ey.log = p.y.scale == Scale::log;
  for (const auto& s : p.series)
    for (const auto& pt : s.points)
      if (finite(pt)) ex.add(pt.x), ey.add(pt.y);
  for (const auto& e : p.envelopes)
    for (std::size_t i = 0; i < e.x.size() && i < e.lo.size() && i < e.hi.size(); ++i) {
      ex.add(e.x[i]);
      ey.add(e.lo[i]);
      ey.add(e.hi[i]);
    }
  for (const auto& c : p.clouds)
    for (const auto& pt : c.points)
      if (finite(pt)) ex.add(pt.x), ey.add(pt.y);
  for (const auto& r : p.regions)
    for (const auto& pt : r.points)
      if (finite(pt)) ex.add(pt.x), ey.add(pt.y);
  for (const auto& s : p.spans) ex.add(s.x0), ex.add(s.x1);
  const Settled sx = settle(p.x, ex), sy = settle(p.y, ey);
  Frame f;
  f.x_lo = sx.lo;
  f.x_hi = sx.hi;
  f.y_lo = sy.lo;
  f.y_hi = sy.hi;
  f.x_log = ex.log;
  f.y_log = ey.log;
  const auto rows = legend_rows(legend_items(p), p.width);
  const double legend_h = static_cast<double>(rows.size() + p.notes.size()) * kLegendRow;
  f.left = kLeft;
  f.right = p.width - kRight;
  f.top = kTitleH;
  f.bottom = std::max(f.top + 40, p.height - kAxisBelow - legend_h);
  return f;
}

namespace {

/// The ticks of both axes over the frame's settled ranges.
struct FrameTicks {
  Settled x, y;
};

FrameTicks frame_ticks(const Plot& p, const Frame& f) {
  Extent ex, ey;  // only for the ticks
  ex.log = f.x_log;
  ey.log = f.y_log;
  Axis ax = p.x, ay = p.y;
  ax.fixed = ay.fixed = true;
  ax.lo = f.x_lo, ax.hi = f.x_hi, ay.lo = f.y_lo, ay.hi = f.y_hi;
  return {settle(ax, ex), settle(ay, ey)};
}

/// The clip path of the plot area, the title and the area's paper.
void draw_background(Svg& s, const Frame& f, const std::string& clip, const std::string& title) {
  s.open("defs");
  s.open("clipPath", {}, {{"id", clip}});
  s.rect(f.left, f.top, f.right - f.left, f.bottom - f.top, {});
  s.close();
  s.close();
  s.text({f.left, 17}, title, 13, "start", kInk, "bold");
  s.rect(f.left, f.top, f.right - f.left, f.bottom - f.top, Paint().stroke("none").fill(palette::paper));
}

void draw_grid(Svg& s, const Frame& f, const FrameTicks& t) {
  s.open("g", Paint().stroke("", 1), {{"class", "grid"}});
  for (const auto& k : t.x.ticks) {
    const double px = f.to_px({k.value, f.y_lo}).x;
    s.line({px, f.top}, {px, f.bottom}, Paint().stroke(k.major ? kGridMajor : kGridMinor));
  }
  for (const auto& k : t.y.ticks) {
    const double py = f.to_px({f.x_lo, k.value}).y;
    s.line({f.left, py}, {f.right, py}, Paint().stroke(k.major ? kGridMajor : kGridMinor));
  }
  s.close();
}

/// The shaded layers: spans across the plot's height, regions, and envelopes (hi forward,
/// lo back).
void draw_areas(Svg& s, const Frame& f, const Plot& p) {
  for (const auto& sp : p.spans) {
    const double a = f.to_px({sp.x0, f.y_lo}).x, b = f.to_px({sp.x1, f.y_lo}).x;
    s.rect(std::min(a, b), f.top, std::abs(b - a), f.bottom - f.top,
           Paint().stroke("none").fill(sp.colour).opacity(sp.opacity));
  }
  for (const auto& r : p.regions) {
    std::vector<Point> px;
    for (const auto& pt : r.points)
      if (finite(pt)) px.push_back(f.to_px(pt));
    s.polygon(px, Paint().stroke(r.colour, 1).fill(r.colour).opacity(r.opacity));
  }
  for (const auto& e : p.envelopes) {
    std::vector<Point> px;
    const std::size_t n = std::min({e.x.size(), e.lo.size(), e.hi.size()});
    for (std::size_t i = 0; i < n; ++i)
      if (std::isfinite(e.hi[i])) px.push_back(f.to_px({e.x[i], e.hi[i]}));
    for (std::size_t i = n; i-- > 0;)
      if (std::isfinite(e.lo[i])) px.push_back(f.to_px({e.x[i], e.lo[i]}));
    s.polygon(px, Paint().stroke("none").fill(e.colour).opacity(e.opacity));
  }
}

/// The series as polylines, broken where a point cannot be drawn; then the clouds' markers.
void draw_lines_and_marks(Svg& s, const Frame& f, const Plot& p) {
  for (const auto& se : p.series) {
    std::vector<Point> run;
    auto flush = [&] {
      s.polyline(run, Paint().stroke(se.colour, se.width).fill("none").dash(se.dash).round());
      run.clear();
    };
    for (const auto& pt : se.points) {
      if (!finite(pt) || (f.x_log && pt.x <= 0) || (f.y_log && pt.y <= 0)) {
        flush();
        continue;
      }
      run.push_back(f.to_px(pt));
    }
    flush();
  }
  for (const auto& c : p.clouds) {
    const Paint paint = c.hollow ? Paint().stroke(c.colour, 1.5).fill("none").opacity(c.opacity)
                                 : Paint().stroke("none").fill(c.colour).opacity(c.opacity);
    for (const auto& pt : c.points)
      if (finite(pt)) s.circle(f.to_px(pt), c.radius, paint);
  }
}

/// The frame, the ticks with their labels, and the axis titles.
void draw_axes(Svg& s, const Frame& f, const FrameTicks& t, const Plot& p) {
  s.rect(f.left, f.top, f.right - f.left, f.bottom - f.top, Paint().stroke(kInk, 1).fill("none"));
  for (const auto& k : t.x.ticks) {
    const double px = f.to_px({k.value, f.y_lo}).x;
    s.line({px, f.bottom}, {px, f.bottom + (k.major ? 5 : 3)}, Paint().stroke(kInk, 1));
    if (!k.label.empty()) s.text({px, f.bottom + 16}, k.label, kFont, "middle", kInk);
  }
  for (const auto& k : t.y.ticks) {
    const double py = f.to_px({f.x_lo, k.value}).y;
    s.line({f.left - 4, py}, {f.left, py}, Paint().stroke(kInk, 1));
    s.text({f.left - 7, py + 4}, k.label, kFont, "end", kInk);
  }
  s.text({(f.left + f.right) / 2, f.bottom + 32}, p.x.title, kFont + 1, "middle", kInk);
  const Point yt{15, (f.top + f.bottom) / 2};
  s.text(yt, p.y.title, kFont + 1, "middle", kInk, {},
         {{"transform", fmt::format("rotate(-90 {} {})", num(yt.x), num(yt.y))}});
}

/// One legend entry's key (line, swatch or dot) at (lx, ly) and its name after it.
void draw_legend_item(Svg& s, const LegendItem& it, double lx, double ly) {
  switch (it.kind) {
    case LegendItem::line:
      s.line({lx, ly - 4}, {lx + 20, ly - 4}, Paint().stroke(it.colour, it.width).dash(it.dash).round());
      break;
    case LegendItem::swatch:
      s.rect(lx, ly - 10, 20, 11, Paint().stroke(it.colour, 1).fill(it.colour).opacity(it.opacity));
      break;
    case LegendItem::dot:
      if (it.dash == "hollow")
        s.circle({lx + 10, ly - 4}, 3.5, Paint().stroke(it.colour, 1.5).fill("none"));
      else
        s.circle({lx + 10, ly - 4}, 3.5, Paint().stroke("none").fill(it.colour).opacity(it.opacity));
      break;
  }
  s.text({lx + 26, ly}, it.name, kFont, "start", kInk);
}

/// The legend rows and the notes under the x title.
void draw_legend(Svg& s, const Frame& f, const Plot& p) {
  const auto items = legend_items(p);
  const auto rows = legend_rows(items, p.width);
  double ly = f.bottom + kAxisBelow + 12;
  for (const auto& row : rows) {
    for (const auto& [lx, i] : row) draw_legend_item(s, items[i], lx, ly);
    ly += kLegendRow;
  }
  for (const auto& n : p.notes) {
    s.text({kLeft, ly}, n, kFont, "start", palette::muted);
    ly += kLegendRow;
  }
}

}  // namespace

std::string Plot::svg() const {
  const Frame f = frame_of(*this);
  const FrameTicks ticks = frame_ticks(*this, f);
  Svg s(width, height, title);
  const std::string clip = (id.empty() ? std::string("plot") : id) + "-area";
  draw_background(s, f, clip, title);
  draw_grid(s, f, ticks);
  // Data, clipped to the plot area.
  s.open("g", {}, {{"clip-path", "url(#" + clip + ")"}});
  draw_areas(s, f, *this);
  draw_lines_and_marks(s, f, *this);
  s.close();
  draw_axes(s, f, ticks, *this);
  draw_legend(s, f, *this);
  bool any = !series.empty() || !envelopes.empty() || !clouds.empty() || !regions.empty();
  if (!any) s.text({(f.left + f.right) / 2, (f.top + f.bottom) / 2}, "no data", kFont + 2, "middle", palette::muted);
  return s.str();
}

}  // namespace shelfstage::draw
