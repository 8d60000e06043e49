// Tests of the plots: nice numbers and loose labelling checked against hand-worked cases of
// Heckbert's method (Graphics Gems, 1990), 1-2-5 decade ticks, the frame mapping, and a
// rendered plot that Chromium parses and paints.
#include "shelfstage/draw/plot.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <random>

#include "support/browser.hpp"

using namespace shelfstage::draw;

namespace {

std::vector<double> values(const std::vector<Tick>& ticks) {
  std::vector<double> v;
  for (const auto& t : ticks) v.push_back(t.value);
  return v;
}

std::vector<std::string> labels(const std::vector<Tick>& ticks) {
  std::vector<std::string> v;
  for (const auto& t : ticks)
    if (!t.label.empty()) v.push_back(t.label);
  return v;
}

bool near(const std::vector<double>& a, const std::vector<double>& b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (std::abs(a[i] - b[i]) > 1e-9 * std::max(1.0, std::abs(b[i]))) return false;
  return true;
}

}  // namespace

TEST_CASE("nice_number: Heckbert's table (1, 2, 5, 10 times a power of ten)") {
  // Rounded: below 1.5 -> 1, below 3 -> 2, below 7 -> 5, else 10.
  CHECK(nice_number(1.4, true) == doctest::Approx(1));
  CHECK(nice_number(1.6, true) == doctest::Approx(2));
  CHECK(nice_number(3.2, true) == doctest::Approx(5));
  CHECK(nice_number(7.5, true) == doctest::Approx(10));
  CHECK(nice_number(0.032, true) == doctest::Approx(0.05));
  // Ceiling: the next of 1, 2, 5, 10 at or above.
  CHECK(nice_number(0.7, false) == doctest::Approx(1));
  CHECK(nice_number(140, false) == doctest::Approx(200));
  CHECK(nice_number(2, false) == doctest::Approx(2));
  CHECK(nice_number(5.01, false) == doctest::Approx(10));
}

TEST_CASE("linear_ticks: hand-worked cases") {
  // 0..9.3, 6 ticks: range nice(9.3) = 10, step nice(10/5 = 2) = 2 -> 0, 2, ..., 10.
  auto t = linear_ticks(0, 9.3, 6);
  CHECK(t.step == doctest::Approx(2));
  CHECK(near(values(t.ticks), {0, 2, 4, 6, 8, 10}));
  CHECK(labels(t.ticks) == std::vector<std::string>{"0", "2", "4", "6", "8", "10"});
  // -43.2..21.7: range nice(64.9) = 100, step nice(20) = 20, widened to -60..40.
  t = linear_ticks(-43.2, 21.7, 6);
  CHECK(t.lo == doctest::Approx(-60));
  CHECK(t.hi == doctest::Approx(40));
  CHECK(labels(t.ticks) == std::vector<std::string>{"\u221260", "\u221240", "\u221220", "0", "20", "40"});
  // 0.13..0.47: range nice(0.34) = 0.5, step nice(0.1) = 0.1, one decimal.
  t = linear_ticks(0.13, 0.47, 6);
  CHECK(t.step == doctest::Approx(0.1));
  CHECK(labels(t.ticks) == std::vector<std::string>{"0.1", "0.2", "0.3", "0.4", "0.5"});
  // Reversed ends give the same axis.
  CHECK(near(values(linear_ticks(9.3, 0, 6).ticks), {0, 2, 4, 6, 8, 10}));
  // A single value is widened around itself and still labelled.
  t = linear_ticks(5, 5);
  CHECK(t.lo < 5);
  CHECK(t.hi > 5);
  CHECK(t.ticks.size() >= 3);
  // Nonsense falls back to 0..1 rather than looping.
  t = linear_ticks(std::nan(""), 3);
  CHECK(t.lo == doctest::Approx(0));
  CHECK(t.hi == doctest::Approx(1));
}

TEST_CASE("log_ticks: 1-2-5 in each decade, whole decades at the ends") {
  auto t = log_ticks(20, 20000);
  CHECK(t.lo == doctest::Approx(10));
  CHECK(t.hi == doctest::Approx(1e5));
  CHECK(labels(t.ticks) ==
        std::vector<std::string>{"10", "20", "50", "100", "200", "500", "1k", "2k", "5k", "10k", "20k", "50k", "100k"});
  int majors = 0;
  for (const auto& k : t.ticks) majors += k.major;
  CHECK(majors == 5);
  // Wide ranges (more than four decades) label the decades only; 2 and 5 stay as ticks.
  t = log_ticks(0.5, 2e6);
  CHECK(t.lo == doctest::Approx(0.1));
  CHECK(t.hi == doctest::Approx(1e7));
  CHECK(labels(t.ticks) == std::vector<std::string>{"0.1", "1", "10", "100", "1k", "10k", "100k", "1M", "10M"});
  CHECK(t.ticks.size() == 8 * 3 + 1);
  // Exact decades stay put despite rounding in log10.
  t = log_ticks(1000, 1e6);
  CHECK(t.lo == doctest::Approx(1000));
  CHECK(t.hi == doctest::Approx(1e6));
  // A single value spans its decade.
  t = log_ticks(1000, 1000);
  CHECK(t.lo == doctest::Approx(1000));
  CHECK(t.hi == doctest::Approx(10000));
  // Non-positive ends are replaced, not taken to log(0).
  t = log_ticks(0, 100);
  CHECK(t.lo == doctest::Approx(10));
}

TEST_CASE("frame_of: data land where the axes say") {
  Plot p;
  p.width = 600;
  p.height = 300;
  p.x.scale = Scale::log;
  p.series.push_back({"a", {{10, 0}, {1000, 10}}});
  const Frame f = frame_of(p);
  CHECK(f.x_lo == doctest::Approx(10));
  CHECK(f.x_hi == doctest::Approx(1000));
  CHECK(f.y_lo == doctest::Approx(0));
  CHECK(f.y_hi == doctest::Approx(10));
  // The geometric middle of the log axis is the middle of the plot area; y grows upward.
  const Point mid = f.to_px({100, 5});
  CHECK(mid.x == doctest::Approx((f.left + f.right) / 2));
  CHECK(mid.y == doctest::Approx((f.top + f.bottom) / 2));
  CHECK(f.to_px({10, 10}).y == doctest::Approx(f.top));
  CHECK(f.to_px({1000, 0}).x == doctest::Approx(f.right));
  // A fixed axis keeps its range.
  p.y.fixed = true;
  p.y.lo = -3;
  p.y.hi = 17;
  CHECK(frame_of(p).y_lo == doctest::Approx(-3));
  CHECK(frame_of(p).y_hi == doctest::Approx(17));
}

TEST_CASE("Plot::svg: layers, legend and ticks; Chromium parses and paints it") {
  Plot p;
  p.id = "t1";
  p.title = "gain & phase <test>";
  p.x = {Scale::log, "frequency (Hz)"};
  p.y = {Scale::linear, "gain (dB)"};
  std::vector<double> xs, lo, hi;
  std::vector<Point> nominal;
  for (int i = 0; i <= 60; ++i) {
    const double f = std::pow(10.0, 1 + i / 12.0);
    const double g = 20 - 10 * std::log10(1 + std::pow(30.0 / f, 2)) - 10 * std::log10(1 + std::pow(f / 2e5, 2));
    xs.push_back(f);
    lo.push_back(g - 1.5);
    hi.push_back(g + 1);
    nominal.push_back({f, g});
  }
  p.envelopes.push_back({"device corners", xs, lo, hi});
  p.series.push_back({"nominal", nominal});
  p.spans.push_back({"requested band", 20, 20000});
  p.clouds.push_back({"marks", {{100, 10}, {1000, 12}}, "#aa3300", 3, true});
  p.regions.push_back({"region", {{100, 0}, {1000, 0}, {1000, 5}}});
  p.notes.push_back("a note");
  const std::string svg = p.svg();
  for (const char* s : {"device corners", "nominal", "requested band", "a note", "frequency (Hz)", "gain (dB)", "1k",
                        "100k", "clip-path=\"url(#t1-area)\"", "gain &amp; phase &lt;test&gt;"})
    CHECK_MESSAGE(svg.find(s) != std::string::npos, s);

  std::random_device rd;
  const auto dir = std::filesystem::temp_directory_path() / ("shelfstage-plot-test-" + std::to_string(rd()));
  std::filesystem::create_directories(dir);
  std::ofstream(dir / "plot.svg") << svg;
  const auto run = shelfstage::test::render((dir / "plot.svg").string(), 700, 400, {.dom = true});
  CHECK(run.dom.find("parsererror") == std::string::npos);
  CHECK(run.console.empty());
  REQUIRE(!run.screenshot.empty());
  const auto img = shelfstage::test::decode_png(run.screenshot);
  CHECK(img.width == 700);
  CHECK(shelfstage::test::distinct_colours(img) > 20);
  CHECK(shelfstage::test::inked_fraction(img) > 0.2);
  std::filesystem::remove_all(dir);

  // An empty plot still draws its frame, and says so.
  Plot empty;
  empty.title = "nothing";
  CHECK(empty.svg().find("no data") != std::string::npos);
}
