// Tests of src/units/eseries.cpp against the IEC 60063 preferred-number tables.
#include "shelfstage/units/eseries.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

#include <doctest/doctest.h>

#include "shelfstage/error.hpp"

using shelfstage::InputError;
using shelfstage::units::eseries;
using shelfstage::units::in_series;
using shelfstage::units::nearest_in_series;

namespace {

constexpr int all_series[] = {3, 6, 12, 24, 48, 96, 192};

bool contains(int n, double mantissa) {
  for (const double m : eseries(n)) {
    if (std::fabs(m - mantissa) < 1e-9) return true;
  }
  return false;
}

// 10^(i/n) rounded to `decimals` places: the geometric series the tables start from.
double geometric(int i, int n, int decimals) {
  const double scale = std::pow(10.0, decimals);
  return std::round(std::pow(10.0, static_cast<double>(i) / n) * scale) / scale;
}

}  // namespace

TEST_CASE("IEC 60063: series E3 E6 E12 E24 E48 E96 E192 hold 3 6 12 24 48 96 192 values") {
  for (const int n : all_series) {
    CAPTURE(n);
    const auto s = eseries(n);
    CHECK(s.size() == static_cast<std::size_t>(n));
    CHECK(s.front() == 1.0);
    CHECK(s.back() < 10.0);
    CHECK(std::is_sorted(s.begin(), s.end()));
    CHECK(std::adjacent_find(s.begin(), s.end()) == s.end());
  }
  CHECK_THROWS_AS(eseries(5), InputError);
  CHECK_THROWS_AS(eseries(0), InputError);
  CHECK_THROWS_AS(eseries(384), InputError);
}

TEST_CASE("IEC 60063 E24 table, value by value") {
  const std::vector<double> published{1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
                                      3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1};
  const auto s = eseries(24);
  REQUIRE(s.size() == published.size());
  for (std::size_t i = 0; i < published.size(); ++i) CHECK(s[i] == published[i]);
}

// E24 keeps historic values where 10^(i/24) rounded to two figures gives another number.
TEST_CASE("IEC 60063 E24 historic values 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2 differ from the rounded series") {
  struct Historic {
    int index;
    double value;      ///< IEC 60063
    double geometric;  ///< 10^(i/24) to two figures
  };
  const Historic historic[] = {{10, 2.7, 2.6}, {11, 3.0, 2.9}, {12, 3.3, 3.2}, {13, 3.6, 3.5},
                               {14, 3.9, 3.8}, {15, 4.3, 4.2}, {16, 4.7, 4.6}, {22, 8.2, 8.3}};
  const auto s = eseries(24);
  for (const Historic& h : historic) {
    CAPTURE(h.value);
    CHECK(s[static_cast<std::size_t>(h.index)] == h.value);
    CHECK(geometric(h.index, 24, 1) == doctest::Approx(h.geometric));
    CHECK(h.value != doctest::Approx(h.geometric));
  }
  // Every other E24 value is the rounded series.
  int differing = 0;
  for (int i = 0; i < 24; ++i) {
    if (std::fabs(s[static_cast<std::size_t>(i)] - geometric(i, 24, 1)) > 1e-9) ++differing;
  }
  CHECK(differing == 8);
}

TEST_CASE("IEC 60063 E3 E6 E12 tables") {
  const std::vector<double> e12{1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2};
  const std::vector<double> e6{1.0, 1.5, 2.2, 3.3, 4.7, 6.8};
  const std::vector<double> e3{1.0, 2.2, 4.7};
  CHECK(std::equal(e12.begin(), e12.end(), eseries(12).begin(), eseries(12).end()));
  CHECK(std::equal(e6.begin(), e6.end(), eseries(6).begin(), eseries(6).end()));
  CHECK(std::equal(e3.begin(), e3.end(), eseries(3).begin(), eseries(3).end()));
}

// E48 and up: three figures of 10^(i/n); IEC 60063 departs from it once, at E192's 9.20.
TEST_CASE("IEC 60063 E48 E96 E192 follow 10^(i/n) to three figures, but for E192 9.20") {
  for (const int n : {48, 96, 192}) {
    const auto s = eseries(n);
    for (int i = 0; i < n; ++i) {
      const double expected = (n == 192 && i == 185) ? 9.20 : geometric(i, n, 2);
      CAPTURE(n);
      CAPTURE(i);
      CHECK(s[static_cast<std::size_t>(i)] == doctest::Approx(expected).epsilon(1e-12));
    }
  }
  CHECK(geometric(185, 192, 2) == doctest::Approx(9.19));
  CHECK(contains(192, 9.20));
  CHECK_FALSE(contains(192, 9.19));
}

TEST_CASE("IEC 60063 spot values of E48 E96 E192") {
  for (const double v : {1.05, 1.21, 1.47, 1.96, 2.49, 3.01, 4.02, 4.87, 5.90, 6.81, 8.25, 9.53}) {
    CHECK(contains(48, v));
  }
  for (const double v : {1.02, 1.13, 1.37, 1.58, 2.21, 2.67, 3.57, 4.53, 4.99, 6.04, 7.32, 9.76}) {
    CHECK(contains(96, v));
    CHECK_FALSE(contains(48, v));
  }
  for (const double v : {1.01, 1.04, 1.29, 2.03, 2.84, 3.36, 4.70, 5.05, 6.73, 8.16, 9.42, 9.88}) {
    CHECK(contains(192, v));
    CHECK_FALSE(contains(96, v));
  }
  CHECK_FALSE(contains(96, 4.7));  // 4.7 is E24, not E96 (which has 4.64 and 4.75)
}

TEST_CASE("IEC 60063 nesting: E3 in E6 in E12 in E24, E48 in E96 in E192, each every other value") {
  const int chains[][2] = {{3, 6}, {6, 12}, {12, 24}, {48, 96}, {96, 192}};
  for (const auto& c : chains) {
    const auto coarse = eseries(c[0]);
    const auto fine = eseries(c[1]);
    CAPTURE(c[0]);
    for (std::size_t i = 0; i < coarse.size(); ++i) {
      CHECK(coarse[i] == fine[2 * i]);
      CHECK(contains(c[1], coarse[i]));
    }
  }
  // E24 is no subset of E48: the historic values sit apart (4.7 against 4.64 and 4.87).
  CHECK_FALSE(contains(48, 4.7));
}

TEST_CASE("nearest_in_series on a log scale, across decade boundaries") {
  CHECK(nearest_in_series(9.6e3, 12) == 10e3);  // 9.6k -> 10k in E12 (8.2k is further)
  CHECK(nearest_in_series(4.6e3, 12) == 4.7e3);
  CHECK(nearest_in_series(1000, 24) == 1000);
  CHECK(nearest_in_series(999, 24) == 1000);
  CHECK(nearest_in_series(1001, 24) == 1000);
  CHECK(nearest_in_series(0.095, 12) == 0.1);
  CHECK(nearest_in_series(4.7e-9, 6) == 4.7e-9);
  CHECK(nearest_in_series(4.6e-9, 6) == 4.7e-9);
  // Log-scale midpoint of 2.2 and 3.3 is sqrt(2.2 * 3.3) = 2.694: 2.6 -> 2.2, 2.8 -> 3.3.
  CHECK(nearest_in_series(2.6e-6, 6) == 2.2e-6);
  CHECK(nearest_in_series(2.8e-6, 6) == 3.3e-6);
  CHECK(nearest_in_series(4.8e3, 96) == 4.75e3);
  CHECK(nearest_in_series(9.19e3, 192) == 9.2e3);
  CHECK(nearest_in_series(1e-13, 3) == 1e-13);
  CHECK_THROWS_AS(nearest_in_series(0, 12), InputError);
  CHECK_THROWS_AS(nearest_in_series(-4700, 12), InputError);
  CHECK_THROWS_AS(nearest_in_series(std::nan(""), 12), InputError);
  CHECK_THROWS_AS(nearest_in_series(4700, 7), InputError);
}

TEST_CASE("in_series in any decade") {
  CHECK(in_series(4700, 24));
  CHECK(in_series(4.7e-9, 3));
  CHECK(in_series(0.47, 12));
  CHECK(in_series(4750, 96));
  CHECK_FALSE(in_series(4750, 24));
  CHECK_FALSE(in_series(4700, 96));
  CHECK(in_series(9.2e3, 192));
  CHECK_FALSE(in_series(9.19e3, 192));
  CHECK(in_series(4700 * (1 + 1e-7), 24));  // within 1e-6 relative
  CHECK_FALSE(in_series(4700 * (1 + 1e-5), 24));
  CHECK_FALSE(in_series(0, 24));
  CHECK_FALSE(in_series(-4700, 24));
  // Every member of every series, in every decade from pico to giga.
  for (const int n : all_series) {
    for (const double m : eseries(n)) {
      for (int decade = -12; decade <= 9; ++decade) {
        CHECK(in_series(m * std::pow(10.0, decade), n));
      }
    }
  }
}
