// Tests of src/stages/jfet_cs_core.cpp (the common-source evaluator both JFET CS topologies
// share): the bench rule for a degenerated common source.
#include <doctest/doctest.h>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

// Common practice (bench rule, docs/physics.md): with gm*RS1 >> 1 the gain of a common
// source is set by the resistors alone, |Av| -> (RD || RL)/RS1. The exact small-signal result
// is gm*(RD || RL)/(1 + gm*RS1) (ro far above RD: lambda 0 here, as the rule assumes), so the
// ratio to the rule is gm*RS1/(1 + gm*RS1) and climbs to one as RS1 (and gm*RS1) grows.
TEST_CASE("Common practice: CS gain approaches (RD || RL)/RS1 as gm*RS1 grows (fast and exact)") {
  const stages::Topology& t = *stages::find_topology("jfet-cs-divider");
  stages::Transistor q;
  q.kind = DeviceKind::njfet;
  q.jfet.kind = DeviceKind::njfet;
  q.jfet.idss_a = 8e-3;  // a large-IDSS piece
  q.jfet.vp_abs_v = 3.8;
  q.jfet.lambda_per_v = 0.0;
  q.jfet.cgs_f = 4.5e-12;
  q.jfet.cgd_f = 1.5e-12;
  Conditions c;
  c.supply_v = 30;
  c.source_ohm = 0;
  double last_ratio = 0;
  for (double rs1 : {1e3, 3.3e3, 10e3, 33e3, 100e3}) {
    CAPTURE(rs1);
    // Source at 5 V whatever RS1: ID = 5 V/RS1, the gate divider set for that ID; RD = 2*RS1.
    const double id = 5.0 / rs1;
    const double vg = 5.0 - q.jfet.vp_abs_v * (1.0 - std::sqrt(id / q.jfet.idss_a));
    const double rd = 2.0 * rs1;
    c.load_ohm = 100.0 * rd;
    Values v;
    set_role(t, v, "R1", 1e6 * (c.supply_v - vg) / vg);
    set_role(t, v, "R2", 1e6);
    set_role(t, v, "RD", rd);
    set_role(t, v, "RS1", rs1);
    set_role(t, v, "CIN", 1e-6);
    set_role(t, v, "COUT", 10e-6);
    const Performance fast = t.evaluate(v, q, c, stages::Detail::core);
    const Performance exact = stages::evaluate_exact(t, v, q, c, stages::Detail::core);
    REQUIRE(fast.active);
    REQUIRE(exact.active);
    const double rule = stages::par(rd, c.load_ohm) / rs1;
    const double gm = 2.0 * std::sqrt(q.jfet.beta() * exact.bias_current_a);
    const double expected = gm * rs1 / (1.0 + gm * rs1);
    for (const Performance* p : {&fast, &exact}) {
      CHECK(p->gain < 0);
      CHECK(std::abs(p->gain) / rule == doctest::Approx(expected).epsilon(0.01));
    }
    const double ratio = std::abs(exact.gain) / rule;
    CHECK(ratio > last_ratio);  // the rule gets better as gm*RS1 grows
    last_ratio = ratio;
  }
  // gm*RS1 = 33 at RS1 = 100 kOhm: the rule holds to 3 %.
  CHECK(last_ratio == doctest::Approx(1.0).epsilon(0.035));
}
