// Tests of the purchase-augmented search: the purchasable lines (IEC 60063 series) and
// designs that need them when the shelf alone cannot make the stage.
#include "shelfstage/synth/purchases.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "synth/fixture.hpp"

using namespace shelfstage;

namespace {

bool has_value(const std::vector<store::Part>& parts, store::PartKind kind, double v) {
  return std::any_of(parts.begin(), parts.end(),
                     [&](const store::Part& p) { return p.kind == kind && std::abs(p.value - v) <= 1e-9 * v; });
}

}  // namespace

TEST_CASE("purchasable_parts: E24 resistors 10 ohm..10M and E6 capacitors (IEC 60063), as negative lines") {
  const auto parts = synth::purchasable_parts(50);
  int r = 0, film = 0, elec = 0;
  for (const auto& p : parts) {
    CHECK(synth::is_purchase_line(p.id));
    CHECK(p.bin == synth::kPurchaseBin);
    CHECK(p.qty > 1000);
    if (p.kind == store::PartKind::resistor) {
      ++r;
      CHECK(p.power_w == doctest::Approx(0.25));
      CHECK(p.tol->minus == doctest::Approx(0.05));
    } else if (p.dielectric == "film") {
      ++film;
      CHECK(p.volts == doctest::Approx(63));
    } else {
      ++elec;
      CHECK(p.dielectric == "electrolytic");
      CHECK(p.volts == doctest::Approx(50));
    }
  }
  // Six decades of 24 values and 10M; three decades of six film values; three of six
  // electrolytics and 1000u.
  CHECK(r == 6 * 24 + 1);
  CHECK(film == 3 * 6);
  CHECK(elec == 3 * 6 + 1);
  // IEC 60063 E24 keeps the historic values 2.7, 3.0, 3.3, 4.3, 4.7, 8.2, 9.1.
  for (double v : {27.0, 300.0, 3.3e3, 43e3, 470e3, 8.2e6, 9.1e3, 10e6})
    CHECK_MESSAGE(has_value(parts, store::PartKind::resistor, v), v);
  CHECK_FALSE(has_value(parts, store::PartKind::resistor, 2.8e3));  // E48/E96, not E24
  for (double v : {1e-9, 1.5e-9, 2.2e-9, 3.3e-9, 4.7e-9, 6.8e-9, 680e-9, 1e-6, 1e-3})
    CHECK_MESSAGE(has_value(parts, store::PartKind::capacitor, v), v);
  // Every id once.
  std::vector<std::int64_t> ids;
  for (const auto& p : parts) ids.push_back(p.id);
  std::sort(ids.begin(), ids.end());
  CHECK(std::adjacent_find(ids.begin(), ids.end()) == ids.end());
  CHECK(synth::purchase_volts(test::basic_spec(10)) == doctest::Approx(50));
}

TEST_CASE("design_with_purchases: a shelf without resistors yields stages made of purchases") {
  // Only capacitors and a transistor on the shelf: synth::design finds nothing, the
  // purchase-augmented search finds stages whose resistors all come from purchases.
  auto inv = test::small_shelf(10, {test::npn()});
  inv.parts.erase(std::remove_if(inv.parts.begin(), inv.parts.end(),
                                 [](const store::Part& p) { return p.kind == store::PartKind::resistor; }),
                  inv.parts.end());
  auto spec = test::basic_spec(10);
  spec.topologies = {"bjt-ce-divider"};
  CHECK(synth::design(spec, inv).candidates.empty());
  const auto r = synth::design_with_purchases(spec, inv, 5);
  REQUIRE_FALSE(r.candidates.empty());
  CHECK(r.candidates.size() <= 5);
  for (const auto& c : r.candidates) {
    CHECK_FALSE(c.yield.has_value());
    int resistor_pieces = 0;
    for (const auto& rp : c.parts) {
      if (rp.kind == 'R') resistor_pieces += static_cast<int>(rp.values.size());
      for (const auto& lines : rp.lines) {
        REQUIRE_FALSE(lines.empty());
        // Shelf lines before purchasable ones.
        CHECK(std::is_partitioned(lines.begin(), lines.end(), [](std::int64_t id) { return !synth::is_purchase_line(id); }));
        if (rp.kind == 'R') CHECK(synth::is_purchase_line(lines.front()));
      }
    }
    CHECK(c.purchases >= resistor_pieces);
    CHECK(resistor_pieces >= 4);  // R1, R2, RC and at least one emitter resistor
  }
}

TEST_CASE("design_with_purchases: values the shelf holds come from the shelf first") {
  const auto inv = test::small_shelf(10, {test::npn()});
  auto spec = test::basic_spec(10);
  spec.topologies = {"bjt-ce-divider"};
  const auto r = synth::design_with_purchases(spec, inv, 10);
  REQUIRE_FALSE(r.candidates.empty());
  int shelf_first = 0;
  for (const auto& c : r.candidates)
    for (const auto& rp : c.parts)
      for (const auto& lines : rp.lines) {
        CHECK(std::is_partitioned(lines.begin(), lines.end(), [](std::int64_t id) { return !synth::is_purchase_line(id); }));
        if (!synth::is_purchase_line(lines.front())) ++shelf_first;
      }
  CHECK(shelf_first > 0);
}
