// Closed-form building blocks shared by the stage evaluators.
#include "common.hpp"

#include <algorithm>
#include <array>
#include <complex>
#include <limits>
#include <numbers>

#include <fmt/format.h>

#include "shelfstage/devices/models.hpp"

namespace shelfstage::stages {

double par(double a, double b) {
  if (a <= 0) return b;
  if (b <= 0) return a;
  if (std::isinf(a)) return b;
  if (std::isinf(b)) return a;
  return a * b / (a + b);
}

namespace detail {

JfetBias jfet_bias(const devices::JfetInstance& q, double vg, double rs, double rd, double vdd) {
  JfetBias b;
  const double vp = q.vp_abs_v;
  if (vg + vp <= 0) return b;  // gate held below pinch-off: cut off
  double beta = q.beta();
  double vds = vdd;
  for (int it = 0; it < 4; ++it) {
    // ID = beta*u^2 with u = VGS - VTO = vg - ID*rs + vp:  rs*beta*u^2 + u - (vg + vp) = 0.
    double u;
    if (rs > 0) {
      const double k = rs * beta;
      u = (-1.0 + std::sqrt(1.0 + 4.0 * k * (vg + vp))) / (2.0 * k);
    } else {
      u = vg + vp;
    }
    b.vgst_v = u;
    b.id_a = beta * u * u;
    const double vds_new = vdd - b.id_a * (rd + rs);
    b.beta_eff = beta;
    if (std::abs(vds_new - vds) < 1e-9 || q.lambda_per_v == 0) {
      vds = vds_new;
      break;
    }
    vds = vds_new;
    beta = q.beta() * (1.0 + q.lambda_per_v * std::max(0.0, vds));
  }
  b.beta_eff = beta;
  b.conducts = true;
  b.vs_v = b.id_a * rs;
  b.vgs_v = vg - b.vs_v;
  b.vd_v = vdd - b.id_a * rd;
  b.vds_v = b.vd_v - b.vs_v;
  b.gm_s = 2.0 * beta * b.vgst_v;
  const double gds = q.beta() * b.vgst_v * b.vgst_v * q.lambda_per_v;
  b.ro_ohm = gds > 0 ? 1.0 / gds : std::numeric_limits<double>::infinity();
  return b;
}

double newton_start_vbe(const devices::BjtInstance& q, double ic0_a) {
  if (!(ic0_a > 0) || !std::isfinite(ic0_a)) return 0.65;
  return std::clamp(q.vt_v * std::log1p(ic0_a / q.is_a), 0.3, 0.9);
}

namespace {

BjtBias solve_bjt_bias(const devices::BjtInstance& q, double vth, double rth, double re, double rc, double vcc) {
  BjtBias b;
  const double inv_vaf = (q.vaf_v > 0 && std::isfinite(q.vaf_v)) ? 1.0 / q.vaf_v : 0.0;
  // Unknown VBE; IC = IS*exp(VBE/VT)*(1 + VCB/VAF), IB = IS*exp(VBE/VT)/BF (forward active).
  // KVL: vth = IB*rth + VBE + IE*re. Newton on VBE. At a given VBE the Early factor is one
  // division: VCB = vcc - IC rc - (vth - IB rth) with IC = is_e early is linear in it
  // (held at one where the collector would sit below the base); Newton's slope carries its
  // change (exact Newton: four steps on average where the factor taken from the step before
  // took nine).
  auto early_at = [&](double is_e, double dis, double& slope) {
    slope = 0.0;
    if (!(inv_vaf > 0)) return 1.0;
    const double den = 1.0 + inv_vaf * is_e * rc;
    const double early = (1.0 + inv_vaf * (vcc - vth + is_e / q.bf * rth)) / den;
    if (!(early > 1.0)) return 1.0;
    slope = inv_vaf * (dis / q.bf * rth - early * dis * rc) / den;
    return early;
  };
  double vbe = newton_start_vbe(q, (vth - 0.65) / (re * (1.0 + 1.0 / q.bf) + rth / q.bf));
  for (int it = 0; it < 60; ++it) {
    const double e = std::exp(vbe / q.vt_v);
    const double is_e = q.is_a * (e - 1.0);
    const double dis = q.is_a * e / q.vt_v;
    double d_early = 0;
    const double early = early_at(is_e, dis, d_early);
    const double ib = is_e / q.bf;
    const double ic = is_e * early;
    const double ie = ic + ib;
    const double f = ib * rth + vbe + ie * re - vth;
    const double df = dis / q.bf * rth + 1.0 + (dis * early + is_e * d_early + dis / q.bf) * re;
    double step = f / df;
    step = std::clamp(step, -0.1, 0.1);
    vbe -= step;
    if (std::abs(step) < 1e-10) break;
  }
  const double e = std::exp(vbe / q.vt_v);
  const double is_e = q.is_a * (e - 1.0);
  double unused = 0;
  const double early = early_at(is_e, q.is_a * e / q.vt_v, unused);
  b.vbe_v = vbe;
  b.ib_a = is_e / q.bf;
  b.ic_a = is_e * early;
  b.ie_a = b.ic_a + b.ib_a;
  b.vb_v = vth - b.ib_a * rth;
  b.ve_v = b.ie_a * re;
  b.vc_v = vcc - b.ic_a * rc;
  b.vce_v = b.vc_v - b.ve_v;
  b.conducts = b.ic_a > 1e-9 && b.vb_v > 0.3;
  b.gm_s = b.ic_a / q.vt_v;
  b.beta_ac = q.bf * early;
  b.rpi_ohm = q.bf / (is_e / q.vt_v);  // dIB/dVBE = IS*e/(VT*BF)
  // Output conductance dIC/dVCE at fixed VBE: Ibe/VAF in the Gummel-Poon form.
  b.ro_ohm = inv_vaf > 0 ? q.vaf_v / std::max(is_e, 1e-30) : std::numeric_limits<double>::infinity();
  return b;
}

}  // namespace

BjtBias bjt_bias(const devices::BjtInstance& q, double vth, double rth, double re, double rc, double vcc) {
  return last_solved(std::array{q.is_a, q.bf, q.vaf_v, q.vt_v, vth, rth, re, rc, vcc},
                     [&] { return solve_bjt_bias(q, vth, rth, re, rc, vcc); });
}

double lf_corner_hz(std::span<const LfSection> s) {
  if (s.empty()) return 0.0;
  // |H(w)|^2 = prod (w^2 + z^2) / (w^2 + p^2), normalised to 1 at high frequency.
  auto h2 = [&](double w) {
    double r = 1.0;
    for (const auto& x : s) r *= (w * w + x.zero_rad * x.zero_rad) / (w * w + x.pole_rad * x.pole_rad);
    return r;
  };
  // Each section passes at most all of the signal, so the product is already 3 dB down at
  // the largest pole's shelf; and it is up within 3 dB by twice the sum of the poles.
  double sum = 0;
  for (const auto& x : s) sum += x.pole_rad;
  double hi = 2.0 * sum + 1e-12;
  if (h2(1e-9) >= 0.5) return 0.0;  // a shelf that never falls 3 dB
  double lo = 1e-9;
  // Monotonic in w for these sections: bisection in log w.
  for (int i = 0; i < 60; ++i) {
    const double mid = std::sqrt(lo * hi);
    (h2(mid) < 0.5 ? lo : hi) = mid;
  }
  return std::sqrt(lo * hi) / (2 * std::numbers::pi);
}

namespace {
// Complex arithmetic by hand: GCC's operator/ on std::complex calls __divdc3 (NaN and
// overflow care this well-scaled 3x3 does not need) and std::abs calls hypot; together
// they were most of an evaluation's time.
struct Cx {
  double re = 0, im = 0;
};
inline Cx operator+(Cx a, Cx b) { return {a.re + b.re, a.im + b.im}; }
inline Cx operator-(Cx a, Cx b) { return {a.re - b.re, a.im - b.im}; }
inline Cx operator*(Cx a, Cx b) { return {a.re * b.re - a.im * b.im, a.re * b.im + a.im * b.re}; }
inline Cx operator/(Cx a, Cx b) {
  const double d = b.re * b.re + b.im * b.im;
  return {(a.re * b.re + a.im * b.im) / d, (a.im * b.re - a.re * b.im) / d};
}
inline double norm2(Cx a) { return a.re * a.re + a.im * a.im; }
}  // namespace

namespace {
// Node voltages (base, emitter, collector) of the network driven by a unit Thevenin source.
std::array<Cx, 3> hybrid_pi_solve(const HybridPi& m, double w, Cx* share = nullptr) {
  const Cx ypi{m.gpi, w * m.cpi}, ymu{m.g_f, w * m.cmu};
  const Cx gsrc{m.g_src, 0}, gm{m.gm, 0}, go{m.go, 0};
  // The load's branch on the output node, in place of its conductance there.
  const LoadBranch lb = load_branch(m.g_load, m.c_load, m.c_out, w);
  const Cx yl{lb.y.real() - m.g_load, lb.y.imag()};
  if (share) *share = {lb.share.real(), lb.share.imag()};
  const Cx ge = Cx{m.g_e, 0.0} + (m.out_at_emitter ? yl : Cx{}), gc = Cx{m.g_c, 0.0} + (m.out_at_emitter ? Cx{} : yl);
  // Unknowns (vb, ve, vc); a unit Thevenin source drives g_src into the base.
  Cx a[3][4] = {
      {gsrc + ypi + ymu, Cx{} - ypi, Cx{} - ymu, gsrc},
      {Cx{} - ypi - gm, ypi + gm + go + ge, Cx{} - go, Cx{}},
      {gm - ymu, Cx{} - gm - go, ymu + go + gc, Cx{}},
  };
  for (int col = 0; col < 3; ++col) {  // Gaussian elimination with partial pivoting
    int piv = col;
    for (int r = col + 1; r < 3; ++r)
      if (norm2(a[r][col]) > norm2(a[piv][col])) piv = r;
    if (piv != col)
      for (int k = 0; k < 4; ++k) std::swap(a[col][k], a[piv][k]);
    for (int r = col + 1; r < 3; ++r) {
      const Cx f = a[r][col] / a[col][col];
      for (int k = col; k < 4; ++k) a[r][k] = a[r][k] - f * a[col][k];
    }
  }
  std::array<Cx, 3> x;
  for (int r = 2; r >= 0; --r) {
    Cx sum = a[r][3];
    for (int k = r + 1; k < 3; ++k) sum = sum - a[r][k] * x[static_cast<std::size_t>(k)];
    x[static_cast<std::size_t>(r)] = sum / a[r][r];
  }
  return x;
}
}  // namespace

double hybrid_pi_gain(const HybridPi& m, double w) {
  Cx share{1.0, 0.0};
  const auto x = hybrid_pi_solve(m, w, &share);
  return std::sqrt(norm2((m.out_at_emitter ? x[1] : x[2]) * share));
}

LoadBranch load_branch(double g_load, double c_load, double c_out, double w) {
  using cd = std::complex<double>;
  const cd yl(g_load, w * c_load);
  if (!(c_out > 0) || !(w > 0)) return {yl, 1.0};
  const cd yc(0.0, w * c_out);
  return {yc * yl / (yc + yl), yc / (yc + yl)};
}

double hybrid_pi_input_capacitance(const HybridPi& m, double w) {
  // The current the Thevenin source (1 V behind 1/g_src) drives into the base, over vb: the
  // device's input admittance (the bias network is inside the Thevenin source).
  const auto x = hybrid_pi_solve(m, w);
  const Cx i{m.g_src * (1.0 - x[0].re), -m.g_src * x[0].im};
  const Cx y = i / x[0];
  return y.im / w;
}

double hybrid_pi_dc_gain(const HybridPi& m) {
  // The same network with the capacitances open: a real 3x3 solve (Cramer's rule).
  const double a[3][3] = {{m.g_src + m.gpi + m.g_f, -m.gpi, -m.g_f},
                          {-m.gpi - m.gm, m.gpi + m.gm + m.go + m.g_e, -m.go},
                          {m.gm - m.g_f, -m.gm - m.go, m.go + m.g_c + m.g_f}};
  auto det3 = [](const double x[3][3]) {
    return x[0][0] * (x[1][1] * x[2][2] - x[1][2] * x[2][1]) - x[0][1] * (x[1][0] * x[2][2] - x[1][2] * x[2][0]) +
           x[0][2] * (x[1][0] * x[2][1] - x[1][1] * x[2][0]);
  };
  const double d = det3(a);
  const int col = m.out_at_emitter ? 1 : 2;
  double b[3][3];
  for (int r = 0; r < 3; ++r)
    for (int k = 0; k < 3; ++k) b[r][k] = k == col ? (r == 0 ? m.g_src : 0.0) : a[r][k];
  return std::abs(det3(b) / d);
}

double hybrid_pi_corner_hz(const HybridPi& m) {
  const double h0 = hybrid_pi_dc_gain(m);
  const double target = h0 / std::numbers::sqrt2;
  // Start from the open-circuit time-constant estimate and bracket the crossing.
  const double rb = 1.0 / (m.g_src + m.gpi);
  const double tau = rb * m.cpi + (rb + 1.0 / (m.g_c + m.go) + m.gm * rb / (m.g_c + m.go)) * m.cmu;
  double w = tau > 0 ? 1.0 / tau : 1e9;
  double lo = w, hi = w;
  if (hybrid_pi_gain(m, w) >= target) {
    while (hi < 1e14 && hybrid_pi_gain(m, hi) >= target) hi *= 4;
    lo = hi / 4;
    if (hi >= 1e14) return 1e14 / (2 * std::numbers::pi);
  } else {
    // Not below the output coupling's own corner, which the load branch also carries.
    const double floor = m.c_out > 0 ? 3.0 * m.g_load / m.c_out : 1e-3;
    while (lo > floor && hybrid_pi_gain(m, lo) < target) lo /= 4;
    hi = lo * 4;
  }
  for (int i = 0; i < 24; ++i) {
    const double mid = std::sqrt(lo * hi);
    (hybrid_pi_gain(m, mid) >= target ? lo : hi) = mid;
  }
  return std::sqrt(lo * hi) / (2 * std::numbers::pi);
}

void finish_response(Performance& p, std::span<const LfSection> lf, const HybridPi& device, const Conditions& c,
                     double c_out, Detail detail) {
  HybridPi m = device;
  m.c_load = c.load_farads;
  // Input capacitance well below the upper corner (the Miller multiplication holds there),
  // with the load as mid-band has it (COUT a short: at 10 Hz it is not yet one).
  p.c_in_f = hybrid_pi_input_capacitance(m, 2 * std::numbers::pi * 10.0);
  if (c.load_farads > 0 && c_out > 0) {
    m.c_out = c_out;
    m.g_load = 1.0 / c.load_ohm;
  }
  if (detail == Detail::full) {
    p.f_low_hz = lf_corner_hz(lf);
    p.f_high_hz = hybrid_pi_corner_hz(m);
  }
  if (c.band_lo_hz > 0) p.loss_lo_db = lf_loss_db(lf, c.band_lo_hz);
  if (c.band_hi_hz > 0) {
    const double r = hybrid_pi_gain(m, 2 * std::numbers::pi * c.band_hi_hz) / hybrid_pi_dc_gain(m);
    p.loss_hi_db = std::max(0.0, -20.0 * std::log10(r));
  }
}

bool jfet_operating_point(Performance& p, const JfetBias& b) {
  if (!b.conducts) {
    p.problem = "cut off";
    return false;
  }
  p.valid = true;
  p.active = b.saturated();
  if (!p.active) p.problem = fmt::format("in the triode region: VDS {:.2f} V < VGS-VP {:.2f} V", b.vds_v, b.vgst_v);
  p.bias_current_a = b.id_a;
  p.supply_current_a = b.id_a;
  return true;
}

void jfet_follower_swing(Performance& p, const devices::JfetInstance& j, const JfetBias& b, double r_ac) {
  p.swing_down_v = b.id_a * r_ac;
  const double up = triode_edge_excursion(j.beta(), j.lambda_per_v, b.id_a, b.vds_v, 1.0, r_ac);
  const double gate_limit = gate_conduction_excursion(j.beta(), j.lambda_per_v, j.vp_abs_v, b.id_a, b.vds_v, 1.0, r_ac);
  p.swing_up_v = std::max(0.0, std::min(up, gate_limit));
  p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
}

double lf_loss_db(std::span<const LfSection> sections, double f_hz) {
  const double w = 2 * std::numbers::pi * f_hz;
  double h2 = 1.0;
  for (const auto& x : sections) h2 *= (w * w + x.zero_rad * x.zero_rad) / (w * w + x.pole_rad * x.pole_rad);
  return std::max(0.0, -10.0 * std::log10(h2));
}

double cap_for(double r_ohm, double f_hz) { return 1.0 / (2 * std::numbers::pi * r_ohm * f_hz); }

bool screened_out(Performance& p, const Conditions& c) {
  if (c.distortion) return false;  // (the rated swing is not the clipping point then)
  const bool out = (c.least_clip_v > 0 && p.swing_peak_v < c.least_clip_v) ||
                   (c.most_current_a > 0 && p.supply_current_a > c.most_current_a) ||
                   (c.least_zin_ohm > 0 && p.zin_ohm < c.least_zin_ohm);
  p.cut_short = out;
  // What finish_distortion() gives with the distortion off: the rated swing is the clipping
  // point (violation() tells "swing" from "distortion" by it).
  if (out) p.clip_peak_v = p.swing_peak_v;
  return out;
}

std::vector<std::pair<double, double>> leg_splits(const ValueSource& shelf, double r_total) {
  std::vector<std::pair<double, double>> out;
  std::vector<double> near;
  shelf.nearest(r_total, 2, near);
  for (double r : near) {
    out.emplace_back(0.0, r);  // fully bypassed
    out.emplace_back(r, 0.0);  // no bypass
  }
  std::vector<double> r1s;
  shelf.spread(0.03 * r_total, 0.85 * r_total, 8, r1s);
  // And a small unbypassed part (a percent or so): a leg set mostly by its bypassed rest,
  // for a stiff bias with the gain still held by RE1.
  shelf.nearest(0.012 * r_total, 1, r1s);
  unique_values(r1s);
  for (double r1 : r1s) {
    std::vector<double> r2;
    shelf.nearest(r_total - r1, 1, r2);  // the nearest, and the single parts either side
    for (double x : r2) out.emplace_back(r1, x);
  }
  return out;
}

double load_resistor_for_gain(double a_int, double gm, double r_deg, double load_ohm) {
  double rl_ac = a_int * (1.0 / gm + r_deg);
  if (!(rl_ac > 0)) return 0.0;
  // Out of reach into this load: propose the most the load allows (RD = 9 RL), so the
  // search can say how close the stage comes.
  rl_ac = std::min(rl_ac, 0.9 * load_ohm);
  return 1.0 / (1.0 / rl_ac - 1.0 / load_ohm);
}

bool short_of_gain(const Goal& g, double most) {
  const bool out = !g.probe && most < 0.9 * g.gain_lo;
  if (out && g.left_out) {
    ++g.left_out->gain;
    g.left_out->least_gain = std::min(g.left_out->least_gain, most);
  }
  return out;
}

std::vector<double> load_resistors(const ValueSource& shelf, const Goal& g, double a_int, double gm, double r_deg,
                                   double load_ohm, double room_ohm, double most_current_a, double gm_most) {
  std::vector<double> out;
  const double want = load_resistor_for_gain(a_int, gm, r_deg, load_ohm);
  if (want > room_ohm && !g.probe) return out;
  const double r = std::min(want, room_ohm);
  if (r > 0) shelf.nearest(r, 2, out);
  std::erase_if(out, [&](double x) {
    return short_of_swing_up(g, most_current_a, x, load_ohm) ||
           short_of_gain(g, gm_most * par(x, load_ohm) / (1.0 + gm_most * r_deg));
  });
  return out;
}

double least_swing_current(const Goal& g, double load_ohm) {
  if (g.probe || !(g.swing_peak_v > 0) || !(load_ohm > 0)) return 0.0;
  return g.swing_peak_v / (3.0 * load_ohm);
}

bool short_of_swing_up(const Goal& g, double most_current_a, double pull_ohm, double load_ohm) {
  const bool out = !g.probe && g.swing_credit * most_current_a * par(pull_ohm, load_ohm) < g.swing_peak_v;
  if (out && g.left_out) ++g.left_out->swing;
  return out;
}

double jfet_drain_room(const JfetBias& b, const Goal& g, const Conditions& c) {
  return (c.supply_v - b.vs_v - b.vgst_v - g.swing_peak_v - 0.5) / b.id_a;
}

std::vector<double> gate_resistors(const ValueSource& shelf, double zin_min_ohm) {
  const double lo = std::max(zin_min_ohm * 1.06, 10e3);
  std::vector<double> out;
  shelf.spread(lo, std::max(10e6, lo), 16, out);
  shelf.nearest(std::max(1e6, lo), 1, out);
  std::erase_if(out, [&](double r) { return r < lo * 0.999; });
  unique_values(out);
  return out;
}

void unique_values(std::vector<double>& v) {
  std::sort(v.begin(), v.end());
  v.erase(std::unique(v.begin(), v.end(), [](double a, double b) { return std::abs(a - b) <= 1e-9 * std::abs(b); }),
          v.end());
}

double triode_edge_excursion(double beta0, double lambda, double id0, double vds0, double k, double r_ac) {
  // The quadratic in a for a fixed lambda factor, the factor then moved to the edge's VDS;
  // lambda*VDS is a small correction, so a few rounds settle it.
  double beta = beta0 * (1.0 + lambda * std::max(0.0, vds0));
  double a = 0.0;
  for (int round = 0; round < 4; ++round) {
    if (beta * vds0 * vds0 <= id0) return 0.0;  // already at or past the edge
    const double a2 = beta * k * k, a1 = -(2.0 * beta * k * vds0 + 1.0 / r_ac), a0 = beta * vds0 * vds0 - id0;
    const double disc = std::max(0.0, a1 * a1 - 4.0 * a2 * a0);
    // Smaller root, written to avoid cancellation.
    a = (2.0 * a0) / (-a1 + std::sqrt(disc));
    if (lambda == 0.0) break;
    beta = beta0 * (1.0 + lambda * std::max(0.0, vds0 - k * a));
  }
  return a;
}

double gate_conduction_excursion(double beta, double lambda, double vp_abs, double id0, double vds0, double k,
                                 double r_ac) {
  const double i_sat = beta * vp_abs * vp_abs;  // IDSS without lambda
  const double a = (i_sat * (1.0 + lambda * vds0) - id0) / (1.0 / r_ac + i_sat * lambda * k);
  return std::max(0.0, a);
}

double cgs_at(const devices::JfetInstance& q, double vgs) {
  return devices::depletion_capacitance(q.cgs_f, vgs, devices::kJfetPb, devices::kJfetM);
}
double cgd_at(const devices::JfetInstance& q, double vgd) {
  return devices::depletion_capacitance(q.cgd_f, vgd, devices::kJfetPb, devices::kJfetM);
}
double cbe_at(const devices::BjtInstance& q, double vbe) {
  return devices::depletion_capacitance(q.cje_f, vbe, devices::kBjtVj, devices::kBjtM);
}
double cbc_at(const devices::BjtInstance& q, double vbc) {
  return devices::depletion_capacitance(q.cjc_f, vbc, devices::kBjtVj, devices::kBjtM);
}

double thermal_v2(double r, double celsius) {
  return 4.0 * devices::kBoltzmann * (celsius + devices::kZeroCelsius) * r;
}

circuit::Circuit bench(const Conditions& c) {
  circuit::Circuit net;
  net.vsource("VDD", "supply", std::string(kNetSupply), "0", c.negative_rail ? -c.supply_v : c.supply_v);
  net.vsource("VSIG", "signal", std::string(kNetSignal), "0", 0.0, 1.0);
  net.resistor("RSIG", "source", std::string(kNetSignal), std::string(kNetIn), c.source_ohm > 0 ? c.source_ohm : 1e-3);
  net.resistor("RL", "load", std::string(kNetOut), "0", c.load_ohm);
  if (c.load_farads > 0)
    net.capacitor("CL", std::string(kRoleLoadCapacitance), std::string(kNetOut), "0", c.load_farads);
  return net;
}

void add_role(circuit::Circuit& net, std::span<const Role> roles, const Values& v, std::size_t i, const std::string& a,
              const std::string& b) {
  if (!(v[i] > 0)) return;
  const Role& r = roles[i];
  if (r.kind == 'R')
    net.resistor(std::string(r.designator), std::string(r.name), a, b, v[i]);
  else
    net.capacitor(std::string(r.designator), std::string(r.name), a, b, v[i]);
}

Stress cap_stress(std::size_t role, double dc_n_v, std::string_view pos, std::string_view neg) {
  Stress s;
  s.role = role;
  s.dc_n_v = dc_n_v;
  s.pos_n = pos;
  s.neg_n = neg;
  return s;
}

}  // namespace detail
}  // namespace shelfstage::stages

namespace shelfstage::stages::detail {

std::string wire_common_leg(circuit::Circuit& net, std::span<const Role> roles, const Values& v, const CommonRoles& r,
                            const std::string& main, const std::string& common) {
  add_role(net, roles, v, r.load, "vdd", main);
  const bool split = v[r.leg1] > 0 && v[r.leg2] > 0;
  add_role(net, roles, v, r.leg1, common, split ? "x" : "0");
  add_role(net, roles, v, r.leg2, split ? "x" : common, "0");
  if (v[r.leg2] > 0) add_role(net, roles, v, r.bypass, split ? "x" : common, "0");
  add_role(net, roles, v, r.cout, main, "out");
  return (v[r.leg1] > 0 || v[r.leg2] > 0) ? common : "0";
}

LoadLine common_load_line(const CommonRoles& r, const Values& v, const Conditions& c) {
  LoadLine l;
  l.r_dc_ohm = v[r.load];
  l.r_ac_ohm = par(v[r.load], c.load_ohm);
  l.r_unbypassed_ohm = v[r.leg1];
  l.r_common_ohm = v[r.leg1] + v[r.leg2];
  return l;
}

void reference_leg(Values& v, const CommonRoles& r, double r_total, double r_look, const ReferenceKnobs& k) {
  const double r_unb = k.degeneration * r_total;
  if (r_unb > 0) v[r.leg1] = r_unb;
  if (k.degeneration < 1.0) {
    v[r.leg2] = r_total - r_unb;
    v[r.bypass] = cap_for(par(r_total - r_unb, r_unb + r_look), k.f_corner_hz);
  }
}

void jfet_cs_reference(Values& v, const CommonRoles& r, const devices::JfetInstance& j, const Conditions& c,
                       const ReferenceKnobs& k, double vg_v, double r_gate_ohm) {
  const double id = k.current_frac * j.idss_a;
  const double vov = j.vp_abs_v * std::sqrt(k.current_frac);
  const double vgs = vov - j.vp_abs_v;  // <= 0
  const double gm = 2.0 * id / vov;
  const double vs = vg_v - vgs;
  const double vd = 0.5 * (vs + vov + c.supply_v);
  v[r.load] = (c.supply_v - vd) / id;
  reference_leg(v, r, vs / id, 1.0 / gm, k);
  v[r.cin] = cap_for(r_gate_ohm + c.source_ohm, k.f_corner_hz);
  v[r.cout] = cap_for(v[r.load] + c.load_ohm, k.f_corner_hz);
}

void bjt_divider_reference(Values& v, std::size_t r1, std::size_t r2, std::size_t cin, std::size_t cout,
                           const devices::BjtInstance& b, const Conditions& c, const ReferenceKnobs& k, double ve_v,
                           double zout_ohm) {
  const double hfe = k.nominal_hfe > 0 ? k.nominal_hfe : b.bf;
  const double ic = k.current_a, ib = ic / hfe;
  const double vb = ve_v + b.vt_v * std::log(ic / b.is_a);
  v[r1] = (c.supply_v - vb) / (11.0 * ib);
  v[r2] = vb / (10.0 * ib);
  // The input corner sees at least the divider; the output corner at least the load.
  v[cin] = cap_for(c.source_ohm + par(par(v[r1], v[r2]), hfe * b.vt_v / ic), k.f_corner_hz);
  v[cout] = cap_for(c.load_ohm + zout_ohm, k.f_corner_hz);
}

}  // namespace shelfstage::stages::detail
