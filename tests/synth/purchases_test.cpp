// Tests of the purchase-augmented search: the purchasable lines (IEC 60063 series) and
// designs that need them when the shelf alone cannot make the stage.
#include "shelfstage/synth/purchases.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <map>

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
        CHECK(std::is_partitioned(lines.begin(), lines.end(),
                                  [](std::int64_t id) { return !synth::is_purchase_line(id); }));
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
        CHECK(std::is_partitioned(lines.begin(), lines.end(),
                                  [](std::int64_t id) { return !synth::is_purchase_line(id); }));
        if (!synth::is_purchase_line(lines.front())) ++shelf_first;
      }
  CHECK(shelf_first > 0);
}

// --- The smallest purchase, checked by enumeration ---------------------------------------

namespace {

// A shelf holding exactly what one design uses for `copies` copies (the lines its pick list
// would take first), with its transistor.
synth::Inventory exact_shelf(const synth::Inventory& from, const synth::Candidate& d, int copies) {
  synth::Inventory inv;
  inv.devices = from.devices;
  std::map<std::int64_t, int> need;
  for (const auto& rp : d.parts)
    for (const auto& lines : rp.lines) need[lines.front()] += copies;
  for (const auto& p : from.parts) {
    if (!store::is_passive(p.kind)) {
      if (p.device == d.device.name) inv.parts.push_back(p);
      continue;
    }
    const auto it = need.find(p.id);
    if (it == need.end()) continue;
    store::Part q = p;
    q.qty = it->second;
    inv.parts.push_back(q);
  }
  return inv;
}

bool feasible(const synth::Spec& spec, const synth::Inventory& inv) {
  synth::Spec s = spec;
  s.mc_samples = 0;
  s.top = 1;
  s.explain_failure = false;
  return !synth::design(s, inv).candidates.empty();
}

// Every way to add one piece: one more of each stocked line, or one of each purchasable
// value (purchasable_parts).
std::vector<store::Part> one_piece_additions(const synth::Inventory& inv, double volts) {
  std::vector<store::Part> out;
  for (const auto& p : inv.parts)
    if (store::is_passive(p.kind)) out.push_back(p);
  for (auto p : synth::purchasable_parts(volts)) out.push_back(p);
  return out;
}

synth::Inventory with_piece(synth::Inventory inv, const store::Part& add, int qty) {
  for (auto& p : inv.parts)
    if (p.id == add.id) {
      p.qty += qty;
      return inv;
    }
  store::Part q = add;
  q.id = 100000 + static_cast<std::int64_t>(inv.parts.size());
  q.qty = qty;
  q.bin = "N1";
  inv.parts.push_back(q);
  return inv;
}

// The purchase's lines added to the shelf as stock.
synth::Inventory with_purchase(synth::Inventory inv, const synth::Purchase& p) {
  for (const auto& l : p.buy) {
    store::Part q;
    q.kind = l.kind;
    q.value = l.value;
    q.tol = l.tol;
    if (l.kind == store::PartKind::resistor)
      q.power_w = l.rating;
    else
      q.volts = l.rating;
    q.dielectric = l.dielectric;
    q.id = 200000 + static_cast<std::int64_t>(inv.parts.size());
    q.qty = l.qty;
    q.bin = "N2";
    inv.parts.push_back(q);
  }
  return inv;
}

struct Case {
  const char* name;
  const char* topology;
  bool jfet;
  int copies;
  int remove;  // pieces taken from the design's gate or base resistor line
};

}  // namespace

TEST_CASE("smallest_purchase: minimal on shelves where the minimum is known by enumeration") {
  // Each shelf holds exactly one working design for the copies asked, less `remove` pieces
  // of one resistor line. Then no design fits (checked), the smallest purchase buys exactly
  // `remove` pieces (one piece fewer cannot help: every one-piece addition is enumerated,
  // a top-up of each line and each purchasable value), and buying it makes the request fit.
  for (const Case& k : {Case{"two copies short of one gate resistor", "jfet-cs-self", true, 2, 1},
                        Case{"one copy without its gate resistor", "jfet-cs-self", true, 1, 1},
                        Case{"two copies without a divider resistor", "bjt-ce-divider", false, 2, 2},
                        Case{"three copies short of two pieces", "bjt-ce-divider", false, 3, 2}}) {
    const std::string name = k.name;
    CAPTURE(name);
    const auto base = test::small_shelf(3, {k.jfet ? test::njfet() : test::npn()});
    auto spec = test::basic_spec(k.jfet ? 4 : 10);
    spec.topologies = {k.topology};
    spec.copies = k.copies;
    spec.mc_samples = 0;
    spec.combine = 1;
    const auto r = synth::design(spec, base);
    REQUIRE_FALSE(r.candidates.empty());
    const synth::Candidate& d = r.candidates.front();
    auto inv = exact_shelf(base, d, k.copies);
    REQUIRE(feasible(spec, inv));
    // The first resistor of the design (RG or R1) loses pieces.
    const auto first =
        std::find_if(d.parts.begin(), d.parts.end(), [](const synth::RolePart& rp) { return rp.kind == 'R'; });
    REQUIRE(first != d.parts.end());
    for (auto& p : inv.parts)
      if (p.id == first->lines.front().front()) p.qty -= k.remove;
    REQUIRE_FALSE(feasible(spec, inv));

    const auto p = synth::smallest_purchase(spec, inv);
    REQUIRE(p.has_value());
    CHECK(p->pieces == k.remove);
    int sum = 0;
    for (const auto& l : p->buy) sum += l.qty;
    CHECK(sum == p->pieces);
    CHECK(p->buy.size() == 1);  // one value
    CHECK(p->design.purchases == p->pieces);
    CHECK(feasible(spec, with_purchase(inv, *p)));
    if (k.remove >= 2) {
      // No single piece makes it: enumerate them all.
      for (const auto& add : one_piece_additions(inv, synth::purchase_volts(spec))) {
        if (add.kind == store::PartKind::resistor && (add.value < 100 || add.value > 1e6)) continue;
        CAPTURE(add.value);
        CHECK_FALSE(feasible(spec, with_piece(inv, add, 1)));
      }
    }
    // The infeasible answer suggests the same purchase.
    const auto none = synth::design(spec, inv);
    REQUIRE(none.candidates.empty());
    REQUIRE(none.diagnosis.with_purchases.has_value());
    CHECK(none.diagnosis.with_purchases->purchases == k.remove);
    REQUIRE(none.diagnosis.suggestions.size() == 1);
    CHECK(none.diagnosis.suggestions.front().find(fmt::format("buy {} x", k.remove)) == 0);
  }
}
