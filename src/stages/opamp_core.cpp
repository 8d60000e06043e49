// The closed form of an op-amp gain stage (opamp_core.hpp).
#include "opamp_core.hpp"

#include "roots.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

namespace shelfstage::stages::detail {

namespace {

constexpr double kBoltzmann = 1.380649e-23;  // J/K (SI definition)

double par(double a, double b) { return a > 0 && b > 0 ? a * b / (a + b) : 0.0; }

// The resistance the inverting stage's RG presents with the source in series.
double rg_seen(const OpampCircuit& s) { return s.wiring == OpampWiring::inverting ? s.rg + s.source_ohm : s.rg; }

}  // namespace

OpampLoop opamp_loop(const OpampCircuit& s) {
  OpampLoop l;
  const double rg = rg_seen(s);
  l.beta = rg > 0 ? rg / (rg + s.rf) : 1.0;
  l.noise_gain = 1.0 / l.beta;
  l.ideal_gain = s.wiring == OpampWiring::inverting ? -s.rf / rg : l.noise_gain;
  return l;
}

std::complex<double> open_loop(const devices::OpampInstance& q, double w) {
  using cd = std::complex<double>;
  const double w1 = 2 * std::numbers::pi * q.pole1_hz();
  cd a = q.aol / cd(1.0, w1 > 0 ? w / w1 : 0.0);
  if (q.pole2_hz > 0) a /= cd(1.0, w / (2 * std::numbers::pi * q.pole2_hz));
  return a;
}

double output_ohm(const devices::OpampInstance& q) { return std::max(q.out_drop_ohm, 0.0); }

std::complex<double> loop_gain(const OpampCircuit& s, const devices::OpampInstance& q, double w) {
  using cd = std::complex<double>;
  const OpampLoop l = opamp_loop(s);
  // What the output pin drives: the load, its capacitance, and the feedback network.
  cd y = s.load_ohm > 0 ? 1.0 / s.load_ohm : 0.0;
  y += cd(0.0, w * s.load_farads);
  const double r_fb = s.wiring == OpampWiring::inverting ? s.rf : (s.rg > 0 ? s.rf + s.rg : 0.0);
  if (r_fb > 0) y += 1.0 / r_fb;
  const cd divider = 1.0 / (1.0 + output_ohm(q) * y);
  return open_loop(q, w) * divider * l.beta;
}

std::complex<double> closed_loop(const OpampCircuit& s, const devices::OpampInstance& q, double w) {
  const OpampLoop l = opamp_loop(s);
  const std::complex<double> t = loop_gain(s, q, w);
  return l.ideal_gain * t / (1.0 + t);
}

OpampMargin opamp_margin(const OpampCircuit& s, const devices::OpampInstance& q) {
  const double two_pi = 2 * std::numbers::pi;
  auto mag = [&](double f) { return std::abs(loop_gain(s, q, two_pi * f)); };
  OpampMargin m;
  double lo = 1e-3, m_lo = mag(lo);
  if (m_lo <= 1.0) return m;
  // |T| falls monotonically for these networks: a bracket in log f between a point above one
  // and a point below, then regula falsi (Illinois) on log |T| against log f, where |T| falls
  // nearly as a power of f (a bisection step every fourth, so the bracket always shrinks). To
  // a part in 1e11, as forty halvings of the bracket's sixteen decades gave, in about a
  // quarter of the evaluations: each listed design's corners, tolerance ends and Monte Carlo
  // builds take one apiece.
  // (A decade still above one is the bracket's low end; each end's |T| is kept, not worked
  // out again.)
  double hi = std::max(1.0, q.gbw_hz), m_hi = mag(hi);
  while (hi < 1e13 && m_hi > 1.0) {
    lo = hi;
    m_lo = m_hi;
    hi *= 10.0;
    m_hi = mag(hi);
  }
  if (hi >= 1e13) return m;
  Bracket b{std::log(lo), std::log(m_lo), std::log(hi), std::log(m_hi)};
  illinois(
      b, [&](double x) { return std::log(mag(std::exp(x))); }, 1e-11, 200, 4);
  m.f_cross_hz = std::exp(0.5 * (b.lo + b.hi));
  // The phase unwrapped, pole by pole (each lags 0..90 degrees; the output divider too).
  const double w = two_pi * m.f_cross_hz;
  double phase = -std::atan(w / (two_pi * q.pole1_hz()));
  if (q.pole2_hz > 0) phase -= std::atan(w / (two_pi * q.pole2_hz));
  phase += std::arg(loop_gain(s, q, w) / open_loop(q, w));
  m.margin_deg = 180.0 + phase * 180.0 / std::numbers::pi;
  return m;
}

double closed_loop_f_high(const OpampCircuit& s, const devices::OpampInstance& q) {
  const double g0 = std::abs(closed_loop(s, q, 0.0)), target = g0 / std::numbers::sqrt2;
  const double two_pi = 2 * std::numbers::pi;
  auto mag = [&](double f) { return std::abs(closed_loop(s, q, two_pi * f)); };
  // Up from well inside the band, sixteen points a decade, to the first fall below -3 dB (a
  // two-pole loop may peak on the way); then bisection in log f.
  const double step = std::pow(10.0, 1.0 / 16.0);
  double lo = q.gbw_hz * opamp_loop(s).beta / 100.0;
  while (lo > 1e-3 && mag(lo) < target) lo /= 10.0;
  double hi = lo;
  while (hi < 1e12 && mag(hi) >= target) {
    lo = hi;
    hi *= step;
  }
  if (hi >= 1e12) return 0.0;
  for (int i = 0; i < 40; ++i) {
    const double mid = std::sqrt(lo * hi);
    (mag(mid) >= target ? lo : hi) = mid;
  }
  return std::sqrt(lo * hi);
}

double full_power_hz(const devices::OpampInstance& q, double v_peak) {
  return v_peak > 0 ? q.slew_v_per_s / (2 * std::numbers::pi * v_peak) : std::numeric_limits<double>::infinity();
}

double opamp_swing_peak(const OpampCircuit& s, const devices::OpampInstance& q, double v_out_dc) {
  // The output drives the load and the feedback network: RF + RG to the reference for the
  // non-inverting stage (none through a follower's wire), RF to the virtual ground for the
  // inverting one. g: amperes per volt of output peak.
  double g = 1.0 / s.load_ohm;
  if (s.wiring == OpampWiring::inverting)
    g += s.rf > 0 ? 1.0 / s.rf : 0.0;
  else if (s.rg > 0)
    g += 1.0 / (s.rf + s.rg);
  const double up = (s.v_pos - v_out_dc - q.out_drop_hi_v) / (1.0 + q.out_drop_ohm * g);
  const double down = (v_out_dc - s.v_neg - q.out_drop_lo_v) / (1.0 + q.out_drop_ohm * g);
  double peak = std::min(up, down);
  if (q.iout_max_a > 0) peak = std::min(peak, q.iout_max_a / g);
  return std::max(0.0, peak);
}

double opamp_cm_room(const OpampCircuit& s, const devices::OpampInstance& q, double v_in_peak) {
  const double top = s.v_pos - q.cm_drop_hi_v, bottom = s.v_neg + q.cm_drop_lo_v;
  const double swing = s.wiring == OpampWiring::non_inverting ? v_in_peak : 0.0;
  return std::min(top - (s.v_ref + swing), (s.v_ref - swing) - bottom);
}

double opamp_dc_error(const OpampCircuit& s, const devices::OpampInstance& q) {
  // V- = V+ + Vos with V+ = -Ib+ R+ (the current into the input drawn through R+); the - node
  // then gives Vo = NG_dc (Vos - Ib+ R+) + Ib- RF: with RG cut off at DC the noise gain there
  // is one.
  const double ng_dc = s.rg_ac_coupled ? 1.0 : opamp_loop(s).noise_gain;
  return ng_dc * (q.vos_v - q.ib_plus_a * s.r_plus) + q.ib_minus_a * s.rf;
}

double opamp_input_noise(const OpampCircuit& s, const devices::OpampInstance& q, double celsius) {
  const double kt4 = 4 * kBoltzmann * (celsius + 273.15);
  const OpampLoop l = opamp_loop(s);
  const double rg = rg_seen(s);
  // The + input's resistance: the source beside the bias resistor (non-inverting), or the
  // bias resistor alone (inverting: the source is in RG).
  const double r_plus = s.r_plus_ac >= 0 ? s.r_plus_ac : s.r_plus;
  const double rp =
      s.wiring == OpampWiring::non_inverting ? (r_plus > 0 ? par(r_plus, s.source_ohm) : s.source_ohm) : r_plus;
  // Output noise: the + input's sources times the noise gain; in through RF, RF's own, and
  // RG's carried to the output by RF/RG.
  double out2 =
      l.noise_gain * l.noise_gain * (q.en_v_rthz * q.en_v_rthz + kt4 * rp + q.in_a_rthz * q.in_a_rthz * rp * rp);
  if (s.rf > 0) out2 += q.in_a_rthz * q.in_a_rthz * s.rf * s.rf + kt4 * s.rf;
  if (rg > 0 && s.rf > 0) out2 += (s.rf / rg) * (s.rf / rg) * kt4 * rg;
  return std::sqrt(out2) / std::abs(l.ideal_gain);
}

}  // namespace shelfstage::stages::detail
