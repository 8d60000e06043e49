// Tests of the terminal plot with a first-order high-pass response, whose magnitude is
// 20 log10(f / sqrt(f^2 + fc^2)) dB (any circuits textbook: -3 dB at fc, -20 dB/decade below).
#include "shelfstage/draw/textplot.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <sstream>

#include "shelfstage/error.hpp"
#include "support/lines.hpp"

using namespace shelfstage::draw;

namespace {

using shelfstage::test::lines_of;

/// Code points of a UTF-8 line (every glyph of the plot is one cell).
std::vector<std::string> cells(const std::string& line) {
  std::vector<std::string> v;
  for (std::size_t i = 0; i < line.size();) {
    std::size_t n = 1;
    const auto b = static_cast<unsigned char>(line[i]);
    if (b >= 0xF0)
      n = 4;
    else if (b >= 0xE0)
      n = 3;
    else if (b >= 0xC0)
      n = 2;
    v.push_back(line.substr(i, n));
    i += n;
  }
  return v;
}

TextPlot high_pass(double fc) {
  TextPlot p;
  for (int i = 0; i <= 80; ++i) {
    const double f = std::pow(10.0, i / 20.0);  // 1 Hz .. 10 kHz
    p.x.push_back(f);
    p.y.push_back(20 * std::log10(f / std::sqrt(f * f + fc * fc)));
  }
  p.columns = 41;  // one column per 0.1 decade
  return p;
}

}  // namespace

TEST_CASE("text_plot: a first-order high-pass at 100 Hz") {
  const TextPlot p = high_pass(100);
  const auto ls = lines_of(text_plot(p));
  REQUIRE(ls.size() > 6);
  CHECK(ls[0].find("dB") != std::string::npos);
  // Find the rows labelled 0 and -20 and the column of each x.
  int row0 = -1, row20 = -1;
  for (std::size_t r = 1; r < ls.size(); ++r) {
    const auto head = ls[r].substr(0, ls[r].find_first_of("\xe2"));
    if (head.find_first_not_of(' ') != std::string::npos && std::stoi(head) == 0) row0 = static_cast<int>(r);
    if (head.find_first_not_of(' ') != std::string::npos && std::stoi(head) == -20) row20 = static_cast<int>(r);
  }
  REQUIRE(row0 > 0);
  REQUIRE(row20 > row0);
  // 10 kHz is two decades above the corner: within 0.0004 dB of 0, so the last column is on
  // the 0 dB row. 10 Hz is a decade below: -20.04 dB, on the -20 row (column 10 of 0..40).
  const auto r0 = cells(ls[static_cast<std::size_t>(row0)]);
  const auto r20 = cells(ls[static_cast<std::size_t>(row20)]);
  CHECK(r0.back() == "\u2022");
  const std::size_t label_cells = r0.size() - 41;  // the row is label, space, axis, 41 cells (none trimmed)
  REQUIRE(label_cells > 0);
  CHECK(r20.size() > label_cells + 10);
  CHECK(r20[label_cells + 10] == "\u2022");
  // The x axis line carries a tick at each of the five decades 1, 10, 100, 1k, 10k.
  std::size_t axis = 0;
  for (std::size_t r = 0; r < ls.size(); ++r)
    if (ls[r].find("\u2514") != std::string::npos) axis = r;
  REQUIRE(axis > 0);
  int ticks = 0;
  for (const auto& c : cells(ls[axis])) ticks += c == "\u252c";
  CHECK(ticks == 5);
  const std::string decades = ls[axis + 1];
  const auto p1 = decades.find(" 1 "), p10 = decades.find("10 "), p100 = decades.find("100"), p1k = decades.find("1k"),
             p10k = decades.find("10k");
  CHECK(p1 < p10);
  CHECK(p10 < p100);
  CHECK(p100 < p1k);
  CHECK(p1k < p10k);
  CHECK(p10k != std::string::npos);
  CHECK(ls.back().find("nominal") != std::string::npos);
}

TEST_CASE("text_plot: envelope, band and clipping") {
  TextPlot p = high_pass(100);
  for (double y : p.y) {
    p.lo.push_back(y - 3);
    p.hi.push_back(y + 1);
  }
  p.span_lo = 20;
  p.span_hi = 2000;
  p.y_range = 30;
  const std::string s = text_plot(p);
  CHECK(s.find("\u2591") != std::string::npos);
  CHECK(s.find("device corners") != std::string::npos);
  CHECK(s.find("requested band") != std::string::npos);
  // Column j sits at 10^(j/10) Hz. 20 Hz = 10^1.301 and 2 kHz = 10^3.301, so columns 14..33
  // (20 columns) lie in the band; two of them carry the 100 Hz and 1 kHz decade ticks.
  const auto ls = lines_of(s);
  int axes = 0;
  for (const auto& l : ls)
    if (l.find("\u2514") != std::string::npos) {
      ++axes;
      int marked = 0, ticked = 0, first = -1, k = 0;
      for (const auto& c : cells(l)) {
        if (c == "\u2501" || c == "\u252f") {
          ++marked;
          if (first < 0) first = k;
        }
        ticked += c == "\u252f";
        ++k;
      }
      CHECK(marked == 20);
      CHECK(ticked == 2);
      const int origin = static_cast<int>(cells(l.substr(0, l.find("\u2514"))).size()) + 1;
      CHECK(first - origin == 14);
    }
  CHECK(axes == 1);
  // Nothing below 30 dB under the peak (plus the nice tick's rounding) is drawn.
  int rows = 0;
  for (const auto& l : ls)
    if (l.find("\u251c") != std::string::npos || l.find("\u2502") != std::string::npos) ++rows;
  CHECK(rows <= 2 * 5 + 1);
}

TEST_CASE("text_plot: a labelled row of the y axis carries the tick \"\u251c\", every other row the plain axis") {
  const auto ls = lines_of(text_plot(high_pass(100)));
  int ticked = 0, plain = 0;
  for (const auto& l : ls) {
    const auto cs = cells(l);
    // The axis cell follows the right-aligned label and one space.
    const auto at =
        std::find_if(cs.begin(), cs.end(), [](const std::string& c) { return c == "\u251c" || c == "\u2502"; });
    if (at == cs.end()) continue;
    const std::string label = l.substr(0, l.find(*at));
    const bool labelled = label.find_first_not_of(' ') != std::string::npos;
    CHECK(labelled == (*at == "\u251c"));
    ++(labelled ? ticked : plain);
    CHECK(l.find("\u2524") == std::string::npos);
  }
  CHECK(ticked >= 3);
  CHECK(plain >= 1);
}

TEST_CASE("text_plot: bad series are input errors") {
  TextPlot p;
  CHECK_THROWS_AS(text_plot(p), shelfstage::InputError);
  p.x = {1, 10, 5};
  p.y = {0, 0, 0};
  CHECK_THROWS_AS(text_plot(p), shelfstage::InputError);
  p.x = {1, 10};
  CHECK_THROWS_AS(text_plot(p), shelfstage::InputError);
  p.x = {0, 10, 100};
  CHECK_THROWS_AS(text_plot(p), shelfstage::InputError);
  p.x = {1, 10, 100};
  p.y = {std::nan(""), std::nan(""), std::nan("")};
  CHECK_THROWS_AS(text_plot(p), shelfstage::InputError);
}
