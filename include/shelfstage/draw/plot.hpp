// Plots as SVG: linear and logarithmic axes with their ticks, grid, labels and legend; line
// series, envelopes (a filled band between two curves), shaded spans and regions, and point
// clouds. One Plot is one self-contained <svg> element.
#pragma once
#include <string>
#include <vector>

#include "shelfstage/draw/palette.hpp"
#include "shelfstage/draw/svg.hpp"

namespace shelfstage::draw {

/// One tick of an axis.
struct Tick {
  double value = 0;
  std::string label{};  ///< empty: an unlabelled minor tick
  bool major = false;   ///< drawn with a stronger grid line
};

/// A linear axis range with its ticks.
struct LinearTicks {
  double lo = 0, hi = 1, step = 1;
  std::vector<Tick> ticks{};
};

/// The "nice number" of Heckbert ("Nice numbers for graph labels", Graphics Gems, 1990):
/// 1, 2, 5 or 10 times a power of ten; rounded to the nearest (round) or the next above.
double nice_number(double x, bool round);

/// Loose labelling after Heckbert: the step is a nice number near (hi - lo) / (target - 1),
/// the range is widened outward to whole steps, every step labelled. A span of zero (or a
/// reversed range) is widened around its value. Labels are written with the fewest decimals
/// the step needs ("0.5", "-2", "12").
LinearTicks linear_ticks(double lo, double hi, int target = 6);

/// A logarithmic axis range widened outward to whole decades, with ticks at 1, 2 and 5 of
/// each decade. Decades are major; the 2s and 5s are labelled when the range spans at most
/// four decades. Labels in SI prefix notation ("20", "500", "1k", "2M", "0.1").
/// lo and hi must be positive (non-positive values are replaced by a decade below hi).
struct LogTicks {
  double lo = 1, hi = 10;
  std::vector<Tick> ticks{};
};
LogTicks log_ticks(double lo, double hi);

enum class Scale { linear, log };

/// An axis: scale, title and, optionally, a fixed range (else the data decide).
struct Axis {
  Scale scale = Scale::linear;
  std::string title{};  ///< "frequency (Hz)"
  bool fixed = false;   ///< use lo..hi as given (linear: ticks still from linear_ticks)
  double lo = 0, hi = 1;
  bool include_zero = false;  ///< widen an automatic linear range to contain 0
};

/// A line through data points, in order. Points with a non-finite coordinate break the line.
struct Series {
  std::string name{};  ///< legend entry; empty: none
  std::vector<Point> points{};
  std::string colour = palette::trace;
  double width = 2;
  std::string dash{};  ///< "5 3" for a dashed line
  bool legend = true;
};

/// A filled band between two curves sampled at the same x.
struct Envelope {
  std::string name{};
  std::vector<double> x{}, lo{}, hi{};
  std::string colour = palette::trace;
  double opacity = 0.18;
};

/// A span of x shaded across the whole plot height (the requested band).
struct Span {
  std::string name{};
  double x0 = 0, x1 = 0;
  std::string colour = palette::span;
  double opacity = 0.22;
};

/// A closed region in data coordinates (a safe operating area), shaded.
struct Region {
  std::string name{};
  std::vector<Point> points{};
  std::string colour = palette::region;
  double opacity = 0.15;
};

/// Markers at points.
struct Cloud {
  std::string name{};
  std::vector<Point> points{};
  std::string colour = palette::marks;
  double radius = 2;
  bool hollow = false;  ///< ring instead of a disc
  double opacity = 0.6;
};

/// A plot. Draw order: title and paper, grid; then, clipped to the plot area, spans, regions,
/// envelopes, series, clouds; then the frame with its ticks and axis titles, the legend, the notes.
struct Plot {
  std::string id{};     ///< prefix for element ids (clip path), unique in the page
  std::string title{};  ///< above the plot; also the accessible label
  double width = 640, height = 300;
  Axis x, y;
  std::vector<Span> spans{};
  std::vector<Region> regions{};
  std::vector<Envelope> envelopes{};
  std::vector<Series> series{};
  std::vector<Cloud> clouds{};
  std::vector<std::string> notes{};  ///< short lines under the legend

  /// The plot as one <svg> document. An empty plot (no data) draws its frame and a note.
  std::string svg() const;
};

/// Where the data land: the ranges the axes settled on (for tests and callers that add marks).
struct Frame {
  double x_lo = 0, x_hi = 1, y_lo = 0, y_hi = 1;
  bool x_log = false, y_log = false;
  double left = 0, top = 0, right = 1, bottom = 1;  ///< plot area in user units
  Point to_px(Point data) const;
};
Frame frame_of(const Plot& plot);

}  // namespace shelfstage::draw
