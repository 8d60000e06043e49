// Tests of src/stages/loop.cpp: the loop gain of a feedback stage by double injection, against
// ngspice (Debian package ngspice) measuring the same loop its own way: a real current source
// for the current injection (the program emulates one), the two injections combined in
// ngspice's own arithmetic, the crossover and the continuous phase found by its `meas`.
// Checked: |T| at mid-band within 1 %, the unity-gain crossover within 2 %, the phase margin
// within 1.5 degrees, over the hFE spread and with load capacitances that eat into the margin.
#include <doctest/doctest.h>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/stages/loop.hpp"
#include "stage_bench.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

namespace {

struct SpiceLoop {
  double mid = 0, f_cross = 0, margin_deg = 0;
  bool crosses = false;
};

// The stage's bench with RF's collector end on a net of its own ("loop_y"), a series source
// VLOOP from there to the collector, and a current source IINJ into loop_y: ngspice runs the
// voltage injection, then the current injection, and combines them (T = (Tv Ti - 1) /
// (Tv + Ti + 2), Tv = -V(x) / V(y), Ti = -i_r / i_f).
SpiceLoop spice_loop(const StageCase& sc, double f_mid) {
  const stages::Topology& t = *sc.topology;
  const circuit::Circuit net = t.netlist(sc.values, sc.q, sc.c);
  const std::string rf(t.roles()[t.role_index("RF")].designator);
  circuit::Circuit b;
  circuit::Circuit::Carry carry;
  carry.net = [&](const circuit::Component& c, const std::string& n) {
    return c.designator == rf && n == "collector" ? std::string("loop_y") : n;
  };
  carry.keep = [](const circuit::Component& c) { return c.role != "signal"; };
  b.append(net, carry);
  b.vsource("VSIG", "signal", "sig", "0", 0.0, 0.0);
  b.vsource("VLOOP", "loop", "loop_y", "collector", 0.0, 1.0);
  circuit::SpiceOptions o;
  o.title = "loop gain by double injection";
  o.celsius = sc.c.celsius;
  o.analyses = {"IINJ 0 loop_y DC 0 AC 0",
                ".control",
                "ac dec 40 10 1e10",
                "let tv = -v(collector)/v(loop_y)",
                "alter @vloop[acmag] = 0",
                "alter @iinj[acmag] = 1",
                "ac dec 40 10 1e10",
                "let ti = i(vloop)/(1 - i(vloop))",
                "let tt = (ac1.tv*ti - 1)/(ac1.tv + ti + 2)",
                "let tm = mag(tt)",
                "let tp = cph(tt)",
                fmt::format("meas ac tmid find tm at={:.6g}", f_mid),
                "meas ac fc when tm=1 fall=last",
                "meas ac pc find tp when tm=1 fall=last",
                ".endc"};
  const SpiceRun r = run_ngspice(circuit::to_spice(b, o));
  INFO(r.output);
  SpiceLoop s;
  s.mid = r.get("tmid");
  if (const auto fc = r.find("fc")) {
    s.crosses = true;
    s.f_cross = *fc;
    s.margin_deg = 180.0 + r.get("pc") * 180.0 / std::numbers::pi;
  }
  return s;
}

}  // namespace

TEST_CASE("loop gain of bjt-ce-shunt against ngspice: mid-band size, crossover, phase margin") {
  const stages::Topology& t = *stages::find_topology("bjt-ce-shunt");
  const devices::DeviceSpread n(npn_record());
  int compared = 0;
  for (const double load_f : {0.0, 1e-9, 22e-9})
    for (const double degeneration : {0.0, 0.5}) {
      Conditions c;
      c.supply_v = 12;
      c.load_ohm = 10e3;
      c.load_farads = load_f;
      c.source_ohm = 1e3;
      Design d;
      d.current_a = 1e-3;
      d.degeneration = degeneration;
      const StageCase base = design_stage(t, bjt_piece(n, n.nominal()), c, d, n.nominal().hfe);
      for (const auto& f : n.corners()) {
        StageCase sc = base;
        sc.q = bjt_piece(n, f);
        const double f_mid = 1e3;
        const auto ours = stages::loop_gain(t, sc.values, sc.q, sc.c, f_mid);
        REQUIRE(ours.has_value());
        const SpiceLoop ng = spice_loop(sc, f_mid);
        MESSAGE(
            fmt::format("CL {:g} F, degeneration {}, {}: |T| {:.4g} (ngspice {:.4g}), crossover {:.4g} Hz "
                        "({:.4g}), margin {:.1f} deg ({:.1f})",
                        load_f, degeneration, f.tag, ours->mid, ng.mid, ours->f_cross_hz, ng.f_cross,
                        ours->phase_margin_deg, ng.margin_deg));
        CHECK(ours->mid == doctest::Approx(ng.mid).epsilon(0.01));
        CHECK(ours->crosses() == ng.crosses);
        if (ours->crosses() && ng.crosses) {
          CHECK(ours->f_cross_hz == doctest::Approx(ng.f_cross).epsilon(0.02));
          CHECK(std::abs(ours->phase_margin_deg - ng.margin_deg) < 1.5);
        }
        ++compared;
      }
    }
  CHECK(compared >= 12);
}

TEST_CASE("a stage without a feedback loop has no loop gain; a missing break point is an input error") {
  const stages::Topology& t = *stages::find_topology("bjt-ce-divider");
  const devices::DeviceSpread n(npn_record());
  Conditions c;
  Design d;
  const StageCase sc = design_stage(t, bjt_piece(n, n.nominal()), c, d, n.nominal().hfe);
  CHECK_FALSE(stages::loop_gain(t, sc.values, sc.q, sc.c, 1e3).has_value());
  const circuit::Circuit net = t.netlist(sc.values, sc.q, sc.c);
  CHECK_THROWS_AS(stages::loop_gain_of_circuit(net, "R99", "collector", 25, 1e3), InputError);
  CHECK_THROWS_AS(stages::loop_gain_of_circuit(net, "R1", "no-such-net", 25, 1e3), InputError);
}
