// Tests of src/stages/exact.cpp: evaluate_exact (the MNA solver on the stage netlist) against
// the fast closed-form evaluators over seeded random cases of every topology, with the
// tolerances the ngspice comparisons use (the exact evaluator itself is checked against
// ngspice in the per-topology tests).
#include "shelfstage/stages/exact.hpp"

#include <doctest/doctest.h>

#include <functional>
#include <random>

#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;

namespace {

// A random stage: a piece drawn from the spread model, supply, load, source, degeneration and
// bias drawn over wide ranges, then every part value scattered by up to +/-35 % (so that the
// bias is not always where the design put it; cases that leave the active region are skipped).
StageCase random_case(const Topology& t, std::mt19937_64& rng, int index) {
  std::uniform_real_distribution<double> u(0.0, 1.0);
  auto log_uniform = [&](double lo, double hi) { return lo * std::pow(hi / lo, u(rng)); };
  const bool jfet = t.accepts(DeviceKind::njfet);
  const bool mirrored = u(rng) < 0.3;
  const devices::DeviceSpread spread(jfet ? (mirrored ? pjfet_record() : njfet_record())
                                          : (mirrored ? pnp_record() : npn_record()));
  const auto piece = spread.samples(1, rng())[0];
  Conditions c;
  c.supply_v = std::round(log_uniform(5, 24));
  c.load_ohm = log_uniform(1e3, 100e3);
  const bool follower = t.is_buffer();
  c.source_ohm = (u(rng) < 0.25 && !follower) ? 0.0 : log_uniform(50, 100e3);
  Design d;
  const double pick = u(rng);
  d.degeneration = pick < 0.25 ? 0.0 : pick < 0.5 ? 1.0 : u(rng);
  d.current_frac = 0.12 + 0.5 * u(rng);
  d.current_a = log_uniform(0.1e-3, 5e-3);
  d.gate_frac = 0.03 + 0.25 * u(rng);
  d.f_corner_hz = log_uniform(0.5, 20);
  StageCase sc = design_stage(t, jfet ? jfet_piece(spread, piece) : bjt_piece(spread, piece), c, d,
                              jfet ? 0.0 : spread.nominal().hfe);
  for (std::size_t i = 0; i < t.roles().size(); ++i)
    if (sc.values[i] > 0) sc.values[i] *= std::exp(0.35 * (2 * u(rng) - 1));
  sc.label = fmt::format("{} random case {} ({}, {} V, RL {:.3g}, Rsig {:.3g})", t.name(), index, piece.tag, c.supply_v,
                         c.load_ohm, c.source_ohm);
  return sc;
}

}  // namespace

TEST_CASE("Fast evaluators against evaluate_exact over seeded random cases of every topology") {
  const Tolerances tol;
  for (const Topology* t : stages::registry()) {
    if (!takes_transistors(*t)) continue;  // op-amp stages: opamp_stages_test.cpp
    ErrorLog log;
    std::mt19937_64 rng(20240611);
    int compared = 0, skipped = 0, pair_short = 0;
    for (int i = 0; i < 80; ++i) {
      StageCase sc = random_case(*t, rng, i);
      INFO(sc.label);
      const Performance core = t->evaluate(sc.values, sc.q, sc.c, stages::Detail::core);
      if (!core.active || core.swing_peak_v <= 0) {
        ++skipped;
        continue;
      }
      sc.c.hd2_peak_v = 0.15 * core.swing_peak_v;
      // Noise is compared in the middle of the band (geometric mean of the corners): the
      // fast evaluators give the mid-band figure, with the coupling capacitors as shorts.
      // Near a low corner the exact figure differs for a physical reason they leave out:
      // RG's noise reaches the gate through CIN's reactance (about +11 % at 1 kHz with the
      // input corner at 21 Hz and RG = 1 MOhm).
      const Performance probe = t->evaluate(sc.values, sc.q, sc.c, stages::Detail::full);
      sc.c.noise_f_hz = std::sqrt(probe.f_low_hz * (probe.f_high_hz > 0 ? std::min(probe.f_high_hz, 1e10) : 1e10));
      const Performance fast = t->evaluate(sc.values, sc.q, sc.c, stages::Detail::full);
      const Performance exact = stages::evaluate_exact(*t, sc.values, sc.q, sc.c, stages::Detail::full);
      if (!exact.active) {
        ++skipped;
        continue;
      }
      ++compared;
      const std::string pre = fmt::format("{} fast vs exact ", t->name());
      check_close(log, pre + "V gate/base", sc.label, fast.v_in, exact.v_in, tol.op, tol.op_floor_v);
      check_close(log, pre + "V source/emitter", sc.label, fast.v_common, exact.v_common, tol.op, tol.op_floor_v);
      check_close(log, pre + "V drain/collector", sc.label, fast.v_out, exact.v_out, tol.op, tol.op_floor_v);
      check_close(log, pre + "supply current", sc.label, fast.supply_current_a, exact.supply_current_a, tol.op);
      check_close(log, pre + "gain", sc.label, fast.gain, exact.gain, tol.gain);
      check_close(log, pre + "zin", sc.label, fast.zin_ohm, exact.zin_ohm, tol.gain);
      check_close(log, pre + "zout", sc.label, fast.zout_ohm, exact.zout_ohm, tol.gain);
      check_close(log, pre + "f_low", sc.label, fast.f_low_hz, exact.f_low_hz, tol.corner);
      if (exact.f_high_hz == 0)
        CHECK_MESSAGE(fast.f_high_hz > 1e10, "no upper corner below 10 GHz, the fast evaluator puts one at ",
                      fast.f_high_hz);
      else
        check_close(log, pre + "f_high", sc.label, fast.f_high_hz, exact.f_high_hz, tol.corner);
      check_close(log, pre + "input noise", sc.label, fast.noise_v_rthz, exact.noise_v_rthz, tol.noise);
      // HD2 is compared down to 2e-5 (0.002 %). Below that the fast evaluator's second-order
      // expansion is not the whole story: where strong local feedback (a large source
      // resistance into a degenerated or follower stage) all but cancels the second-order
      // term, the fourth-order terms reach the second harmonic at the same size (seen: 2.7e-5
      // expanded, 3.9e-5 exact at 15 % of the swing, 3.0e-5 exact at 3 %). evaluate_exact
      // also resolves the harmonic only to about a microvolt (64 quasi-static points, each
      // stopping at the solver's vntol of 0.1 uV).
      check_close(log, pre + "HD2", sc.label, fast.hd2, exact.hd2, tol.hd2, std::max(2e-5, 1e-6 / sc.c.hd2_peak_v));
      // A feedback pair's swing is the straight line from the bias to the first device limit.
      // Toward Q2's cut-off it stops early: as Q2's current falls the loop gain goes with it
      // and the output moves further per ampere than at the bias (seen: 0.156 V against
      // 0.209 V, a stage of gain 3 whose Q2 ran at 83 uA), and in a build scattered so far that
      // its output sits near a rail, the other side can stop well short as well. Short of the
      // exact is safe (the search asks for less than there is), past it is not: never past it,
      // and within 30 % in nine cases of ten. The same-polarity form checks its line on the
      // quasi-static sweep (pair.cpp, check_swing) and so meets the exact where Q1 saturates,
      // but its falling side still stops where the line has Q1 cut off, which the sweep's
      // criterion puts further on (seen: 2.79 V against 5.43 V, a Q1 at 0.24 V from
      // saturation at rest): within 30 % in four cases of five.
      const bool pair = t->second_device() != stages::SecondDevice::none;
      for (const auto& [side, f, x] : {std::tuple{"swing up", fast.swing_up_v, exact.swing_up_v},
                                       std::tuple{"swing down", fast.swing_down_v, exact.swing_down_v}}) {
        if (pair && f < x) {
          if (f < 0.7 * x) ++pair_short;
        } else {
          check_close(log, pre + side, sc.label, f, x, tol.swing);
        }
      }
    }
    const int short_share = t->second_device() == stages::SecondDevice::same ? 5 : 10;
    CHECK_MESSAGE(pair_short * short_share <= compared, t->name(), ": ", pair_short,
                  " swings more than 30 % short of the exact");
    // The sweep must mostly land in the active region, or it tests nothing. The same-polarity
    // pair leaves Q1 a volt or two between its emitter and Q2's base: parts scattered by a
    // third each way saturate it in about half the cases.
    const int least = t->second_device() == stages::SecondDevice::same ? 36 : 48;
    CHECK_MESSAGE(compared >= least, t->name(), ": only ", compared, " of 80 random cases were active");
    log.report(fmt::format("{}: {} cases compared, {} skipped (not active); worst relative error", t->name(), compared,
                           skipped));
  }
}

// Common practice (docs/physics.md, Small signal at mid-band): a source of output impedance
// Zo into a load ZL delivers ZL/(Zo + ZL) of its open-circuit voltage; a load equal to Zout
// loses half the voltage, 6.02 dB. Checked for every topology with each evaluator's own
// Zout, so the output impedance and the gain must tell one consistent Thevenin story.
TEST_CASE("Common practice: a load equal to the output impedance loses 6 dB, every topology") {
  for (const Topology* t : stages::registry()) {
    if (!takes_transistors(*t)) continue;  // op-amp stages: opamp_stages_test.cpp
    CAPTURE(t->name());
    const bool jfet = t->accepts(DeviceKind::njfet);
    const devices::DeviceSpread spread(n_record_for(*t));
    Conditions c;
    c.source_ohm = 1e3;
    c.load_ohm = 10e3;
    Design d;
    d.degeneration = 0.4;
    const auto q = piece_of(spread, spread.nominal());
    const StageCase sc = design_stage(*t, q, c, d, jfet ? 0.0 : spread.nominal().hfe);
    using Eval = std::function<Performance(const Conditions&)>;
    const Eval fast = [&](const Conditions& k) { return t->evaluate(sc.values, sc.q, k, stages::Detail::core); };
    const Eval exact = [&](const Conditions& k) {
      return stages::evaluate_exact(*t, sc.values, sc.q, k, stages::Detail::core);
    };
    for (const auto& [who, eval] : {std::pair{"fast", fast}, std::pair{"exact", exact}}) {
      CAPTURE(who);
      Conditions open = c;
      open.load_ohm = 1e9;
      Conditions matched = c;
      matched.load_ohm = eval(c).zout_ohm;
      const double loss_db = 20.0 * std::log10(std::abs(eval(matched).gain) / std::abs(eval(open).gain));
      CHECK(loss_db == doctest::Approx(-6.02).epsilon(0.3 / 6.02));
    }
  }
}
