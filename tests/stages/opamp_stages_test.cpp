// Tests of src/stages/opamp_stages.cpp and opamp_model.cpp: the six op-amp stages, their closed
// form against the exact solver on the same netlist (the macro-model), and that netlist in
// ngspice (Debian package ngspice): output DC, gain at 1 kHz and the upper -3 dB corner. The
// textbook references are the feedback-factor forms (non-inverting 1 + RF/RG, inverting
// -RF/RG, gain error 1/(1 + T), DC output error Vos times the DC noise gain plus the bias
// currents through the resistors; from memory of the standard texts).
#include <doctest/doctest.h>

#include <cmath>
#include <fmt/format.h>
#include <string>
#include <vector>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/devices/opamp.hpp"
#include "shelfstage/stages/exact.hpp"
#include "shelfstage/stages/loop.hpp"
#include "shelfstage/stages/topology.hpp"
#include "support/ngspice.hpp"
#include "support/opamp_records.hpp"

using namespace shelfstage;
using namespace shelfstage::stages;

namespace {

// The demo's bipolar-input dual with its input current noise stated as well.
devices::OpampParams bipolar_dual() {
  devices::OpampParams o = test::bipolar_input();
  o.in_a_rthz = 0.5e-12;
  return o;
}

devices::OpampParams rail_to_rail() {
  devices::OpampParams o;
  o.channels = 2;
  o.vs_min_v = 2.7;
  o.vs_max_v = 5.5;
  o.gbw_hz.typ = 1e6;
  o.slew_v_per_s.typ = 0.6e6;
  o.aol.typ = 1e5;
  o.out_drop_hi_v = o.out_drop_lo_v = 0.02;
  o.out_drop_ohm = 60;
  o.iout_max_a = 10e-3;
  o.cm_drop_hi_v = o.cm_drop_lo_v = -0.1;
  o.vos_max_v = 6e-3;
  o.ib_max_a = 10e-12;
  o.en_v_rthz = 25e-9;
  o.iq_a = 100e-6;
  return o;
}

Transistor piece(const devices::OpampInstance& a) {
  Transistor q;
  q.kind = devices::DeviceKind::opamp;
  q.opamp = a;
  return q;
}

struct Case {
  std::string label;
  const Topology* t = nullptr;
  Values v;
  Transistor q;
  Conditions c;
};

void set(const Topology& t, Values& v, std::string_view role, double x) {
  const std::size_t i = t.role_index(role);
  REQUIRE(i < t.roles().size());
  v[i] = x;
}

// Every op-amp topology at its reference values and at a higher gain, with a typical piece and
// a slow, offset one, on its supply; the rail-to-rail type on 5 V (single) and +/-2.5 V (split).
std::vector<Case> cases() {
  std::vector<Case> out;
  const auto bip = bipolar_dual();
  const auto rr = rail_to_rail();
  const std::vector<std::pair<std::string, devices::OpampInstance>> pieces = {
      {"bipolar nominal", devices::opamp_nominal(bip)},
      {"bipolar slow, Vos +5 mV, Ib +400/300 nA", devices::opamp_corners(bip)[2].figures},
      {"rail-to-rail nominal", devices::opamp_nominal(rr)},
  };
  for (const Topology* t : registry()) {
    if (!t->accepts(devices::DeviceKind::opamp)) continue;
    const bool split = t->supply_form() == SupplyForm::split;
    for (const auto& [tag, a] : pieces) {
      const bool low = a.vs_max_v < 10;
      for (double rf : {0.0, 100e3}) {
        Case k;
        k.t = t;
        k.q = piece(a);
        k.c.split_supply = split;
        k.c.supply_v = low ? (split ? 2.5 : 5.0) : 12.0;
        k.c.source_ohm = 1e3;
        k.c.load_ohm = 10e3;
        k.c.load_farads = rf > 0 ? 1e-9 : 0.0;
        k.c.least_margin_deg = 20;  // a follower into 1 nF through 100 ohm keeps about 30°
        k.v = t->reference(k.q, k.c, {});
        if (rf > 0 && t->role_index("RF") < t->roles().size()) set(*t, k.v, "RF", rf);
        k.label = fmt::format("{} {} on {}{} V, RF {}", t->name(), tag, split ? "+/-" : "", k.c.supply_v, rf);
        out.push_back(k);
      }
    }
  }
  return out;
}

double rel(double a, double b) { return std::abs(a - b) / std::max(std::abs(b), 1e-30); }

}  // namespace

TEST_CASE(
    "op-amp stages: the closed form against the exact solver on the macro-model netlist, and both against "
    "the textbook ratio") {
  int n = 0;
  double worst_gain = 0, worst_fh = 0, worst_vout = 0;
  for (const Case& k : cases()) {
    CAPTURE(k.label);
    const Performance p = k.t->evaluate(k.v, k.q, k.c, Detail::full);
    const Performance e = evaluate_exact(*k.t, k.v, k.q, k.c, Detail::full);
    REQUIRE(p.valid);
    REQUIRE(e.valid);
    CHECK(p.active);
    CHECK(e.active);
    ++n;
    // The textbook ratio, less the gain error 1/(1 + T0) (at most 1 % here) and the source's divider.
    const double rf = k.t->role_index("RF") < k.t->roles().size() ? k.v[k.t->role_index("RF")] : 0.0;
    const double rg = k.t->role_index("RG") < k.t->roles().size() ? k.v[k.t->role_index("RG")] : 0.0;
    const bool inverting = k.t->name().starts_with("opamp-inv");
    const double ideal = inverting ? -rf / (rg + k.c.source_ohm) : (rg > 0 ? 1 + rf / rg : 1.0);
    CHECK(p.gain / ideal < 1.0);
    CHECK(p.gain / ideal > (inverting ? 0.99 : 0.98));
    // The two evaluators on one circuit.
    CHECK(rel(p.gain, e.gain) < 2e-4);
    CHECK(rel(p.zin_ohm, e.zin_ohm) < 1e-3);
    CHECK(std::abs(p.v_out - e.v_out) < 2e-4 + 1e-4 * std::abs(e.v_out));
    CHECK(std::abs(p.v_in - e.v_in) < 2e-4 + 1e-4 * std::abs(e.v_in));
    CHECK(rel(p.f_high_hz, e.f_high_hz) < 0.01);
    CHECK(rel(p.f_low_hz, e.f_low_hz) < 0.01);  // the reference's impedance in the input network included
    CHECK(rel(p.noise_v_rthz, e.noise_v_rthz) < 0.03);
    // Swing (no band asked: no slew limit): the record's headroom at the load's current; the
    // exact solver clips where a clamp passes 1 µA, a few millivolts either side.
    CHECK(std::abs(p.swing_peak_v - e.swing_peak_v) < 0.02 + 0.01 * e.swing_peak_v);
    worst_gain = std::max(worst_gain, rel(p.gain, e.gain));
    worst_fh = std::max(worst_fh, rel(p.f_high_hz, e.f_high_hz));
    worst_vout = std::max(worst_vout, std::abs(p.v_out - e.v_out));
  }
  CHECK(n == 36);
  MESSAGE(fmt::format("{} cases: gain within {:.2g}, f_high within {:.2g}, output DC within {:.2g} V", n, worst_gain,
                      worst_fh, worst_vout));
}

TEST_CASE("op-amp stages: the macro-model netlist in ngspice gives the exact solver's output DC, gain and f_high") {
  for (const Case& k : cases()) {
    CAPTURE(k.label);
    const Performance e = evaluate_exact(*k.t, k.v, k.q, k.c, Detail::full);
    const circuit::Circuit net = k.t->netlist(k.v, k.q, k.c);
    const std::string out_pin = std::string(k.t->node_names()[2]);  // + input, - input, output
    circuit::SpiceOptions o;
    o.title = k.label;
    o.analyses = {".control",
                  "op",
                  fmt::format("print v({})", out_pin),
                  "ac dec 100 1 1e9",
                  "meas ac g1k find vm(out) at=1e3",
                  "let edge = g1k / sqrt(2)",
                  "meas ac fhi when vm(out)=edge fall=last",
                  ".endc"};
    const test::SpiceRun r = test::run_ngspice(circuit::to_spice(net, o));
    CAPTURE(r.output);
    CHECK(std::abs(r.get(fmt::format("v({})", out_pin)) - e.v_out) < 1e-4);
    CHECK(rel(r.get("g1k"), std::abs(e.gain)) < 2e-3);  // 1 kHz sits a little off mid-band
    CHECK(rel(r.get("fhi"), e.f_high_hz) < 0.01);
  }
}

TEST_CASE("op-amp stages: the closed form's phase margin is the loop measured on the netlist, with a cable") {
  const auto bip = bipolar_dual();
  for (const char* name : {"opamp-noninv", "opamp-inv", "opamp-noninv-split", "opamp-inv-split"}) {
    const Topology& t = *find_topology(name);
    for (double cl : {0.0, 10e-9, 100e-9}) {
      CAPTURE(name);
      CAPTURE(cl);
      Conditions c;
      c.split_supply = t.supply_form() == SupplyForm::split;
      c.supply_v = 12;
      c.load_ohm = 2.2e3;
      c.load_farads = cl;
      c.least_margin_deg = 0;  // report, do not judge
      const Transistor q = piece(devices::opamp_nominal(bip));
      Values v = t.reference(q, c, {});
      set(t, v, "RF", 10e3);
      set(t, v, "RG", 10e3);  // a noise gain of 2: the hardest of these loops
      const auto lg = loop_gain(t, v, q, c, 1e3);
      REQUIRE(lg);
      // The closed form's margin, read from its active flag at margins either side.
      auto active_at = [&](double m) {
        Conditions cm = c;
        cm.least_margin_deg = m;
        return t.evaluate(v, q, cm, Detail::core).active;
      };
      CHECK(active_at(lg->phase_margin_deg - 1.5));
      CHECK_FALSE(active_at(lg->phase_margin_deg + 1.5));
    }
  }
}

TEST_CASE("op-amp stages: an inverting stage's reference outside the inputs' common-mode range is not active") {
  devices::OpampParams o = bipolar_dual();
  o.vs_min_v = 5;
  const Topology& t = *find_topology("opamp-inv");
  Conditions c;
  c.supply_v = 6;
  const Transistor q = piece(devices::opamp_nominal(o));
  Values v = t.reference(q, c, {});
  CHECK(t.evaluate(v, q, c).active);  // mid-rail, 3 V: inside 2..4 V
  set(t, v, "RA1", 82e3);
  set(t, v, "RA2", 18e3);  // 1.08 V: below the range's 2 V floor
  const Performance p = t.evaluate(v, q, c);
  CHECK_FALSE(p.active);
  CHECK(p.problem.find("common-mode range") != std::string::npos);
}

TEST_CASE(
    "the loop memo sweeps once for pieces whose broken loops are the same system, and gives a fresh sweep's "
    "figures") {
  // The pieces' offset and bias currents move only the operating point, which leaves the
  // small-signal system as it is (the clamps stay off); another GBW or supply with a transistor
  // in the loop changes it.
  const auto bip = bipolar_dual();
  const Topology& t = *find_topology("opamp-noninv");
  Conditions c;
  c.supply_v = 12;
  c.load_ohm = 2.2e3;
  c.load_farads = 10e-9;
  c.least_margin_deg = 0;
  const devices::OpampInstance nominal = devices::opamp_nominal(bip);
  Values v = t.reference(piece(nominal), c, {});
  set(t, v, "RF", 10e3);
  set(t, v, "RG", 10e3);
  devices::OpampInstance offset = nominal;
  offset.vos_v = 3e-3;
  offset.ib_plus_a = 300e-9;
  offset.ib_minus_a = 200e-9;
  devices::OpampInstance slow = nominal;
  slow.gbw_hz *= 0.5;
  LoopMemo memo;
  for (const auto& a : {nominal, offset, slow, offset}) {
    const auto fresh = loop_gain(t, v, piece(a), c, 1e3);
    const auto kept = loop_gain(t, v, piece(a), c, 1e3, &memo);
    REQUIRE(fresh);
    REQUIRE(kept);
    CHECK(kept->mid == doctest::Approx(fresh->mid).epsilon(1e-6));
    CHECK(kept->f_cross_hz == doctest::Approx(fresh->f_cross_hz).epsilon(1e-6));
    CHECK(kept->phase_margin_deg == doctest::Approx(fresh->phase_margin_deg).epsilon(1e-6));
  }
  CHECK(memo.measured() == 2);  // the nominal piece and the slow one
  CHECK(memo.reused() == 2);    // the offset piece, twice
}
