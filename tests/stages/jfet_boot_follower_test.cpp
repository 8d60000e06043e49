// Tests of src/stages/jfet_boot_follower.cpp: the JFET source follower with a bootstrapped gate
// resistor, fast evaluator and evaluate_exact against ngspice (operating point, gain, corners,
// noise, HD2, clipping), the bootstrapped input impedance against ngspice's, and the bootstrap
// rule Zin = RG / (1 - A) (Horowitz and Hill, The Art of Electronics, on bootstrapping; from
// memory) against a follower whose gate resistor goes to ground.
#include <doctest/doctest.h>

#include <complex>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

namespace {

const stages::Topology& boot() { return *stages::find_topology("jfet-boot-follower"); }

struct SpiceInput {
  double zin = 0;  ///< |v(in) / i|, the current through the source resistance
  double a = 0;    ///< |v(source) / v(gate)|: the follower's own gain, the bootstrap's A
};

/// What ngspice sees at the stage's input at f_hz, from one AC analysis with the signal at 1 V.
SpiceInput spice_input(const StageCase& sc, double f_hz) {
  const std::vector<std::string> a = {".control", "ac lin 1 " + fmt::format("{0:g} {0:g}", f_hz),
                                      "print vr(in) vi(in) vr(gate) vi(gate) vr(source) vi(source)", ".endc"};
  const SpiceRun r = run_ngspice(stage_netlist(sc, a));
  auto v = [&](const std::string& n) { return std::complex<double>(r.get("vr(" + n + ")"), r.get("vi(" + n + ")")); };
  const std::complex<double> i = (1.0 - v("in")) / sc.c.source_ohm;
  return {std::abs(v("in") / i), std::abs(v("source") / v("gate"))};
}

}  // namespace

TEST_CASE("jfet-boot-follower against ngspice: corners of the spread, N and P channel, 5 V to 15 V") {
  const stages::Topology& t = boot();
  ErrorLog log;
  const auto cases = standard_cases(t);
  REQUIRE(cases.size() >= 12);  // every case below is checked against ngspice in check_case()
  for (const StageCase& sc : cases) check_case(log, sc);
  log.report(fmt::format("jfet-boot-follower: {} cases, worst relative error against ngspice", cases.size()));
}

TEST_CASE("jfet-boot-follower: the bootstrap lifts the input impedance to RG / (1 - A), as ngspice measures it") {
  const devices::DeviceSpread n(njfet_record());
  for (const auto& f : n.corners()) {
    Conditions c;
    c.supply_v = 12;
    c.load_ohm = 10e3;
    c.source_ohm = 1e6;  // large, so the current into the input is measured well
    Design d;
    d.current_frac = 0.3;
    d.f_corner_hz = 1.0;
    StageCase sc = design_stage(boot(), jfet_piece(n, f), c, d);
    sc.label = fmt::format("{} {}", n.record().name, f.tag);
    INFO(sc.label);
    const Performance fast = boot().evaluate(sc.values, sc.q, sc.c, stages::Detail::core);
    REQUIRE(fast.active);
    const double rg = sc.values[boot().role_index("RG")];
    const SpiceInput ng = spice_input(sc, 1000.0);
    // The rule, with ngspice's own A (gate to source: 0.8 to 0.97 across these pieces): the
    // input impedance is RG / (1 - A), five to thirty times RG, where the plain follower's RG
    // to ground gives RG itself. CIN's reactance at 1 kHz is under 0.2 % of it.
    CHECK(ng.zin == doctest::Approx(rg / (1.0 - ng.a)).epsilon(0.02));
    CHECK(ng.zin > 4 * rg);
    CHECK(fast.zin_ohm == doctest::Approx(ng.zin).epsilon(0.05));
    const Performance exact = stages::evaluate_exact(boot(), sc.values, sc.q, sc.c, stages::Detail::core);
    CHECK(exact.zin_ohm == doctest::Approx(ng.zin).epsilon(0.05));
  }
}

TEST_CASE("jfet-boot-follower: its own parts' DC: the gate sits at the tap, VGS = -ID RS1 (no gate current)") {
  const devices::DeviceSpread n(njfet_record());
  Conditions c;
  c.supply_v = 9;
  const StageCase sc = design_stage(boot(), jfet_piece(n, n.nominal()), c, {});
  const Performance p = boot().evaluate(sc.values, sc.q, sc.c, stages::Detail::stress);
  const double rs1 = sc.values[boot().role_index("RS1")], rs2 = sc.values[boot().role_index("RS2")];
  CHECK(p.v_in == doctest::Approx(p.bias_current_a * rs2));
  CHECK(p.v_common - p.v_in == doctest::Approx(p.bias_current_a * rs1));
  // The bootstrap capacitor holds RS1's drop, source side positive (an N device on a
  // positive rail); the input coupling holds the tap's voltage, gate side positive.
  for (const auto& s : p.stress) {
    const auto& role = boot().roles()[s.role];
    if (role.name == "CB") {
      CHECK(s.dc_v == doctest::Approx(p.bias_current_a * rs1));
      CHECK(s.plus_net == "source");
    }
    if (role.name == "CIN") CHECK(s.plus_net == "gate");
  }
}

TEST_CASE("jfet-boot-follower: the input coupling against the gate's capacitance, a flat divider ngspice sees") {
  // With tens of megohms at the gate, a coupling capacitor of a few nanofarads is enough for
  // the low corner, and then it divides the signal with the gate's capacitance (Cgd and the
  // bootstrapped Cgs) across the whole band: the flat top of the band-pass Rs-CIN-(Zin||Cin),
  // R CIN / (Rs CIN + R Cin + R CIN) (first-order network algebra). ngspice's gain at 1 kHz,
  // inside that flat top, is the reference; the tolerance 2e-5 is well under the divider's
  // size here (1e-4 to 1e-3) so that leaving it out fails.
  const devices::DeviceSpread n(njfet_record());
  double largest = 0;
  for (const bool neg : {false, true})
    for (const auto& f : n.corners()) {
      Conditions c;
      c.supply_v = 9;
      c.negative_rail = neg;
      c.load_ohm = 10e3;
      c.source_ohm = 100e3;
      Design d;
      d.current_frac = 0.3;
      d.f_corner_hz = 5.0;
      StageCase sc = design_stage(boot(), jfet_piece(n, f), c, d);
      sc.values[boot().role_index("RG")] = 10e6;
      sc.values[boot().role_index("CIN")] = 1.0 / (2 * std::numbers::pi * 5.0 * 20e6);  // 1.6 nF
      sc.label = fmt::format("{} {} {}", n.record().name, f.tag, neg ? "-9 V" : "+9 V");
      INFO(sc.label);
      const Performance fast = boot().evaluate(sc.values, sc.q, sc.c, stages::Detail::core);
      REQUIRE(fast.active);
      const Performance exact = stages::evaluate_exact(boot(), sc.values, sc.q, sc.c, stages::Detail::core);
      const SpiceFigures ng = spice_small_signal(sc, 1000.0);
      const double divider =
          stages::input_divider(c.source_ohm, fast.zin_ohm, fast.c_in_f, sc.values[boot().role_index("CIN")]);
      largest = std::max(largest, 1.0 - divider);
      CHECK(fast.gain == doctest::Approx(ng.gain).epsilon(2e-5));
      CHECK(exact.gain == doctest::Approx(ng.gain).epsilon(2e-5));
    }
  MESSAGE("largest input divider loss: " << largest);
  CHECK(largest > 1e-4);  // the case exercises the divider
}
