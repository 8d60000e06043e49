// The terminal plot: a curve and its envelope in character cells against a log x axis.
#include "shelfstage/draw/textplot.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "shelfstage/draw/plot.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::draw {

namespace {

/// The value of a series at x by linear interpolation in log x (NaN outside or across a gap).
double at(const std::vector<double>& xs, const std::vector<double>& ys, double x) {
  if (ys.empty() || x < xs.front() * (1 - 1e-12) || x > xs.back() * (1 + 1e-12))
    return std::numeric_limits<double>::quiet_NaN();
  const auto it = std::lower_bound(xs.begin(), xs.end(), x);
  std::size_t i = static_cast<std::size_t>(it - xs.begin());
  if (i == 0) return ys[0];
  if (i >= xs.size()) return ys.back();
  const double t = (std::log(x) - std::log(xs[i - 1])) / (std::log(xs[i]) - std::log(xs[i - 1]));
  return ys[i - 1] + t * (ys[i] - ys[i - 1]);
}

/// Throws InputError unless the series are a plot: x positive and increasing, sizes equal.
void check_series(const TextPlot& p) {
  if (p.x.empty()) throw InputError("text plot: no points");
  if (p.y.size() != p.x.size()) throw InputError("text plot: curve and x differ in size");
  if (!p.lo.empty() && (p.lo.size() != p.x.size() || p.hi.size() != p.x.size()))
    throw InputError("text plot: envelope and x differ in size");
  for (std::size_t i = 0; i < p.x.size(); ++i) {
    if (!(p.x[i] > 0) || !std::isfinite(p.x[i]))
      throw InputError(fmt::format("text plot: x {} is not a positive number", p.x[i]));
    if (i > 0 && !(p.x[i] > p.x[i - 1])) throw InputError("text plot: x is not increasing");
  }
}

/// The columns: log-spaced over the data's x range.
struct Columns {
  int count = 0;
  double lx0 = 0, lx1 = 0;  // log10 of the first and last x
  std::vector<double> x;    // each column's x

  Columns(const TextPlot& p, int cols) : count(cols), lx0(std::log10(p.x.front())), lx1(std::log10(p.x.back())) {
    x.resize(static_cast<std::size_t>(cols));
    for (int j = 0; j < cols; ++j)
      x[static_cast<std::size_t>(j)] =
          std::pow(10.0, cols == 1 ? lx0 : lx0 + (lx1 - lx0) * j / static_cast<double>(cols - 1));
  }
  /// The column nearest to x.
  int of(double v) const {
    if (lx1 == lx0) return 0;
    return static_cast<int>(std::lround((std::log10(v) - lx0) / (lx1 - lx0) * (count - 1)));
  }
};

/// The rows: nice ticks over the visible y range (the curve and envelope, at most y_range
/// below the curve's peak), rows_per_step rows to a tick.
struct Rows {
  LinearTicks t;
  double dy = 0;
  int count = 0;

  explicit Rows(const TextPlot& p) {
    double peak = -std::numeric_limits<double>::infinity(), top = peak,
           bottom = std::numeric_limits<double>::infinity();
    for (std::size_t i = 0; i < p.y.size(); ++i) {
      if (std::isfinite(p.y[i])) peak = std::max(peak, p.y[i]);
      if (!p.hi.empty() && std::isfinite(p.hi[i])) top = std::max(top, p.hi[i]);
    }
    if (!std::isfinite(peak)) throw InputError("text plot: the curve has no finite value");
    top = std::max(top, peak);
    const double floor_y = std::max(p.y_floor, peak - p.y_range);
    for (std::size_t i = 0; i < p.y.size(); ++i) {
      if (std::isfinite(p.y[i])) bottom = std::min(bottom, std::max(p.y[i], floor_y));
      if (!p.lo.empty() && std::isfinite(p.lo[i])) bottom = std::min(bottom, std::max(p.lo[i], floor_y));
    }
    t = linear_ticks(bottom, top, 5);
    const int per = std::max(p.rows_per_step, 1);
    dy = t.step / per;
    count = static_cast<int>(std::lround((t.hi - t.lo) / dy)) + 1;
  }
  /// The row of y (clipped to the range; row 0 on top).
  int of(double v) const {
    const double clipped = std::clamp(v, t.lo, t.hi);
    return static_cast<int>(std::lround((t.hi - clipped) / dy));
  }
};

using Cells = std::vector<std::vector<std::string>>;

/// The plot area: each column's envelope cells "░" and its curve cell "•".
Cells plot_cells(const TextPlot& p, const Columns& cx, const Rows& rows) {
  Cells cells(static_cast<std::size_t>(rows.count), std::vector<std::string>(static_cast<std::size_t>(cx.count), " "));
  for (int j = 0; j < cx.count; ++j) {
    const auto cj = static_cast<std::size_t>(j);
    if (!p.lo.empty()) {
      const double lo = at(p.x, p.lo, cx.x[cj]), hi = at(p.x, p.hi, cx.x[cj]);
      if (std::isfinite(lo) && std::isfinite(hi))
        for (int r = rows.of(std::max(lo, hi)); r <= rows.of(std::min(lo, hi)); ++r)
          cells[static_cast<std::size_t>(r)][cj] = "\u2591";
    }
    const double v = at(p.x, p.y, cx.x[cj]);
    if (std::isfinite(v)) cells[static_cast<std::size_t>(rows.of(v))][cj] = "\u2022";
  }
  return cells;
}

/// The y unit line and the rows, each with its tick label (right-aligned in label_w) and
/// the y axis; label_w is set to the common label width.
std::string y_axis_and_rows(const TextPlot& p, const Rows& rows, const Cells& cells, std::size_t& label_w) {
  std::vector<std::string> labels(static_cast<std::size_t>(rows.count));
  label_w = p.y_unit.size();
  for (const auto& k : rows.t.ticks) {
    const int r = rows.of(k.value);
    std::string s = k.label;
    if (s.rfind("\u2212", 0) == 0) s = "-" + s.substr(3);  // plain hyphen-minus in a terminal
    labels[static_cast<std::size_t>(r)] = s;
    label_w = std::max(label_w, s.size());
  }

  std::string out = fmt::format("{:>{}}\n", p.y_unit, label_w);
  for (int r = 0; r < rows.count; ++r) {
    const auto rr = static_cast<std::size_t>(r);
    out += fmt::format("{:>{}} {}", labels[rr], label_w, labels[rr].empty() ? "\u2502" : "\u251c");
    std::string line;
    for (const auto& c : cells[rr]) line += c;
    while (line.size() >= 1 && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  return out;
}

/// The x axis: 1-2-5 ticks, the span, decade labels under it.
std::string x_axis(const TextPlot& p, const Columns& cx, std::size_t label_w) {
  const int cols = cx.count;
  const LogTicks lt = log_ticks(p.x.front(), p.x.back());
  std::vector<std::string> axis(static_cast<std::size_t>(cols), "\u2500");
  if (p.span_hi > p.span_lo && p.span_lo > 0)
    for (int j = 0; j < cols; ++j)
      if (cx.x[static_cast<std::size_t>(j)] >= p.span_lo * (1 - 1e-9) &&
          cx.x[static_cast<std::size_t>(j)] <= p.span_hi * (1 + 1e-9))
        axis[static_cast<std::size_t>(j)] = "\u2501";
  std::string under(static_cast<std::size_t>(cols) + 8, ' ');
  for (const auto& k : lt.ticks) {
    if (k.value < p.x.front() * (1 - 1e-9) || k.value > p.x.back() * (1 + 1e-9)) continue;
    const int j = cx.of(k.value);
    if (!k.major) continue;
    // A decade tick; inside the span it keeps the span's heavy line.
    axis[static_cast<std::size_t>(j)] = axis[static_cast<std::size_t>(j)] == "\u2501" ? "\u252f" : "\u252c";
    // Decade label centred under its tick when there is room.
    const std::string& s = k.label;
    int start = j - static_cast<int>(s.size()) / 2;
    start = std::max(start, 0);
    const auto st = static_cast<std::size_t>(start);
    if (st + s.size() <= under.size() &&
        under.substr(st == 0 ? 0 : st - 1, s.size() + (st == 0 ? 1 : 2)).find_first_not_of(' ') == std::string::npos)
      under.replace(st, s.size(), s);
  }
  std::string out = fmt::format("{:>{}} \u2514", "", label_w);
  for (const auto& a : axis) out += a;
  out += "\n";
  while (!under.empty() && under.back() == ' ') under.pop_back();
  out += fmt::format("{:>{}}  {}\n", "", label_w, under);
  return out;
}

/// The legend line: the curve, the envelope and the span that are drawn.
std::string legend_line(const TextPlot& p, std::size_t label_w) {
  std::string legend = fmt::format("{:>{}}  \u2022 {}", "", label_w, p.curve_name);
  if (!p.lo.empty()) legend += fmt::format("   \u2591 {}", p.envelope_name);
  if (p.span_hi > p.span_lo && p.span_lo > 0) legend += fmt::format("   \u2501 {}", p.span_name);
  return legend + "\n";
}

}  // namespace

std::string text_plot(const TextPlot& p) {
  check_series(p);
  const Columns cx(p, std::max(p.columns, 8));
  const Rows rows(p);
  std::size_t label_w = 0;
  std::string out = y_axis_and_rows(p, rows, plot_cells(p, cx, rows), label_w);
  out += x_axis(p, cx, label_w);
  out += legend_line(p, label_w);
  return out;
}

}  // namespace shelfstage::draw
