// Tests of src/stages/bjt_ce_divider.cpp: the divider-biased BJT common emitter, fast evaluator and evaluate_exact,
// against ngspice (operating point, gain, corners, noise, HD2, clipping).
#include <doctest/doctest.h>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

TEST_CASE("bjt-ce-divider against ngspice: hFE 100 to 400, NPN and PNP, 5 V to 24 V") {
  const stages::Topology& t = *stages::find_topology("bjt-ce-divider");
  ErrorLog log;
  const auto cases = standard_cases(t);
  for (const StageCase& sc : cases) check_case(log, sc);
  log.report(fmt::format("bjt-ce-divider: {} cases, worst relative error against ngspice", cases.size()));
}

// Common practice (docs/physics.md, The BJT): the emitter's small-signal resistance re is "about
// 26 ohms divided by the emitter current in mA" at room temperature: VT/IE with VT = 25.85 mV
// at 300 K. The solver's 1/gm = VT/IC differs from VT/IE only by alpha (half a percent at
// hFE 200), so the rule holds to 2 %.
TEST_CASE("Common practice: re is about 26 mV / IE at 300 K (the solver's 1/gm)") {
  const stages::Topology& t = *stages::find_topology("bjt-ce-divider");
  const devices::DeviceSpread spread(npn_record());
  const double celsius = 300.0 - devices::kZeroCelsius;
  for (double ic : {0.1e-3, 1e-3, 5e-3}) {
    CAPTURE(ic);
    Transistor q;
    q.kind = DeviceKind::npn;
    q.bjt = spread.bjt(spread.nominal(), celsius);
    Conditions c;
    c.celsius = celsius;
    Design d;
    d.current_a = ic;
    const StageCase sc = design_stage(t, q, c, d);
    const circuit::Circuit net = t.netlist(sc.values, sc.q, sc.c);
    circuit::SolverOptions so;
    so.celsius = celsius;
    const auto op = circuit::solve_dc(net, so);
    const auto& dev = op.devices.front();
    const double ie = dev.i_main_a + dev.i_ctrl_a;
    CHECK(ie == doctest::Approx(ic).epsilon(0.1));  // the design put it about there
    CHECK(1.0 / dev.gm_s == doctest::Approx(0.02585 / ie).epsilon(0.02));
  }
}
