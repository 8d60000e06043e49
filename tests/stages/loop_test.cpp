// Tests of src/stages/loop.cpp: the loop gain of a feedback stage by double injection, against
// ngspice (Debian package ngspice) measuring the same loop its own way: a real current source
// for the current injection (the program emulates one), the two injections combined in
// ngspice's own arithmetic, the crossover and the continuous phase found by its `meas`.
// Checked: |T| at mid-band within 1 %, the unity-gain crossover within 2 %, the phase margin
// within 1.5 degrees, over the hFE spread and with load capacitances that eat into the margin;
// for the feedback pairs also with a compensation capacitor across RF (moved with RF at the
// break: it carries part of the feedback).
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <numbers>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/stages/loop.hpp"
#include "stage_bench.hpp"
#include "support/ngspice.hpp"
#include "support/spice_loop.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

namespace {

// The stage's bench with the loop broken at the end of RF (and of CF beside it, when fitted)
// on the loop's net, measured by ngspice (support/spice_loop.hpp).
std::string loop_netlist(const StageCase& sc, double f_mid) {
  const stages::Topology& t = *sc.topology;
  std::vector<std::string> moved = {std::string(t.roles()[t.role_index("RF")].designator)};
  if (const std::size_t cf = t.role_index("CF"); cf < t.roles().size() && sc.values[cf] > 0)
    moved.emplace_back(t.roles()[cf].designator);
  return spice_loop_netlist(t.netlist(sc.values, sc.q, sc.c), moved, std::string(t.feedback_loop()->net), f_mid,
                            sc.c.celsius);
}

SpiceLoop spice_loop(const StageCase& sc, double f_mid) {
  return read_spice_loop(run_ngspice(loop_netlist(sc, f_mid)));
}

// ngspice's upper -3 dB corner of the stage, against a mid-band gain given (the evaluators'
// own, with every capacitor as mid-band takes it): with CF the response falls slowly toward
// one above the zero, and a level read off the sweep at some frequency (where the coupling
// capacitors still take a few parts in a thousand) would move the corner by a per cent.
std::string f_high_netlist(const StageCase& sc, double mid_gain) {
  const std::vector<std::string> a = {
      ".control", "ac dec 100 0.01 1e10",
      fmt::format("meas ac fhi when vm(out)={:.9g} fall=last", std::abs(mid_gain) / std::numbers::sqrt2), ".endc"};
  return stage_netlist(sc, a);
}

double read_f_high(const SpiceRun& r) {
  INFO(r.output);
  return r.get("fhi");
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

TEST_CASE("loop gain of the feedback pairs against ngspice, with load capacitance and a capacitor across RF") {
  // Each pair's standard cases (both polarities, 5..24 V), every third one, bare, with 47 nF
  // across the load, and with CF across RF at a zero of 300 kHz and of 30 kHz: the loop
  // figures against ngspice's own double injection, and the upper -3 dB corner of both
  // evaluators against ngspice's AC sweep (CF is open at mid-band, as ngspice's sweep has it;
  // held as a short, the exact solver once read a gain of one there).
  int compared = 0, with_cf = 0, shortened = 0;
  // Every case first, then all of them through ngspice in batches (test::run_ngspice_batches),
  // then the checks.
  struct Case {
    StageCase sc;
    double load_f = 0, f_zero = 0, f_mid = 0;
    Performance fast, exact;
    stages::LoopGain ours;
  };
  std::vector<Case> all;
  std::vector<std::string> netlists;
  for (const char* name : {"bjt-fb-pair", "jfet-fb-pair", "bjt-fb-pair-same"}) {
    const stages::Topology& t = *stages::find_topology(name);
    const std::size_t rf = t.role_index("RF"), cf = t.role_index("CF");
    REQUIRE(cf < t.roles().size());
    const auto cases = standard_cases(t);
    for (std::size_t i = 0; i < cases.size(); i += 3) {
      if (!t.evaluate(cases[i].values, cases[i].q, cases[i].c).active) continue;
      for (const double load_f : {0.0, 47e-9})
        for (const double f_zero : {0.0, 3e5, 3e4}) {
          Case k;
          k.sc = cases[i];
          k.load_f = load_f;
          k.f_zero = f_zero;
          k.sc.c.load_farads = load_f;
          if (f_zero > 0) k.sc.values[cf] = 1.0 / (2 * std::numbers::pi * f_zero * k.sc.values[rf]);
          k.fast = t.evaluate(k.sc.values, k.sc.q, k.sc.c, stages::Detail::full);
          k.exact = stages::evaluate_exact(t, k.sc.values, k.sc.q, k.sc.c, stages::Detail::full);
          k.f_mid = std::sqrt(k.fast.f_low_hz * k.fast.f_high_hz);
          const auto ours = stages::loop_gain(t, k.sc.values, k.sc.q, k.sc.c, k.f_mid);
          REQUIRE(ours.has_value());
          k.ours = *ours;
          netlists.push_back(loop_netlist(k.sc, k.f_mid));
          netlists.push_back(f_high_netlist(k.sc, k.fast.gain));
          all.push_back(std::move(k));
        }
    }
  }
  const std::vector<SpiceRun> runs = run_ngspice_batches(netlists);
  REQUIRE(runs.size() == 2 * all.size());
  for (std::size_t n = 0; n < all.size(); ++n) {
    const Case& k = all[n];
    const stages::Topology& t = *k.sc.topology;
    const SpiceLoop ng = read_spice_loop(runs[2 * n]);
    const double ng_f_high = read_f_high(runs[2 * n + 1]);
    const stages::LoopGain* ours = &k.ours;
    const auto& fast = k.fast;
    const auto& exact = k.exact;
    const StageCase& sc = k.sc;
    const double load_f = k.load_f, f_zero = k.f_zero;
    const std::size_t cf = t.role_index("CF");
    INFO(sc.label, ", CL ", load_f, " F, CF zero ", f_zero, " Hz");
    MESSAGE(
        fmt::format("{}, CL {:g} F, CF zero {:g} Hz: |T| {:.4g} (ngspice {:.4g}), crossover {:.4g} Hz "
                    "({:.4g}), margin {:.1f} deg ({:.1f}); f_high fast {:.4g}, exact {:.4g}, ngspice {:.4g}",
                    sc.label, load_f, f_zero, ours->mid, ng.mid, ours->f_cross_hz, ng.f_cross, ours->phase_margin_deg,
                    ng.margin_deg, fast.f_high_hz, exact.f_high_hz, ng_f_high));
    CHECK(ours->mid == doctest::Approx(ng.mid).epsilon(0.01));
    CHECK(ours->crosses() == ng.crosses);
    if (ours->crosses() && ng.crosses) {
      CHECK(ours->f_cross_hz == doctest::Approx(ng.f_cross).epsilon(0.02));
      CHECK(std::abs(ours->phase_margin_deg - ng.margin_deg) < 1.5);
    }
    CHECK(exact.f_high_hz == doctest::Approx(ng_f_high).epsilon(0.01));
    CHECK(fast.f_high_hz == doctest::Approx(ng_f_high).epsilon(0.01));
    ++compared;
    if (f_zero > 0) {
      ++with_cf;
      // A zero inside the band takes the gain down toward one above it.
      StageCase bare = sc;
      bare.values[cf] = 0;
      if (f_zero < 1e5 && fast.f_high_hz < t.evaluate(bare.values, bare.q, bare.c, stages::Detail::full).f_high_hz)
        ++shortened;
    }
  }
  CHECK(compared >= 60);
  CHECK(with_cf >= 40);
  CHECK(shortened >= 15);
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
