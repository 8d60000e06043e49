// A compact plot for the terminal: one curve against a logarithmic x axis in character cells,
// with an optional envelope and a shaded span, axes labelled at the decades.
#pragma once
#include <string>
#include <vector>

namespace shelfstage::draw {

/// What to plot. x must be positive and increasing; y, lo and hi (when given) have x's size.
/// Non-finite y values leave their column empty.
struct TextPlot {
  std::vector<double> x;
  std::vector<double> y;            ///< the curve, drawn with "•"
  std::vector<double> lo, hi;       ///< envelope drawn with "░" (empty: none)
  double span_lo = 0, span_hi = 0;  ///< x span marked "━" on the axis (0: none)
  std::string y_unit = "dB";
  std::string span_name = "requested band";
  std::string curve_name = "nominal";
  std::string envelope_name = "device corners";
  double y_floor = -1e300;  ///< y values below are clipped to the bottom row
  double y_range = 40;      ///< at most this much of y below the curve's peak is shown
  int columns = 64;         ///< plot columns (without the y labels)
  int rows_per_step = 2;    ///< rows between labelled y ticks
};

/// The plot as lines of UTF-8 text ending in newlines: rows from the top of the y range
/// (Heckbert's nice ticks over the curve and envelope, limited to y_range below the peak),
/// the y axis "│" with "├" at each labelled tick,
/// each column the value at its log-spaced x (linear interpolation in log x), the curve's
/// cell "•", cells between lo and hi "░"; the x axis with "┬" at the decades, "━" across the
/// span (a decade tick inside it "┯"), decade labels under it in SI notation; a legend line. Throws InputError when x
/// is empty, not positive or not increasing, or when the series sizes differ.
std::string text_plot(const TextPlot& plot);

}  // namespace shelfstage::draw
