// Test support: ngspice measuring a feedback loop's gain its own way, by double injection
// with a real current source, the two injections combined in ngspice's own arithmetic and the
// crossover and continuous phase found by its `meas` (the outside check of stages/loop.cpp).
#pragma once
#include <doctest/doctest.h>
#include <fmt/format.h>

#include <algorithm>
#include <numbers>
#include <string>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/circuit/spice.hpp"
#include "support/ngspice.hpp"

namespace shelfstage::test {

struct SpiceLoop {
  double mid = 0, f_cross = 0, margin_deg = 0;
  bool crosses = false;
};

/// The stage's bench `net` with the ends of the parts `moved` (the feedback resistor and any
/// capacitor across it) on net x moved to a net of their own ("loop_y"), a series source
/// VLOOP from there to x, and a current source IINJ into loop_y, the signal source silenced:
/// ngspice runs the voltage injection, then the current injection, and combines them
/// (T = (Tv Ti - 1) / (Tv + Ti + 2), Tv = -V(x) / V(y), Ti = -i_r / i_f; Middlebrook's
/// double injection, as stages/loop.cpp names it). |T| at f_mid, the last fall through one,
/// and the phase margin there: this is the netlist; read_spice_loop() reads its output.
inline std::string spice_loop_netlist(const circuit::Circuit& net, const std::vector<std::string>& moved,
                                      const std::string& x, double f_mid, double celsius) {
  circuit::Circuit b;
  circuit::Circuit::Carry carry;
  carry.net = [&](const circuit::Component& c, const std::string& n) {
    return std::find(moved.begin(), moved.end(), c.designator) != moved.end() && n == x ? std::string("loop_y") : n;
  };
  carry.keep = [](const circuit::Component& c) { return c.role != "signal"; };
  b.append(net, carry);
  b.vsource("VSIG", "signal", "sig", "0", 0.0, 0.0);
  b.vsource("VLOOP", "loop", "loop_y", x, 0.0, 1.0);
  circuit::SpiceOptions o;
  o.title = "loop gain by double injection";
  o.celsius = celsius;
  o.analyses = {"IINJ 0 loop_y DC 0 AC 0", ".control", "ac dec 40 10 1e10",
                // The first sweep's plot by the name ngspice gave it (not "ac1": in a batch,
                // test::run_ngspice_batch, the plots of the netlists before number on).
                "set voltage_plot = $curplot", fmt::format("let tv = -v({})/v(loop_y)", x), "alter @vloop[acmag] = 0",
                "alter @iinj[acmag] = 1", "ac dec 40 10 1e10", "let ti = i(vloop)/(1 - i(vloop))",
                "let tt = ({$voltage_plot}.tv*ti - 1)/({$voltage_plot}.tv + ti + 2)", "let tm = mag(tt)",
                "let tp = cph(tt)", fmt::format("meas ac tmid find tm at={:.6g}", f_mid),
                "meas ac fc when tm=1 fall=last", "meas ac pc find tp when tm=1 fall=last", ".endc"};
  return circuit::to_spice(b, o);
}

/// The figures from ngspice's output for spice_loop_netlist().
inline SpiceLoop read_spice_loop(const SpiceRun& r) {
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

/// spice_loop_netlist() run through ngspice and read.
inline SpiceLoop spice_loop_gain(const circuit::Circuit& net, const std::vector<std::string>& moved,
                                 const std::string& x, double f_mid, double celsius) {
  return read_spice_loop(run_ngspice(spice_loop_netlist(net, moved, x, f_mid, celsius)));
}

}  // namespace shelfstage::test
