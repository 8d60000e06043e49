// Chains of stages against ngspice (Debian package ngspice) run on the whole chain's netlist:
// the fast cascade (each stage evaluated into the next stage's input impedance, gains
// multiplied) within 3 % of ngspice's mid-band gain, the exact solver on the chain's circuit
// within 0.5 %; operating points of every transistor node within 0.1 %; and the netlist
// conventions (one coupling capacitor between stages, designators by hundreds).
#include <doctest/doctest.h>

#include <cmath>
#include <fmt/format.h>
#include <string>
#include <vector>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/stages/exact.hpp"
#include "stage_bench.hpp"
#include "support/ngspice.hpp"

namespace shelfstage::test {

namespace {

using stages::ChainStage;

struct ChainCase {
  std::string label;
  std::vector<ChainStage> stages;
  Conditions c;
};

/// One piece of a record: its nominal.
Transistor nominal_piece(const devices::DeviceRecord& r) {
  const devices::DeviceSpread s(r);
  return devices::is_jfet(r.kind) ? jfet_piece(s, s.nominal()) : bjt_piece(s, s.nominal());
}

/// Designs each stage (stage_bench's design rules) into the input impedance of the next,
/// from the load back, and joins them as a chain does (no input capacitor after the first).
ChainCase make_chain(const std::string& label, const std::vector<std::pair<std::string, devices::DeviceRecord>>& plan,
                     double supply, double load, double source, const Design& d = {}) {
  ChainCase cc;
  cc.label = label;
  cc.c.supply_v = supply;
  cc.c.load_ohm = load;
  cc.c.source_ohm = source;
  std::vector<ChainStage> out(plan.size());
  double next_zin = load;
  for (std::size_t k = plan.size(); k-- > 0;) {
    const Topology* t = stages::find_topology(plan[k].first);
    REQUIRE(t != nullptr);
    Conditions ck = cc.c;
    ck.load_ohm = next_zin;
    ck.source_ohm = k == 0 ? source : 0.0;
    const Transistor q = nominal_piece(plan[k].second);
    const double hfe = plan[k].second.bjt.hfe.typ.value_or(0);
    StageCase sc = design_stage(*t, q, ck, d, hfe);
    if (k > 0) sc.values[stages::input_coupling_role(*t)] = stages::kLinkedCin;
    const Performance p = t->evaluate(sc.values, q, ck, stages::Detail::core);
    REQUIRE_MESSAGE(p.valid, label, " stage ", k + 1, ": ", p.problem);
    REQUIRE_MESSAGE(p.active, label, " stage ", k + 1, ": ", p.problem);
    next_zin = p.zin_ohm;
    out[k] = {t, sc.values, q};
  }
  cc.stages = out;
  return cc;
}

struct SpiceChain {
  double gain = 0;  ///< signed, at f_mid
  std::map<std::string, double> nodes;
  double supply_a = 0;
};

SpiceChain spice_chain(const ChainCase& cc, double f_mid_hz) {
  const circuit::Circuit net = stages::chain_netlist(cc.stages, cc.c);
  std::vector<std::string> nodes;
  for (const auto& el : net.elements())
    if (el.c.kind == circuit::ElementKind::jfet || el.c.kind == circuit::ElementKind::bjt)
      for (const auto pin : el.c.pins) {
        const std::string n = circuit::spice_net(net, pin);
        if (n != "0" && n != "vdd" && std::find(nodes.begin(), nodes.end(), n) == nodes.end()) nodes.push_back(n);
      }
  std::vector<std::string> a = {".control", "op"};
  std::string pr = "print i(vdd)";
  for (const auto& n : nodes) pr += " v(" + n + ")";
  a.push_back(pr);
  a.push_back("ac dec 20 1 1e7");
  a.push_back(fmt::format("meas ac gmid find vm(out) at={:.6g}", f_mid_hz));
  a.push_back(fmt::format("meas ac gre find vr(out) at={:.6g}", f_mid_hz));
  a.push_back(".endc");
  circuit::SpiceOptions o;
  o.title = cc.label;
  o.analyses = a;
  const SpiceRun r = run_ngspice(circuit::to_spice(net, o));
  CHECK_MESSAGE(r.error_lines().empty(), cc.label, ": ngspice complained:\n", r.output);
  SpiceChain s;
  s.gain = (r.get("gre") < 0 ? -1.0 : 1.0) * r.get("gmid");
  s.supply_a = std::abs(r.get("i(vdd)"));
  for (const auto& n : nodes) s.nodes[n] = r.get("v(" + n + ")");
  return s;
}

double rel(double got, double ref) { return std::abs(got - ref) / std::abs(ref); }

}  // namespace

TEST_CASE("chain netlist: one coupling capacitor between stages, designators by hundreds, shared supply") {
  const ChainCase cc =
      make_chain("follower > cs", {{"jfet-follower", njfet_record()}, {"jfet-cs-self", njfet_record()}}, 12, 10e3, 0);
  const circuit::Circuit net = stages::chain_netlist(cc.stages, cc.c);
  // The bench once: one supply, one signal source, one load.
  int sources = 0, loads = 0;
  for (const auto& el : net.elements()) {
    if (el.c.kind == circuit::ElementKind::vsource) ++sources;
    if (el.c.role == "load") ++loads;
  }
  CHECK(sources == 2);
  CHECK(loads == 1);
  CHECK(net.find("Q101") != nullptr);
  CHECK(net.find("Q201") != nullptr);
  CHECK(net.find("RL") != nullptr);
  // Stage 2's input capacitor is left out: the follower's COUT drives the gate network.
  int cin = 0;
  for (const auto& el : net.elements())
    if (el.c.role == "CIN") ++cin;
  CHECK(cin == 1);
  const auto* q2 = net.find("Q201");
  CHECK(net.net_name(q2->c.pins[1]) == "link1");
  CHECK_NOTHROW(net.validate());
  CHECK(stages::chain_designator(0, "R3") == "R103");
  CHECK(stages::chain_designator(2, "C1") == "C301");
  CHECK(stages::chain_net(1, 3, "in") == "link1");
  CHECK(stages::chain_net(1, 3, "out") == "link2");
  CHECK(stages::chain_net(2, 3, "out") == "out");
  CHECK(stages::chain_net(1, 3, "drain") == "drain2");
}

TEST_CASE("chain netlist: the load's capacitance (a cable) sits across the load at the chain's output") {
  // It once sat on the first stage's output (link1), where no cable is: the figures the exact
  // solver gave for a chain into a cable were those of another circuit.
  ChainCase cc =
      make_chain("follower > cs", {{"jfet-follower", njfet_record()}, {"jfet-cs-self", njfet_record()}}, 12, 10e3, 0);
  cc.c.load_farads = 10e-9;
  const circuit::Circuit net = stages::chain_netlist(cc.stages, cc.c);
  int caps = 0;
  for (const auto& el : net.elements())
    if (el.c.role == stages::kRoleLoadCapacitance) {
      ++caps;
      const std::string a = net.net_name(el.c.pins[0]), b = net.net_name(el.c.pins[1]);
      CHECK(((a == "out" && b == "0") || (a == "0" && b == "out")));
    }
  CHECK(caps == 1);
}

TEST_CASE("chain netlist: stages of both polarities share one supply and one ground, every node on the rail") {
  for (const bool negative : {false, true}) {
    CAPTURE(negative);
    ChainCase cc = make_chain("n > p", {{"jfet-cs-self", njfet_record()}}, 12, 10e3, 0);
    const ChainCase p = make_chain("p", {{"bjt-follower", pnp_record()}}, 12, 10e3, 0);
    cc.stages.push_back(p.stages.front());
    cc.c.negative_rail = negative;
    const circuit::Circuit net = stages::chain_netlist(cc.stages, cc.c);
    CHECK_NOTHROW(net.validate());
    int supplies = 0;
    for (const auto& el : net.elements())
      if (el.c.role == "supply") {
        ++supplies;
        CHECK(el.c.value == doctest::Approx(negative ? -12.0 : 12.0));
      }
    CHECK(supplies == 1);
    circuit::SolverOptions so;
    const circuit::OperatingPoint op = circuit::solve_dc(net, so);
    for (std::size_t v = 0; v < net.net_count(); ++v) {
      CAPTURE(net.net_name(v));
      // Every node between ground and the rail (a self-biased gate a hair below ground).
      if (negative) {
        CHECK(op.node_v[v] <= 1e-3);
        CHECK(op.node_v[v] >= -12.0 - 1e-9);
      } else {
        CHECK(op.node_v[v] >= -1e-3);
        CHECK(op.node_v[v] <= 12.0 + 1e-9);
      }
    }
  }
}

TEST_CASE("chains against ngspice: gain of the cascade within 3 %, exact within 0.5 %, bias within 0.1 %") {
  Design low_corners;
  low_corners.f_corner_hz = 1.0;
  std::vector<ChainCase> cases = {
      make_chain("jfet-follower > jfet-cs-self", {{"jfet-follower", njfet_record()}, {"jfet-cs-self", njfet_record()}},
                 12, 10e3, 10e3, low_corners),
      make_chain("bjt-ce-divider > bjt-follower into 150 ohm",
                 {{"bjt-ce-divider", npn_record()}, {"bjt-follower", npn_record()}}, 12, 150, 0, low_corners),
      make_chain(
          "jfet-cs-divider > bjt-ce-divider > bjt-follower",
          {{"jfet-cs-divider", njfet_record()}, {"bjt-ce-divider", npn_record()}, {"bjt-follower", npn_record()}}, 15,
          1e3, 1e3, low_corners),
      make_chain("P-channel and PNP on a positive rail: jfet-cs-self > bjt-follower",
                 {{"jfet-cs-self", pjfet_record()}, {"bjt-follower", pnp_record()}}, 9, 2.2e3, 0, low_corners),
      make_chain("N-channel then PNP on one rail: jfet-cs-self > bjt-follower",
                 {{"jfet-cs-self", njfet_record()}, {"bjt-follower", pnp_record()}}, 12, 2.2e3, 0, low_corners),
      make_chain("bjt-ce-divider > bjt-ce-divider from 1k",
                 {{"bjt-ce-divider", npn_record()}, {"bjt-ce-divider", npn_record()}}, 12, 10e3, 1e3, low_corners),
  };
  {
    // The P chain on the negative rail it was once always given: the mirror of the above.
    ChainCase neg =
        make_chain("P-channel and PNP on a negative rail: jfet-cs-self > bjt-follower",
                   {{"jfet-cs-self", pjfet_record()}, {"bjt-follower", pnp_record()}}, 9, 2.2e3, 0, low_corners);
    neg.c.negative_rail = true;
    cases.push_back(neg);
  }
  for (const auto& cc : cases) {
    CAPTURE(cc.label);
    const double f_mid = 1e3;
    const SpiceChain s = spice_chain(cc, f_mid);
    const stages::ChainPerformance fast = stages::evaluate_chain(cc.stages, cc.c, stages::Detail::core);
    const circuit::Circuit net = stages::chain_netlist(cc.stages, cc.c);
    const Performance exact =
        stages::evaluate_circuit(net, stages::chain_transistors(cc.stages), cc.c, stages::Detail::core);
    MESSAGE(fmt::format("{}: ngspice {:.5g}, cascade {:.5g} ({:+.3f} %), exact {:.5g} ({:+.3f} %)", cc.label, s.gain,
                        fast.whole.gain, 100 * (fast.whole.gain / s.gain - 1), exact.gain,
                        100 * (exact.gain / s.gain - 1)));
    CHECK(std::abs(s.gain) > 0.5);
    CHECK(fast.whole.gain * s.gain > 0);  // same sign
    CHECK(rel(fast.whole.gain, s.gain) < 0.03);
    CHECK(rel(exact.gain, s.gain) < 0.005);
    CHECK(rel(exact.supply_current_a, s.supply_a) < 0.001);
    CHECK(rel(fast.whole.supply_current_a, s.supply_a) < 0.01);
    CHECK(fast.whole.active);
    CHECK(exact.active);
    // Every transistor node of the exact operating point against ngspice's.
    circuit::SolverOptions so;
    const circuit::OperatingPoint op = circuit::solve_dc(net, so);
    for (const auto& [name, v] : s.nodes) {
      CAPTURE(name);
      const auto idx = net.find_net(name);
      REQUIRE(idx.has_value());
      CHECK(std::abs(op.node_v[*idx] - v) <= 1e-3 * std::max(1.0, std::abs(v)));
    }
  }
}

}  // namespace shelfstage::test
