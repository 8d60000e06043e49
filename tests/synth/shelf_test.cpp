// What the shelf can make: combination laws, worst-case bounds, ratings, quantities.
#include "shelfstage/synth/shelf.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>

#include "fixture.hpp"
#include "shelfstage/units/eseries.hpp"

using namespace shelfstage;
using synth::Join;
using synth::Shelf;

namespace {
const synth::Combo* find(std::span<const synth::Combo> cs, double nominal, Join join) {
  for (const auto& c : cs)
    if (std::abs(c.nominal - nominal) < 1e-9 * nominal && c.join == join) return &c;
  return nullptr;
}
}  // namespace

TEST_CASE("series and parallel resistors follow R1 + R2 and R1 R2 / (R1 + R2), bounds from the parts' bounds") {
  std::vector<store::Part> parts = {test::resistor(1, 10e3, 3), test::resistor(2, 680, 2)};
  Shelf shelf(parts, {});
  const auto* s = find(shelf.resistors(), 10680, Join::series);
  REQUIRE(s);  // 680 moves 10k by 6.8 %, more than its 5 %: worth a pair
  CHECK(s->count == 2);
  CHECK(s->lo == doctest::Approx(0.95 * 10680));  // both parts 5 % low
  CHECK(s->hi == doctest::Approx(1.05 * 10680));
  CHECK(shelf.recipe(*s) == "680+10k");
  const auto* p = find(shelf.resistors(), 10e3 * 680 / 10680, Join::parallel);
  REQUIRE(p);  // 10k across 680 moves it by 6.4 %
  CHECK(shelf.recipe(*p) == "680||10k");
}

// NOTES 1 in shelf.hpp: a pair must move its main piece by more than that piece's tolerance.
TEST_CASE("a pair that moves the value by less than its main piece's tolerance is not offered") {
  SUBCASE("5 % parts: 6k81+270k moves 270k by 2.5 %, 56+3k9 moves 3k9 by 1.4 %") {
    std::vector<store::Part> parts = {test::resistor(1, 6810, 3), test::resistor(2, 270e3, 3), test::resistor(3, 56, 3),
                                      test::resistor(4, 3900, 3)};
    Shelf shelf(parts, {});
    CHECK(find(shelf.resistors(), 276810, Join::series) == nullptr);
    CHECK(find(shelf.resistors(), 3956, Join::series) == nullptr);
    CHECK(find(shelf.resistors(), 3900.0 * 270e3 / 273900, Join::parallel) == nullptr);  // 1.4 %
    CHECK(find(shelf.resistors(), 6810.0 * 3900 / 10710, Join::parallel) != nullptr);    // 36 %
  }
  SUBCASE("the same 2 % move is worth it on 1 % parts: 4k75||220k") {
    std::vector<store::Part> parts = {test::resistor(1, 4750, 3, "A1", 0.01), test::resistor(2, 220e3, 3, "A1", 0.01)};
    Shelf shelf(parts, {});
    CHECK(find(shelf.resistors(), 4750.0 * 220e3 / 224750, Join::parallel) != nullptr);
    // ... and 4k75||220k of 5 % parts is not.
    Shelf loose(std::vector<store::Part>{test::resistor(1, 4750, 3), test::resistor(2, 220e3, 3)}, {});
    CHECK(find(loose.resistors(), 4750.0 * 220e3 / 224750, Join::parallel) == nullptr);
  }
  SUBCASE("an asymmetric tolerance counts by its wider side: -20/+80 % electrolytics") {
    auto a = test::capacitor(1, 100e-6, 3, 25, "electrolytic");
    auto b = test::capacitor(2, 47e-6, 3, 25, "electrolytic");
    a.tol = b.tol = units::Tolerance{0.20, 0.80};  // minus, plus
    Shelf shelf(std::vector<store::Part>{a, b}, {});
    CHECK(find(shelf.capacitors(), 147e-6, Join::parallel) == nullptr);  // adds 47 % to 100u: inside +80 %
    CHECK(find(shelf.capacitors(), 200e-6, Join::parallel) != nullptr);  // two of one value double it
  }
  SUBCASE("triples: every piece must count") {
    std::vector<store::Part> parts = {test::resistor(1, 10e3, 3), test::resistor(2, 4700, 3),
                                      test::resistor(3, 100, 3)};
    Shelf shelf(parts, {.combine = 3});
    CHECK(find(shelf.resistors(), 14800, Join::series) == nullptr);  // 100 adds 0.7 % to 14k7
    CHECK(find(shelf.resistors(), 24700, Join::series) != nullptr);  // 4k7 adds 23 % to 20k
  }
}

TEST_CASE("a pair that changes the value by less than 1 % is left out (lost in the tolerance)") {
  std::vector<store::Part> parts = {test::resistor(1, 100, 3), test::resistor(2, 22e3, 3)};
  Shelf shelf(parts, {});
  CHECK(find(shelf.resistors(), 22100, Join::series) == nullptr);
  CHECK(find(shelf.resistors(), 100 * 22e3 / 22100, Join::parallel) == nullptr);
  CHECK(find(shelf.resistors(), 200, Join::series) != nullptr);
}

TEST_CASE("two pieces of one value need a quantity of at least two") {
  std::vector<store::Part> one = {test::resistor(1, 4.7e3, 1)};
  CHECK(find(Shelf(one, {}).resistors(), 9.4e3, Join::series) == nullptr);
  std::vector<store::Part> two = {test::resistor(1, 4.7e3, 2)};
  CHECK(find(Shelf(two, {}).resistors(), 9.4e3, Join::series) != nullptr);
}

TEST_CASE("the same value in two bins is one group with both lines, in natural bin order") {
  std::vector<store::Part> parts = {test::resistor(1, 1e3, 2, "A10"), test::resistor(2, 1e3, 3, "A2")};
  Shelf shelf(parts, {});
  REQUIRE(shelf.groups().size() == 1);
  CHECK(shelf.groups()[0].available == 5);
  CHECK(shelf.groups()[0].lines == std::vector<std::int64_t>{2, 1});  // A2 before A10
}

TEST_CASE("reserved pieces are not available to the synthesizer") {
  auto p = test::resistor(1, 1e3, 3);
  p.reserved = 3;
  Shelf shelf(std::vector<store::Part>{p}, {});
  CHECK(shelf.resistors().empty());
}

TEST_CASE("capacitors: parallel adds, series only for non-polarised parts, ratings combine") {
  std::vector<store::Part> parts = {test::capacitor(1, 10e-6, 2, 25, "electrolytic"),
                                    test::capacitor(2, 100e-9, 2, 63, "film")};
  Shelf shelf(parts, {});
  CHECK(find(shelf.capacitors(), 20e-6, Join::parallel) != nullptr);
  CHECK(find(shelf.capacitors(), 5e-6, Join::series) == nullptr);  // electrolytics are not put in series
  const auto* fs = find(shelf.capacitors(), 50e-9, Join::series);
  REQUIRE(fs);
  CHECK(fs->rating == doctest::Approx(126));  // two equal film capacitors share the voltage
  const auto* par = find(shelf.capacitors(), 20e-6, Join::parallel);
  CHECK(par->rating == doctest::Approx(25));
  CHECK(par->polarised);
}

TEST_CASE("resistor power ratings of combinations: the first part to reach its rating limits the pair") {
  auto a = test::resistor(1, 1e3, 1);
  auto b = test::resistor(2, 3e3, 1);
  b.power_w = 0.5;
  Shelf shelf(std::vector<store::Part>{a, b}, {});
  // Series: I^2 limited by min(0.25 W / 1k, 0.5 W / 3k) = 0.5 / 3k; total 4k dissipates 4k x that.
  CHECK(find(shelf.resistors(), 4e3, Join::series)->rating == doctest::Approx(0.5 / 3e3 * 4e3));
  // Parallel: V^2 limited by 0.25 W x 1k; total 750 ohm dissipates V^2 / 750.
  CHECK(find(shelf.resistors(), 750, Join::parallel)->rating == doctest::Approx(250.0 / 750.0));
}

TEST_CASE("capacitor_at_least takes the smallest adequate part, rated for the DC, polarised only when allowed") {
  std::vector<store::Part> parts = {test::capacitor(1, 10e-6, 5, 6.3, "electrolytic"),
                                    test::capacitor(2, 22e-6, 5, 25, "electrolytic"),
                                    test::capacitor(3, 1e-6, 5, 63, "film")};
  Shelf shelf(parts, {.combine = 1});
  // 7 V DC: the 6.3 V part is refused though it is large enough.
  const auto* c = shelf.capacitor_at_least(5e-6, 7, true);
  REQUIRE(c);
  CHECK(c->nominal == doctest::Approx(22e-6));
  CHECK(shelf.capacitor_at_least(5e-6, 7, false) == nullptr);  // only film is allowed, and it is too small
  CHECK(shelf.capacitor_at_least(0.8e-6, 7, false)->nominal == doctest::Approx(1e-6));
}

TEST_CASE("nearest offers the nearest values and the nearest single parts on either side") {
  std::vector<store::Part> parts = {test::resistor(1, 10e3, 5), test::resistor(2, 680, 5), test::resistor(3, 12e3, 5)};
  Shelf shelf(parts, {});
  std::vector<double> out;
  shelf.nearest(10.7e3, 1, out);
  CHECK(std::find(out.begin(), out.end(), 10680.0) != out.end());  // 10k+680, the nearest
  CHECK(std::find(out.begin(), out.end(), 10e3) != out.end());     // and the singles around it
  CHECK(std::find(out.begin(), out.end(), 12e3) != out.end());
}

TEST_CASE("nearest and spread offer each value once, on a shelf with purchases too") {
  // The nearest single parts on either side are often among the nearest values already, and
  // on a shelf with purchases (E24 added, IEC 60063) the stock's nearest values often are the
  // market's: each is offered once, where it first came.
  std::vector<store::Part> parts;
  std::int64_t id = 1;
  for (const double v : {100.0, 470.0, 1e3, 2.2e3, 4.7e3, 10e3, 47e3, 100e3})
    parts.push_back(test::resistor(id++, v, 5));
  Shelf::Options market;
  market.add_purchases = true;
  for (const Shelf::Options& o : {Shelf::Options{}, market}) {
    const Shelf shelf(parts, o);
    int offered = 0;
    for (const double target : {150.0, 470.0, 999.0, 3.3e3, 4.7e3, 12.3e3, 47e3}) {
      std::vector<double> near{-1.0}, spread{-1.0};  // (what was there before stays)
      shelf.nearest(target, 2, near);
      shelf.spread(target / 10, target, 8, spread);
      for (const auto* v : {&near, &spread}) {
        CHECK(v->front() == -1.0);
        auto sorted = *v;
        std::sort(sorted.begin(), sorted.end());
        CHECK(std::adjacent_find(sorted.begin(), sorted.end()) == sorted.end());
        offered += static_cast<int>(v->size()) - 1;
      }
    }
    CHECK(offered > 30);
  }
}

TEST_CASE("nearest's values are the nearest of the whole table of singles and pairs (E12 and E24 shelves)") {
  // The table (Shelf::resistors(): every single and every pair the rules allow, built by
  // enumeration) is the reference; nearest() finds pairs on the fly. On these shelves every
  // range of singles it scans holds fewer than its limit, so the two must agree: the k-th
  // value nearest() gives lies as far from the target (as a ratio) as the table's k-th
  // distinct value. E12 and E24 values from IEC 60063.
  for (int series : {12, 24}) {
    CAPTURE(series);
    std::vector<store::Part> parts;
    std::int64_t id = 1;
    for (double decade = 1; decade <= 1e5; decade *= 10)
      for (double m : units::eseries(series)) {
        parts.push_back(test::resistor(id, m * decade, static_cast<int>(1 + id % 3), "A1", 0.01));
        ++id;
      }
    const Shelf shelf(parts, {});
    std::vector<double> table;
    for (const auto& c : shelf.resistors()) table.push_back(c.nominal);
    auto distance = [](double v, double t) { return std::abs(std::log(v / t)); };
    std::uint64_t state = 12345;
    for (int k = 0; k < 300; ++k) {
      state = state * 6364136223846793005ULL + 1442695040888963407ULL;
      const double target = 30.0 * std::pow(10.0, 4.0 * static_cast<double>(state >> 11) / 9007199254740992.0);
      // (The 200 nearest entries, sorted, hold the three nearest distinct values: no value
      // has that many recipes on these shelves.)
      std::vector<double> sorted = table;
      const auto head = std::min<std::ptrdiff_t>(200, static_cast<std::ptrdiff_t>(sorted.size()));
      std::partial_sort(sorted.begin(), sorted.begin() + head, sorted.end(),
                        [&](double a, double b) { return distance(a, target) < distance(b, target); });
      sorted.resize(static_cast<std::size_t>(head));
      std::vector<double> distinct;
      for (double v : sorted)
        if (std::none_of(distinct.begin(), distinct.end(),
                         [&](double d) { return std::abs(d - v) <= 1e-9 * std::max(d, v); }))
          distinct.push_back(v);
      for (std::size_t n : {1u, 2u, 3u}) {
        CAPTURE(target);
        CAPTURE(n);
        std::vector<double> out;
        shelf.nearest(target, n, out);
        REQUIRE(out.size() >= n);
        for (std::size_t i = 0; i < n; ++i)
          CHECK(distance(out[i], target) == doctest::Approx(distance(distinct[i], target)).epsilon(1e-9).scale(1));
      }
    }
  }
}
