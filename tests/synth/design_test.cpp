// The synthesizer against outside checks: a brute-force enumeration of every combination on
// a small shelf, the quantity pool, ngspice at the device corners, and nonsense requests.
#include "shelfstage/synth/design.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <span>
#include <stdexcept>

#include "../src/synth/detail.hpp"
#include "demo_shelf.hpp"
#include "fixture.hpp"
#include "yield_check.hpp"
#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage;

namespace {

// Pieces of each stock group a candidate uses, for all copies.
std::map<double, int> pieces_by_value(const synth::Candidate& c, int copies) {
  std::map<double, int> n;
  for (const auto& rp : c.parts)
    for (double v : rp.values) n[v] += copies;
  return n;
}

int stock_of(const synth::Inventory& inv, double value) {
  int n = 0;
  for (const auto& p : inv.parts)
    if (store::is_passive(p.kind) && std::abs(p.value - value) < 1e-9 * value) n += p.available();
  return n;
}

}  // namespace

TEST_CASE("parallel_for: every item runs once, and an item's exception reaches the caller") {
  // The search's one thread pool. An exception escaping a thread's function would end the
  // program (std::terminate): a failure deep in a search must come back as an error instead.
  std::vector<int> ran(64, 0);
  synth::detail::parallel_for(ran.size(), [&](std::size_t i) { ++ran[i]; });
  CHECK(std::all_of(ran.begin(), ran.end(), [](int k) { return k == 1; }));
  for (const std::size_t bad : {std::size_t{0}, std::size_t{37}, std::size_t{63}})
    CHECK_THROWS_WITH_AS(synth::detail::parallel_for(64,
                                                     [&](std::size_t i) {
                                                       if (i == bad) throw std::runtime_error("item failed");
                                                     }),
                         "item failed", std::runtime_error);
  // Inside another loop's work the items run on the calling thread; the exception comes out
  // of both loops.
  CHECK_THROWS_AS(synth::detail::parallel_for(4,
                                              [](std::size_t) {
                                                synth::detail::parallel_for(8, [](std::size_t j) {
                                                  if (j == 5) throw std::runtime_error("inner");
                                                });
                                              }),
                  std::runtime_error);
}

TEST_CASE("only stocked values and quantities: one piece short and the best design is not offered") {
  for (int copies : {1, 3}) {
    CAPTURE(copies);
    synth::Inventory inv = test::small_shelf(20, {test::npn()});
    synth::Spec spec = test::basic_spec(8);
    spec.copies = copies;
    spec.topologies = {"bjt-ce-divider"};
    spec.top = 3;
    const auto first = synth::design(spec, inv);
    REQUIRE_FALSE(first.candidates.empty());
    const auto& best = first.candidates.front();
    // Every candidate fits the stock, for every copy.
    for (const auto& c : first.candidates)
      for (const auto& [v, n] : pieces_by_value(c, copies)) CHECK(n <= stock_of(inv, v));
    // Leave one piece fewer of a value the best design needs than it needs.
    const auto need = pieces_by_value(best, copies);
    const double value = need.begin()->first;
    for (auto& p : inv.parts)
      if (store::is_passive(p.kind) && std::abs(p.value - value) < 1e-9 * value) p.qty = need.begin()->second - 1;
    const auto second = synth::design(spec, inv);
    for (const auto& c : second.candidates) {
      CHECK(c.id != best.id);
      for (const auto& [v, n] : pieces_by_value(c, copies)) CHECK(n <= stock_of(inv, v));
    }
  }
}

TEST_CASE("on a small shelf the top 10 equal those of a brute-force enumeration of every combination") {
  // The enumerator below tries every combination of achievable resistances for every
  // resistor role (optional roles also absent); capacitors follow the same sizing rule as
  // the search (they do not enter the score). Both share the evaluation (StageBuilder),
  // so the comparison checks the search's coverage, not the physics.
  synth::Inventory inv = test::small_shelf(10, {test::njfet()});
  synth::Spec spec = test::basic_spec(4);
  spec.topologies = {"jfet-cs-self"};
  spec.combine = 1;
  spec.top = 10;
  spec.mc_samples = 0;
  const auto guided = synth::design(spec, inv);

  synth::Shelf::Options so;
  so.combine = 1;
  const synth::Shelf shelf(inv.parts, so);
  const auto* topo = stages::find_topology("jfet-cs-self");
  const synth::StageBuilder builder(spec, shelf, *topo, inv.devices[0], nullptr, 10);
  std::vector<double> rs;
  for (const auto& c : shelf.resistors()) rs.push_back(c.nominal);
  std::vector<double> rs_opt = rs;
  rs_opt.push_back(0);  // absent
  synth::SearchStats stats;
  std::vector<synth::Candidate> all;
  // Roles: RG, RD, RS1, RS2 (+ CS when RS2 is present).
  for (double rg : rs)
    for (double rd : rs)
      for (double rs1 : rs_opt)
        for (double rs2 : rs_opt) {
          stages::Values v;
          v[0] = rg;
          v[1] = rd;
          v[2] = rs1;
          v[3] = rs2;
          synth::Candidate c;
          if (!builder.complete(v, c, stats)) continue;
          if (builder.assess(c, stats)) all.push_back(std::move(c));
        }
  std::stable_sort(all.begin(), all.end(), [](const auto& a, const auto& b) {
    return a.score != b.score ? a.score < b.score : a.pieces < b.pieces;
  });
  // The same listing rule as the search: one-resistor variants of a better design are left out.
  std::vector<synth::Candidate> listed;
  for (auto& c : all)
    if (std::none_of(listed.begin(), listed.end(), [&](const auto& k) { return synth::is_variant(k, c); }))
      listed.push_back(std::move(c));
  all = std::move(listed);
  REQUIRE(all.size() >= 10);
  for (std::size_t i = 0; i < 5; ++i) {
    const auto& a = all[i];
    MESSAGE("exhaustive " << a.score << " nom " << a.error_nominal << " worst " << a.error_worst << " pcs " << a.pieces
                          << " RG " << a.values[0] << " RD " << a.values[1] << " RS1 " << a.values[2] << " RS2 "
                          << a.values[3] << " I " << a.nominal.bias_current_a);
    if (i < guided.candidates.size()) {
      const auto& g = guided.candidates[i];
      MESSAGE("guided " << g.score << " nom " << g.error_nominal << " worst " << g.error_worst << " pcs " << g.pieces
                        << " RG " << g.values[0] << " RD " << g.values[1] << " RS1 " << g.values[2] << " RS2 "
                        << g.values[3] << " I " << g.nominal.bias_current_a);
    }
  }
  REQUIRE(guided.candidates.size() == 10);
  for (std::size_t i = 0; i < 10; ++i) {
    CAPTURE(i);
    CHECK(guided.candidates[i].score == doctest::Approx(all[i].score).epsilon(1e-9));
  }
  CHECK(guided.candidates[0].values.v == all[0].values.v);
}

namespace {

// Calls visit() with v holding every combination of the values rs in the roles `slots` (an
// optional role also absent, 0), the other roles as v has them.
template <class Visit>
void for_every_combination(std::span<const stages::Role> roles, const std::vector<std::size_t>& slots,
                           const std::vector<double>& rs, stages::Values& v, const Visit& visit, std::size_t k = 0) {
  if (k == slots.size()) {
    visit();
    return;
  }
  const std::size_t r = slots[k];
  for (double x : rs) {
    v[r] = x;
    for_every_combination(roles, slots, rs, v, visit, k + 1);
  }
  if (roles[r].optional) {
    v[r] = 0;
    for_every_combination(roles, slots, rs, v, visit, k + 1);
  }
}

// Every combination of the shelf's single resistors in every resistor role of the request's
// one topology (optional roles also absent), each drafted and assessed as the search does,
// listed by the search's rule (score, then pieces; one-resistor variants of a better design
// left out). The best `n`.
std::vector<synth::Candidate> enumerate_every(const synth::Spec& spec, const synth::Inventory& inv, std::size_t n) {
  synth::Shelf::Options so;
  so.combine = 1;
  const synth::Shelf shelf(inv.parts, so);
  const auto* topo = stages::find_topology(spec.topologies.at(0));
  REQUIRE(topo != nullptr);
  const synth::StageBuilder builder(spec, shelf, *topo, inv.devices.at(0), nullptr, 10);
  std::vector<double> rs;
  for (const auto& c : shelf.resistors()) rs.push_back(c.nominal);
  const auto roles = topo->roles();
  std::vector<std::size_t> slots;
  for (std::size_t i = 0; i < roles.size(); ++i)
    if (roles[i].kind == 'R') slots.push_back(i);
  synth::SearchStats stats;
  std::vector<synth::Candidate> all;
  stages::Values v;
  for_every_combination(roles, slots, rs, v, [&] {
    synth::Candidate c;
    if (builder.complete(v, c, stats) && builder.assess(c, stats)) all.push_back(std::move(c));
  });
  std::stable_sort(all.begin(), all.end(), [](const auto& a, const auto& b) {
    return a.score != b.score ? a.score < b.score : a.pieces < b.pieces;
  });
  std::vector<synth::Candidate> listed;
  for (auto& c : all) {
    if (listed.size() >= n) break;
    if (std::none_of(listed.begin(), listed.end(), [&](const auto& k) { return synth::is_variant(k, c); }))
      listed.push_back(std::move(c));
  }
  return listed;
}

// A small shelf for topologies with five resistor roles: E3 values 100 ohm..100k and 1M.
synth::Inventory e3_shelf(const devices::DeviceRecord& d) {
  synth::Inventory inv = test::small_shelf(10, {d});
  std::erase_if(inv.parts, [](const store::Part& p) {
    if (p.kind != store::PartKind::resistor) return false;
    const double m = p.value / std::pow(10.0, std::floor(std::log10(p.value) + 1e-9));
    return !(std::abs(m - 1.0) < 1e-6 || std::abs(m - 2.2) < 1e-6 || std::abs(m - 4.7) < 1e-6);
  });
  return inv;
}

}  // namespace

TEST_CASE("the top designs against a brute-force enumeration, for varied requests and topologies") {
  // The search proposes from the design equations; the enumeration tries everything. Both
  // share the evaluation (StageBuilder), so this checks the search's coverage: with and
  // without a band and a swing, a follower into a heavy load, a divider-biased stage,
  // collector-to-base feedback. Where `slack` is 0 the guided top designs (up to 10) are the
  // enumeration's; elsewhere the guided best is within `slack` score points of the
  // enumeration's best and the gap rank by rank within twice that on average (a point is a
  // per cent of gain error or one piece). The slack is what the search is known to miss there
  // (the test prints the measured gaps): designs its equations do not aim at, such as a
  // divider far stiffer than the rule of thumb with the emitter at two thirds of the supply.
  struct Case {
    const char* what;
    const char* topology;
    bool jfet;
    double gain, load, supply, zin;
    bool band;
    double swing_vpp;  // 0: none
    bool e3;           // the E3 shelf (five resistor roles), else E6
    double slack;
  };
  const Case cases[] = {
      {"JFET follower, band and swing", "jfet-follower", true, 0.8, 10e3, 12, 100e3, true, 0.3, false, 0},
      {"JFET common source, no band, no swing", "jfet-cs-self", true, 4, 10e3, 15, 100e3, false, 0, false, 0},
      {"BJT follower into 600 ohm, swing, no band", "bjt-follower", false, 0.95, 600, 9, 10e3, false, 2.0, false, 0.75},
      {"BJT common emitter with a divider, no band or swing", "bjt-ce-divider", false, 8, 10e3, 12, 5e3, false, 0, true,
       2.0},
      {"BJT common emitter with a divider into 1k, band and swing", "bjt-ce-divider", false, 5, 1e3, 15, 3e3, true, 2.0,
       true, 2.0},
      {"collector-to-base feedback, band", "bjt-ce-shunt", false, 6, 10e3, 12, 2e3, true, 0, true, 2.5},
  };
  for (const Case& k : cases) {
    CAPTURE(std::string(k.what));
    const auto dev = k.jfet ? test::njfet() : test::npn();
    synth::Inventory inv = k.e3 ? e3_shelf(dev) : test::small_shelf(10, {dev});
    synth::Spec spec = test::basic_spec(k.gain);
    spec.topologies = {k.topology};
    spec.load_ohm = k.load;
    spec.supply_lo_v = spec.supply_hi_v = k.supply;
    spec.zin_min_ohm = k.zin;
    spec.source_ohm = 0;
    if (!k.band) spec.band_hz.reset();
    spec.swing_vpp.reset();
    if (k.swing_vpp > 0) spec.swing_vpp = k.swing_vpp;
    spec.gain_tol = 0.25;
    spec.stages_max = 1;
    spec.combine = 1;
    spec.top = 10;
    spec.mc_samples = 0;
    const auto guided = synth::design(spec, inv).candidates;
    const auto every = enumerate_every(spec, inv, 10);
    REQUIRE(every.size() >= 3);  // the request is one the shelf can answer several ways
    double best_gap = 0, largest_gap = 0;
    bool ok = guided.size() == every.size();
    double gap_sum = 0;
    for (std::size_t i = 0; i < std::min(every.size(), guided.size()); ++i) {
      const double gap = guided[i].score - every[i].score;
      if (i == 0) best_gap = gap;
      largest_gap = std::max(largest_gap, gap);
      gap_sum += gap;
      if (k.slack == 0)
        ok = ok && std::abs(gap) <= 1e-9 * every[i].score && (i > 0 || guided[0].values.v == every[0].values.v);
    }
    const double mean_gap = gap_sum / static_cast<double>(every.size());
    if (k.slack > 0) ok = ok && best_gap <= k.slack && mean_gap <= 2 * k.slack;
    MESSAGE(std::string(k.what) << ": " << guided.size() << " of " << every.size() << " found; best " << every[0].score
                                << " points, guided best " << best_gap << " behind, mean gap " << mean_gap
                                << ", largest " << largest_gap);
    if (!ok) {
      auto show = [](const char* who, const synth::Candidate& c) {
        std::string v;
        for (std::size_t r = 0; r < c.topology->roles().size(); ++r)
          v += std::string(c.topology->roles()[r].name) + "=" +
               units::format_value(c.values[r],
                                   c.topology->roles()[r].kind == 'R' ? units::Unit::ohm : units::Unit::farad) +
               " ";
        MESSAGE(std::string(who) << " " << c.score << " (worst " << c.error_worst << ", " << c.pieces << " pieces) "
                                 << v);
      };
      for (const auto& c : every) show("every", c);
      for (const auto& c : guided) show("guided", c);
    }
    CHECK(ok);
  }
}

namespace {

// Every combination of the shelf's single resistors in the `free` roles of the guided best
// design of a pair request (an optional role also absent), its other resistors held,
// drafted and assessed as the search does: the best score found, and how many were assessed.
std::pair<double, int> best_with_roles_free(const synth::Spec& spec, const synth::Inventory& inv,
                                            const synth::Candidate& best, const std::vector<std::string>& free) {
  synth::Shelf::Options so;
  so.combine = 1;
  const synth::Shelf shelf(inv.parts, so);
  const auto* topo = best.topology;
  auto record = [&](const std::string& name) {
    return *std::find_if(inv.devices.begin(), inv.devices.end(), [&](const auto& d) { return d.name == name; });
  };
  const auto q1 = record(best.device.name), q2 = record(best.device2->name);
  const synth::StageBuilder builder(spec, shelf, *topo, q1, nullptr, 10, false, &q2, 10);
  std::vector<double> rs;
  for (const auto& c : shelf.resistors()) rs.push_back(c.nominal);
  synth::SearchStats stats;
  double every_best = 1e300;
  int assessed = 0;
  stages::Values v;
  const auto roles = topo->roles();
  for (std::size_t r = 0; r < roles.size(); ++r)
    if (roles[r].kind == 'R') v[r] = best.values[r];
  std::vector<std::size_t> slots;
  for (const auto& name : free) slots.push_back(topo->role_index(name));
  for_every_combination(roles, slots, rs, v, [&] {
    synth::Candidate cand;
    if (!builder.complete(v, cand, stats) || !builder.assess(cand, stats)) return;
    ++assessed;
    every_best = std::min(every_best, cand.score);
  });
  return {every_best, assessed};
}

}  // namespace

TEST_CASE("a feedback pair's best design against every feedback leg, and every bias network, around it") {
  // A pair has seven or eight resistor roles: every combination of the E6 shelf in all of them
  // is beyond a test's time. Around the guided best, every combination of the shelf's single
  // resistors is tried in one group of roles with the others held: the feedback leg (what the
  // design equations choose most freely: the gain ratio, the DC gain, Q2's current), then the
  // bias network (Q1's divider or gate resistors, and its load). Each drafted and assessed as
  // the search does; none may beat the guided best by more than a point (a per cent of gain
  // error or one piece).
  struct Case {
    const char* what;
    const char* topology;
    bool jfet;
    double gain, zin;
    std::vector<std::string> free;
  };
  const std::vector<Case> cases = {
      {"bipolar pair, feedback leg", "bjt-fb-pair", false, 20, 20e3, {"RC2", "RF", "RE1", "RE2"}},
      {"bipolar pair, bias network", "bjt-fb-pair", false, 20, 20e3, {"RB1", "RB2", "RC1"}},
      {"JFET-input pair, feedback leg", "jfet-fb-pair", true, 10, 200e3, {"RC2", "RF", "RS1", "RS2"}},
      {"JFET-input pair, gate and drain", "jfet-fb-pair", true, 10, 200e3, {"RG1", "RG2", "RD"}},
  };
  for (const Case& k : cases) {
    CAPTURE(std::string(k.what));
    const synth::Inventory inv = k.jfet ? test::small_shelf(10, {test::njfet(), test::pnp()})
                                        : test::small_shelf(10, {test::npn(), test::pnp()});
    synth::Spec spec = test::basic_spec(k.gain);
    spec.topologies = {k.topology};
    spec.zin_min_ohm = k.zin;
    spec.source_ohm = 0;
    spec.swing_vpp.reset();
    spec.gain_tol = 0.25;
    spec.stages_max = 1;
    spec.combine = 1;
    spec.top = 5;
    spec.mc_samples = 0;
    const auto guided = synth::design(spec, inv).candidates;
    REQUIRE_FALSE(guided.empty());
    const synth::Candidate& best = guided.front();
    REQUIRE(best.device2.has_value());
    const auto [every_best, assessed] = best_with_roles_free(spec, inv, best, k.free);
    MESSAGE(std::string(k.what) << ": guided best " << best.score << " points (worst error " << best.error_worst << ", "
                                << best.pieces << " pieces, Q1 " << best.device.name << ", Q2 " << best.device2->name
                                << "); " << assessed << " designs assessed, best " << every_best << " points");
    REQUIRE(assessed >= 3);
    // Measured on the bipolar leg: 25.13 guided against 24.94 (a leg of 1k, 6k8, 330 and 3k3
    // at Q2's 4 mA); before the design equations offered RF at twice Q1's current and Q2 at
    // 10 mA into a light load, 30.4 against 25.7.
    CHECK(best.score <= every_best + 1.0);
  }
}

TEST_CASE("ngspice at the device corners lands inside the reported worst-case ranges") {
  // Reference: ngspice (Debian package) on the exported netlist of each top candidate, with
  // the device at each corner of its spread and every part at nominal.
  synth::Inventory inv = test::small_shelf(10, {test::njfet(), test::npn()});
  synth::Spec spec = test::basic_spec(6);
  spec.top = 3;
  const auto r = synth::design(spec, inv);
  REQUIRE_FALSE(r.candidates.empty());
  for (const auto& c : r.candidates) {
    CAPTURE(c.id);
    const auto spread = synth::spread_of(c);
    auto pieces = spread.corners();
    pieces.push_back(spread.nominal());
    for (const auto& f : pieces) {
      CAPTURE(f.tag);
      const stages::Transistor q = synth::make_transistor(spread, f, devices::kNominalCelsius);
      const auto net = c.topology->netlist(c.values, q, c.conditions);
      circuit::SpiceOptions o;
      o.analyses = {".control", "op", "print i(vdd)", "ac dec 20 100 10k", "meas ac g1k find vm(out) at=1k", ".endc"};
      const auto run = test::run_ngspice(circuit::to_spice(net, o));
      const double gain = run.get("g1k");
      const double supply_i = std::abs(run.get("i(vdd)"));
      // 1 % slack for the agreement of the models themselves (the analysis-engine tests).
      const double gmin = std::min(std::abs(c.worst.gain.min), std::abs(c.worst.gain.max));
      const double gmax = std::max(std::abs(c.worst.gain.min), std::abs(c.worst.gain.max));
      CHECK(gain >= gmin * 0.99);
      CHECK(gain <= gmax * 1.01);
      CHECK(supply_i >= c.worst.supply_current.min * 0.99);
      CHECK(supply_i <= c.worst.supply_current.max * 1.01);
      if (f.tag == "nominal") {
        // Nominal figures agree with ngspice as in the analysis engine: gain within 2 %.
        CHECK(gain == doctest::Approx(std::abs(c.nominal.gain)).epsilon(0.02));
        CHECK(supply_i == doctest::Approx(c.nominal.supply_current_a).epsilon(0.01));
      }
    }
  }
}

TEST_CASE("nonsense requests are refused with a clear error naming the field") {
  synth::Inventory inv = test::small_shelf(10, {test::njfet()});
  auto refused = [&](synth::Spec s, const std::string& field) {
    try {
      synth::design(s, inv);
      FAIL("accepted: " << field);
    } catch (const InputError& e) {
      CHECK(std::string(e.what()).find(field) != std::string::npos);
    }
  };
  auto s = test::basic_spec(5);
  s.load_ohm = -10e3;
  refused(s, "load");
  s = test::basic_spec(5);
  s.band_hz = std::make_pair(20e3, 20.0);
  refused(s, "band");
  s = test::basic_spec(5);
  s.copies = 0;
  refused(s, "copies");
  s = test::basic_spec(std::nan(""));
  refused(s, "gain");
  s = test::basic_spec(5);
  s.topologies = {"jfet-cascode"};
  refused(s, "jfet-cascode");
  s = test::basic_spec(5);
  s.devices = {"XJ-9"};
  refused(s, "XJ-9");
  s = test::basic_spec(5);
  s.supply_lo_v = 9.6;
  s.supply_hi_v = 7;
  refused(s, "supply");
}

TEST_CASE("op-amp types go to the op-amp stages, transistors to the others; split stages only on a split supply") {
  // The demo shelf holds three op-amp types, stocked (data-demo/).
  const synth::Inventory inv = test::demo_shelf();
  REQUIRE(std::count_if(inv.devices.begin(), inv.devices.end(),
                        [](const auto& d) { return devices::is_opamp(d.kind); }) == 3);
  auto spec = test::basic_spec(10);
  auto count = [&](const synth::Spec& s, bool opamp, stages::SupplyForm form) {
    int n = 0;
    for (const auto& j : synth::detail::make_jobs(s, inv)) {
      CHECK(j.topology->accepts(j.device->kind));
      if (j.device2) CHECK(devices::is_bjt(j.device2->kind));
      if (devices::is_opamp(j.device->kind) == opamp && j.topology->supply_form() == form) ++n;
    }
    return n;
  };
  CHECK(count(spec, true, stages::SupplyForm::single) == 9);  // three types, three single-supply stages
  CHECK(count(spec, true, stages::SupplyForm::split) == 0);
  CHECK(count(spec, false, stages::SupplyForm::single) > 0);
  spec.split_supply = true;
  CHECK(count(spec, true, stages::SupplyForm::split) == 9);
  CHECK(count(spec, true, stages::SupplyForm::single) == 9);  // one rail of a split supply serves as well
  CHECK(count(spec, false, stages::SupplyForm::single) > 0);
  spec.devices = {"SA-210"};
  for (const auto& j : synth::detail::make_jobs(spec, inv)) CHECK(j.device->name == "SA-210");
}

TEST_CASE("the quantity pool counts an op-amp type in channels, a transistor type in pieces") {
  // Counting rules of the bench (common practice): an op-amp stock line counts packages, and
  // each op-amp stage of each copy takes one channel of a package; every stage of one type
  // in a chain shares its packages. A transistor is a piece per stage and copy.
  devices::DeviceRecord quad;
  quad.name = "SA-414";
  quad.kind = devices::DeviceKind::opamp;
  quad.opamp.channels = 4;
  devices::DeviceRecord dual = quad;
  dual.name = "SA-212";
  dual.opamp.channels = 2;
  auto line = [](std::int64_t id, store::PartKind kind, const std::string& device, int qty, int reserved) {
    store::Part p;
    p.id = id;
    p.kind = kind;
    p.device = device;
    p.qty = qty;
    p.reserved = reserved;
    return p;
  };
  synth::Inventory inv;
  inv.devices = {test::njfet("TJ-1"), quad, dual};
  inv.parts = {line(1, store::PartKind::njfet, "TJ-1", 3, 1), line(2, store::PartKind::opamp, "SA-414", 1, 0),
               line(3, store::PartKind::opamp, "SA-212", 2, 1), line(4, store::PartKind::opamp, "SA-212", 2, 0)};
  const auto units = synth::detail::stocked_units(inv);
  CHECK(units.at("TJ-1") == 2);    // pieces available: 3 on hand, 1 reserved
  CHECK(units.at("SA-414") == 4);  // one quad package: four channels
  CHECK(units.at("SA-212") == 6);  // three dual packages available: six channels
  // The search's jobs count a transistor in pieces, an op-amp in channels.
  const auto jobs = synth::detail::make_jobs(test::basic_spec(10), inv);
  REQUIRE_FALSE(jobs.empty());
  for (const auto& j : jobs) CHECK(j.device_available == units.at(j.device->name));

  auto stage = [](const devices::DeviceRecord& d) {
    synth::Candidate c;
    c.device = d;
    return c;
  };
  // One op-amp stage: one channel per copy. Five copies of a dual: five channels, which three
  // packages hold (one channel spare); one package short of six copies' worth is not.
  CHECK(synth::detail::device_units_needed(stage(dual), 5).at("SA-212") == 5);
  CHECK(synth::detail::device_units_needed(stage(dual), 5).at("SA-212") <= units.at("SA-212"));
  CHECK(synth::detail::device_units_needed(stage(dual), 7).at("SA-212") > units.at("SA-212"));
  // A chain of two stages of the quad type, two copies: four channels, the one package.
  synth::Candidate chain;
  chain.stages = {stage(quad), stage(quad)};
  chain.device = quad;
  CHECK(synth::detail::device_units_needed(chain, 2).at("SA-414") == 4);
  CHECK(synth::detail::device_units_needed(chain, 2).at("SA-414") <= units.at("SA-414"));
  CHECK(synth::detail::device_units_needed(chain, 3).at("SA-414") > units.at("SA-414"));
  // A transistor stage with a pair's Q2 of its own type: two pieces per copy.
  synth::Candidate pair = stage(test::npn("TQ-1"));
  pair.device2 = test::npn("TQ-1");
  CHECK(synth::detail::device_units_needed(pair, 3).at("TQ-1") == 6);
}

TEST_CASE("a sound but impossible request gives no candidate, the binding constraint and how close it came") {
  synth::Inventory inv = test::small_shelf(10, {test::njfet()});
  auto s = test::basic_spec(400);  // far beyond one JFET stage into 10k
  s.topologies = {"jfet-cs-self", "jfet-cs-divider"};
  s.stages_max = 1;  // single stages only (a chain of two reaches it: chain_test)
  const auto r = synth::design(s, inv);
  CHECK(r.candidates.empty());
  CHECK(r.diagnosis.binding == "gain");
  CHECK(r.diagnosis.detail.find("largest any stocked device reaches") != std::string::npos);
}

TEST_CASE("a design that needs a value the shelf lacks comes with the purchase that makes it feasible") {
  // Only a few resistor values: the self-biased stage cannot be made without buying one.
  synth::Inventory inv;
  inv.devices.push_back(test::njfet());
  inv.parts = {test::resistor(1, 1e6, 5), test::resistor(2, 10, 5), test::capacitor(3, 1e-6, 5, 63, "film"),
               test::capacitor(4, 220e-6, 5, 25, "electrolytic"), test::transistor(5, inv.devices[0], 5)};
  auto s = test::basic_spec(3);
  s.topologies = {"jfet-cs-self"};
  const auto r = synth::design(s, inv);
  CHECK(r.candidates.empty());
  REQUIRE_FALSE(r.diagnosis.suggestions.empty());
  CHECK(r.diagnosis.suggestions.front().find("buy") == 0);
  REQUIRE(r.diagnosis.with_purchases);
  CHECK(r.diagnosis.with_purchases->purchases >= 1);
}

TEST_CASE("a measured piece narrows the spread, and the ranking shows it") {
  synth::Inventory inv = test::small_shelf(10, {test::njfet()});
  devices::MeasuredPiece piece;
  piece.label = "J5";
  piece.device = "TJ-1";
  piece.idss_a = 4.1e-3;
  piece.vp_v = -1.8;
  piece.uncertainty = 0.03;
  inv.pieces.push_back(piece);
  auto s = test::basic_spec(4);
  s.topologies = {"jfet-cs-self"};
  const auto spread = synth::design(s, inv);
  s.piece = "J5";
  const auto measured = synth::design(s, inv);
  REQUIRE_FALSE(measured.candidates.empty());
  REQUIRE_FALSE(spread.candidates.empty());
  CHECK(measured.candidates.front().error_worst < spread.candidates.front().error_worst);
  CHECK(measured.candidates.front().score < spread.candidates.front().score);
}

TEST_CASE("designs alike in score and pieces are listed by the lesser supply current") {
  // The demo's request on the demo shelf: its op-amp stages take a reference divider at half
  // the supply, and 100k/100k scores the same as 10k/10k (the divider leaves the gain, the
  // band and the swing as they are; two resistors either way) while drawing a tenth of the
  // current. Common practice: of two otherwise equal circuits, build the one that draws less.
  synth::Spec s = test::basic_spec(10);
  s.zin_min_ohm = 100e3;
  s.source_ohm = 1e3;
  s.swing_vpp = 2;
  s.max_thd = 0.01;
  s.mc_samples = 0;
  s.top = 10;
  const auto r = synth::design(s, test::demo_shelf());
  REQUIRE(r.candidates.size() >= 2);
  int ties = 0;
  for (std::size_t i = 1; i < r.candidates.size(); ++i) {
    const auto &a = r.candidates[i - 1], &b = r.candidates[i];
    if (std::llround(a.score * 1e6) != std::llround(b.score * 1e6) || a.pieces != b.pieces) continue;
    ++ties;
    CAPTURE(i);
    CHECK(a.nominal.supply_current_a <= b.nominal.supply_current_a + 1e-9);
  }
  CHECK(ties >= 1);  // the request has such ties (else the check above says nothing)
}

TEST_CASE("the Monte Carlo yield is reproducible for a seed") {
  synth::Inventory inv = test::small_shelf(10, {test::njfet()});
  auto s = test::basic_spec(4);
  s.topologies = {"jfet-cs-self"};
  s.mc_samples = 200;
  const auto a = synth::design(s, inv), b = synth::design(s, inv);
  REQUIRE_FALSE(a.candidates.empty());
  CHECK(a.candidates.front().yield == b.candidates.front().yield);
  // And it is the share an independent sampling of the same builds finds
  // (tests/synth/yield_check.hpp): N = 200 program builds against M = 4000 own builds, the
  // standard error of the difference sqrt(p (1 - p) (1/N + 1/M)) <= 0.036; 0.15 is four of them.
  for (const auto& c : a.candidates) {
    const double own = test::own_yield(c, s, 4000);
    CAPTURE(own);
    CHECK(std::abs(*c.yield - own) <= 0.15);
  }
}

// The ranked search (RankedSearch, ranked.cpp): candidates handed out in rank order while the
// corner pass runs only as far as the order needs, against every chosen draft assessed and
// sorted (run_jobs), on the demo shelf.
namespace {

struct RankRequest {
  const char* what;
  double gain, load, supply_lo, supply_hi, zin;
  bool band;
  double swing_vpp;  // 0: none
  std::vector<std::string> topologies;
};

synth::Spec rank_spec(const RankRequest& r) {
  synth::Spec spec = test::basic_spec(r.gain);
  spec.load_ohm = r.load;
  spec.supply_lo_v = r.supply_lo;
  spec.supply_hi_v = r.supply_hi;
  spec.zin_min_ohm = r.zin;
  if (!r.band) spec.band_hz.reset();
  spec.swing_vpp.reset();
  if (r.swing_vpp > 0) spec.swing_vpp = r.swing_vpp;
  spec.topologies = r.topologies;
  spec.stages_max = 1;
  spec.mc_samples = 0;
  return spec;
}

// The same build: topology, devices and values (a draft not yet assessed has no score).
bool same_build(const synth::Candidate& a, const synth::Candidate& b) {
  return a.topology == b.topology && a.device.name == b.device.name &&
         (a.device2 ? a.device2->name : "") == (b.device2 ? b.device2->name : "") && a.values.v == b.values.v;
}

bool same_design(const synth::Candidate& a, const synth::Candidate& b) {
  return same_build(a, b) && a.pieces == b.pieces &&
         std::abs(a.score - b.score) <= 1e-9 * std::max(1.0, std::abs(a.score));
}

}  // namespace

TEST_CASE("the ranked search hands out the order a full sort gives, assessing only what the order needs") {
  const synth::Inventory inv = test::demo_shelf();
  synth::Shelf::Options so;
  const synth::Shelf shelf(inv.parts, so);
  // One supply (the quick estimates are floors), a supply range (only the nominal error is),
  // a band and a swing, a feedback pair.
  const RankRequest requests[] = {
      {"gain 10, one supply", 10, 10e3, 12, 12, 100e3, false, 0, {"bjt-ce-divider", "jfet-cs-self"}},
      {"gain 8, a battery's range, band", 8, 10e3, 7, 9.6, 47e3, true, 0, {"bjt-ce-divider", "bjt-ce-shunt"}},
      {"gain 10, band and swing, pairs", 10, 10e3, 12, 12, 100e3, true, 2, {"bjt-fb-pair", "bjt-ce-divider"}},
  };
  for (const RankRequest& r : requests) {
    CAPTURE(std::string(r.what));
    const synth::Spec spec = rank_spec(r);
    const std::vector<synth::detail::Job> jobs = synth::detail::make_jobs(spec, inv);
    synth::SearchStats every_stats;
    const std::vector<synth::Candidate> every = synth::detail::run_jobs(spec, shelf, jobs, every_stats, {});
    REQUIRE(every.size() >= 12);

    // The first dozen, one at a time: the full sort's, with fewer drafts assessed.
    synth::detail::RankedSearch lazy(spec, shelf, jobs);
    for (std::size_t k = 0; k < 12; ++k) {
      CAPTURE(k);
      const auto id = lazy.at(k);
      REQUIRE(id);
      CHECK(same_design(lazy.candidate(*id), every[k]));
    }
    MESSAGE(std::string(r.what) << ": " << lazy.assessed() << " of " << lazy.chosen()
                                << " chosen drafts assessed for 12");
    CHECK(lazy.assessed() < lazy.chosen());

    // Every job's choice made whole first (NOTES 5 in ranked.cpp): the same first dozen. The
    // lazy search chose no more drafts and spent no more evaluations; with the quick
    // estimates floors (one supply) it made its choices only part of the way.
    synth::detail::RankedSearch whole(spec, shelf, jobs);
    whole.choose_all();
    const std::size_t chosen_whole = whole.chosen();
    for (std::size_t k = 0; k < 12; ++k) {
      CAPTURE(k);
      const auto id = whole.at(k);
      REQUIRE(id);
      CHECK(same_design(whole.candidate(*id), every[k]));
    }
    synth::SearchStats lazy_part, whole_part;
    lazy.tally(lazy_part);
    whole.tally(whole_part);
    MESSAGE(std::string(r.what) << ": " << lazy.chosen() << " drafts chosen of " << chosen_whole << ", "
                                << lazy_part.evaluations << " evaluations against " << whole_part.evaluations);
    CHECK(lazy.chosen() <= chosen_whole);
    CHECK(lazy_part.evaluations <= whole_part.evaluations);
    if (r.supply_lo == r.supply_hi) CHECK(lazy.chosen() < chosen_whole);

    // Passing over the variants of the first (as the list does once it is shown): the full
    // sort without them, and those never assessed.
    synth::detail::RankedSearch skipping(spec, shelf, jobs);
    const synth::detail::RankedSearch::PassOver variant_of_first = [&](const synth::Candidate& c) {
      return synth::is_variant(every[0], c) && !same_build(every[0], c);
    };
    std::vector<const synth::Candidate*> expected;
    for (const auto& c : every)
      if (!variant_of_first(c)) expected.push_back(&c);
    REQUIRE(expected.size() < every.size());  // the first has variants among the candidates
    for (std::size_t k = 0; k < std::min<std::size_t>(12, expected.size()); ++k) {
      CAPTURE(k);
      const auto id = skipping.at(k, nullptr, variant_of_first);
      REQUIRE(id);
      CHECK(same_design(skipping.candidate(*id), *expected[k]));
    }

    // The best of each first device: the full sort's first of that device.
    synth::detail::RankedSearch by_device(spec, shelf, jobs);
    for (const auto& job : jobs) {
      const std::string& name = job.device->name;
      CAPTURE(name);
      const auto first =
          std::find_if(every.begin(), every.end(), [&](const synth::Candidate& c) { return c.device.name == name; });
      const auto id = by_device.at(0, &name);
      REQUIRE(id.has_value() == (first != every.end()));
      if (id) CHECK(same_design(by_device.candidate(*id), *first));
    }

    // The counts: with every chosen draft assessed, those of the full search.
    synth::SearchStats lazy_stats;
    CHECK(lazy.all().size() == every.size());
    lazy.tally(lazy_stats);
    lazy.settle(lazy_stats);
    CHECK(lazy.assessed() == lazy.chosen());
    CHECK(lazy_stats.proposals == every_stats.proposals);
    CHECK(lazy_stats.failures == every_stats.failures);
    CHECK(lazy_stats.corner_failures == every_stats.corner_failures);
    CHECK(lazy_stats.corner_examples == every_stats.corner_examples);
  }
}
