// Tests of src/stages/opamp_core.cpp, the op-amp stage's closed form, against the standard
// single-op-amp results worked by hand (from memory of the usual texts: closed-loop gain
// A/(1 + A beta); closed-loop band GBW beta for one pole; with a second pole at twice the
// loop's unity-gain frequency the closed loop is a maximally flat second-order response whose
// -3 dB point is sqrt(2) GBW beta; full-power bandwidth SR/(2 pi Vpeak); output error
// NG (Vos - Ib+ R+) + Ib- RF; thermal noise 4kTR). The macro-model check against ngspice
// comes with the op-amp topologies.
#include "../src/stages/opamp_core.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

using namespace shelfstage;
using namespace shelfstage::stages::detail;

namespace {

devices::OpampInstance piece(double gbw, double aol, double pole2 = 0) {
  devices::OpampInstance q;
  q.gbw_hz = gbw;
  q.aol = aol;
  q.pole2_hz = pole2;
  q.slew_v_per_s = 0.5e6;
  q.out_drop_hi_v = q.out_drop_lo_v = 1.5;
  q.out_drop_ohm = 100;
  q.iout_max_a = 20e-3;
  q.cm_drop_hi_v = q.cm_drop_lo_v = 2;
  return q;
}

OpampCircuit non_inverting(double rf, double rg) {
  OpampCircuit s;
  s.rf = rf;
  s.rg = rg;
  s.r_plus = 100e3;
  s.load_ohm = 10e3;
  s.v_pos = 12;
  s.v_neg = -12;
  return s;
}

}  // namespace

// The textbook forms below take an ideal output (no output resistance).
devices::OpampInstance ideal_output(devices::OpampInstance q) {
  q.out_drop_ohm = 0;
  return q;
}

TEST_CASE("op-amp stage gain: the ratio less the open-loop gain's share, both wirings") {
  const auto q = ideal_output(piece(1e6, 1e5));
  // Non-inverting 1 + 90k/10k = 10: 10 / (1 + 10/1e5) = 9.999.
  const OpampCircuit ni = non_inverting(90e3, 10e3);
  CHECK(opamp_loop(ni).noise_gain == doctest::Approx(10));
  CHECK(closed_loop(ni, q, 0).real() == doctest::Approx(10.0 / (1 + 10.0 / 1e5)).epsilon(1e-12));
  // A follower: RG absent, beta one.
  const OpampCircuit buf = non_inverting(0, 0);
  CHECK(closed_loop(buf, q, 0).real() == doctest::Approx(1e5 / (1 + 1e5)).epsilon(1e-12));
  // Inverting -100k/(9k + 1k source) = -10; noise gain 11; -10 / (1 + 11/1e5).
  OpampCircuit inv = non_inverting(100e3, 9e3);
  inv.wiring = OpampWiring::inverting;
  inv.source_ohm = 1e3;
  CHECK(opamp_loop(inv).ideal_gain == doctest::Approx(-10));
  CHECK(opamp_loop(inv).noise_gain == doctest::Approx(11));
  CHECK(closed_loop(inv, q, 0).real() == doctest::Approx(-10.0 / (1 + 11.0 / 1e5)).epsilon(1e-12));
  // The output resistance (100 ohm) divides with what the output drives, the load (10k) and
  // RF + RG (100k): the loop gain falls by 1 / (1 + 100 (1/10k + 1/100k)) = 1/1.011.
  const auto r = piece(1e6, 1e5);
  CHECK(std::abs(loop_gain(ni, r, 0)) == doctest::Approx(1e5 * 0.1 / 1.011).epsilon(1e-12));
  CHECK(output_ohm(r) == 100);
}

TEST_CASE("op-amp stage band: GBW over the noise gain for one pole; sqrt(2) of it for a maximally flat two-pole loop") {
  const OpampCircuit ni = non_inverting(90e3, 10e3);  // noise gain 10
  // One pole: the closed loop is a single pole at GBW beta (1 + 1/(Aol beta)) ~ 100 kHz.
  CHECK(closed_loop_f_high(ni, ideal_output(piece(1e6, 1e6))) == doctest::Approx(1e5).epsilon(2e-4));
  // A second pole at twice the loop's crossover (200 kHz): Butterworth, -3 dB at 141 kHz, no
  // peaking above the DC gain.
  const auto q2 = ideal_output(piece(1e6, 1e6, 2e5));
  CHECK(closed_loop_f_high(ni, q2) == doctest::Approx(std::numbers::sqrt2 * 1e5).epsilon(2e-3));
  double peak = 0;
  for (double f = 1e3; f < 1e6; f *= 1.05)
    peak = std::max(peak, std::abs(closed_loop(ni, q2, 2 * std::numbers::pi * f)));
  CHECK(peak <= std::abs(closed_loop(ni, q2, 0)) * (1 + 1e-3));
  // Full power at 5 V peak with 0.5 V/us: 15.9 kHz.
  CHECK(full_power_hz(q2, 5.0) == doctest::Approx(0.5e6 / (2 * std::numbers::pi * 5)));
}

TEST_CASE("op-amp stage swing: the rails less the headroom at the current the peak drives") {
  const auto q = piece(1e6, 1e5);
  // Into 10k and RF + RG = 100k from +/-12 V: g = 110 uS; (12 - 1.5) / (1 + 100 * 110e-6).
  const OpampCircuit ni = non_inverting(90e3, 10e3);
  CHECK(opamp_swing_peak(ni, q, 0.0) == doctest::Approx(10.5 / (1 + 100 * 110e-6)));
  // A DC of +2 V out takes 2 V from the top.
  CHECK(opamp_swing_peak(ni, q, 2.0) == doctest::Approx(8.5 / (1 + 100 * 110e-6)));
  // Into 100 ohm the 20 mA limit binds first: 2 V.
  OpampCircuit heavy = ni;
  heavy.load_ohm = 100;
  const double g = 1.0 / 100 + 1.0 / 100e3;
  CHECK(opamp_swing_peak(heavy, q, 0.0) == doctest::Approx(20e-3 / g));
  // Common-mode room: a non-inverting input of 1 V peak about 0 V against 12 - 2 V: 9 V;
  // the inverting stage's inputs stay at the reference: 10 V.
  CHECK(opamp_cm_room(ni, q, 1.0) == doctest::Approx(9.0));
  OpampCircuit inv = ni;
  inv.wiring = OpampWiring::inverting;
  CHECK(opamp_cm_room(inv, q, 1.0) == doctest::Approx(10.0));
}

TEST_CASE("op-amp stage DC error: offset and bias currents through the resistances, worked by hand") {
  auto q = piece(1e6, 1e5);
  q.vos_v = 2e-3;
  q.ib_plus_a = q.ib_minus_a = 100e-9;
  // Gain 10, R+ 100k, RF 90k: 10 (2 mV - 10 mV) + 9 mV = -71 mV.
  const OpampCircuit ni = non_inverting(90e3, 10e3);
  CHECK(opamp_dc_error(ni, q) == doctest::Approx(10 * (2e-3 - 100e-9 * 100e3) + 100e-9 * 90e3));
  // R+ matched to RF || RG (9k): the bias currents cancel, the offset remains: 20 mV.
  OpampCircuit matched = ni;
  matched.r_plus = 9e3;
  CHECK(opamp_dc_error(matched, q) == doctest::Approx(20e-3));
  // RG to the reference through a capacitor: unity gain at DC: 2 mV - 10 mV + 9 mV = 1 mV.
  OpampCircuit coupled = ni;
  coupled.rg_ac_coupled = true;
  CHECK(opamp_dc_error(coupled, q) == doctest::Approx(1e-3));
}

TEST_CASE("op-amp stage noise: the op-amp's en alone, then the resistors' 4kTR") {
  auto q = piece(1e6, 1e5);
  q.en_v_rthz = 10e-9;
  // A follower from 0 ohm: en itself.
  CHECK(opamp_input_noise(non_inverting(0, 0), q, 25) == doctest::Approx(10e-9));
  // A follower from 10k (bias resistor absent): en and the source's 12.8 nV/rtHz at 25 C.
  OpampCircuit src = non_inverting(0, 0);
  src.r_plus = 0;
  src.source_ohm = 10e3;
  const double kt4 = 4 * 1.380649e-23 * 298.15;
  CHECK(opamp_input_noise(src, q, 25) == doctest::Approx(std::sqrt(1e-16 + kt4 * 10e3)));
}

TEST_CASE("op-amp loop crossing: |T| is one there to a part in 1e9, and a one-pole loop keeps 90 degrees") {
  // The crossing is found by regula falsi on log |T| against log f: checked here on the loop
  // itself over a grid of op-amps, feedback ratios, output resistances and second poles.
  int checked = 0;
  for (const double gbw : {1e5, 1e6, 3e6, 1e7})
    for (const double aol : {1e4, 2e5})
      for (const double pole2_per_gbw : {0.0, 0.7, 2.0, 10.0})
        for (const double out_ohm : {0.0, 100.0})
          for (const double rf : {0.0, 9e3, 90e3, 990e3}) {
            auto q = piece(gbw, aol, pole2_per_gbw * gbw);
            q.out_drop_ohm = out_ohm;
            const OpampCircuit s = non_inverting(rf, rf > 0 ? 10e3 : 0.0);
            const OpampMargin m = opamp_margin(s, q);
            REQUIRE(m.f_cross_hz > 0);
            const double t = std::abs(loop_gain(s, q, 2 * std::numbers::pi * m.f_cross_hz));
            CHECK(t == doctest::Approx(1.0).epsilon(1e-9));
            ++checked;
          }
  CHECK(checked == 256);
  // One pole (textbook): the loop crosses at GBW x beta with 90 degrees to spare, less the
  // small lag of the output divider (none here).
  const auto q = ideal_output(piece(1e6, 1e5));
  const OpampMargin m = opamp_margin(non_inverting(90e3, 10e3), q);
  CHECK(m.f_cross_hz == doctest::Approx(1e5).epsilon(2e-3));
  CHECK(m.margin_deg == doctest::Approx(90.0).epsilon(2e-3));
}
