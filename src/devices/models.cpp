// Square-law JFET and Gummel-Poon-subset BJT equations (SPICE level-1 forms).
#include "shelfstage/devices/models.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace shelfstage::devices {

double thermal_voltage(double celsius) { return kBoltzmann * (celsius + kZeroCelsius) / kCharge; }

namespace {

// Normal-mode (vds >= 0) square law with B = 1, as ngspice's JFET level 1 computes it.
JfetEval jfet_forward(const JfetInstance& q, double vgs, double vds) {
  JfetEval e;
  const double vgst = vgs + q.vp_abs_v;  // VGS - VTO with VTO = -|VP|
  if (vgst <= 0.0) {
    e.region = JfetRegion::cutoff;
    return e;
  }
  const double beta = q.beta();
  const double clm = 1.0 + q.lambda_per_v * vds;
  if (vds < vgst) {
    e.region = JfetRegion::triode;
    const double core = vds * (2.0 * vgst - vds);
    e.id_a = beta * core * clm;
    e.gm_s = beta * 2.0 * vds * clm;
    e.gds_s = beta * (2.0 * vgst - 2.0 * vds) * clm + beta * core * q.lambda_per_v;
  } else {
    e.region = JfetRegion::saturation;
    e.id_a = beta * vgst * vgst * clm;
    e.gm_s = 2.0 * beta * vgst * clm;
    e.gds_s = beta * vgst * vgst * q.lambda_per_v;
  }
  return e;
}

// exp with a linear continuation past a large argument, so Newton steps cannot overflow.
double safe_exp(double x, double& slope) {
  constexpr double kMax = 80.0;
  if (x > kMax) {
    const double e = std::exp(kMax);
    slope = e;
    return e * (1.0 + x - kMax);
  }
  const double e = std::exp(x);
  slope = e;
  return e;
}

}  // namespace

JfetEval jfet_eval(const JfetInstance& q, double vgs_v, double vds_v) {
  if (vds_v >= 0.0) return jfet_forward(q, vgs_v, vds_v);
  // Inverse mode: the drain acts as source. f(vgd, vsd) flows source to drain.
  const double vgd = vgs_v - vds_v;
  const JfetEval f = jfet_forward(q, vgd, -vds_v);
  JfetEval e;
  e.region = f.region;
  e.id_a = -f.id_a;
  e.gm_s = -f.gm_s;            // d/dvgs of -f(vgs - vds, -vds)
  e.gds_s = f.gm_s + f.gds_s;  // d/dvds
  return e;
}

double jfet_vgs_for_current(const JfetInstance& q, double id_a) {
  const double ratio = std::clamp(id_a / q.idss_a, 0.0, 1.0);
  return -q.vp_abs_v * (1.0 - std::sqrt(ratio));
}

BjtEval bjt_eval(const BjtInstance& q, double vbe_v, double vbc_v) {
  double sbe = 0, sbc = 0;
  const double ebe = safe_exp(vbe_v / q.vt_v, sbe);
  const double ebc = safe_exp(vbc_v / q.vt_v, sbc);
  const double ibe = q.is_a * (ebe - 1.0);
  const double ibc = q.is_a * (ebc - 1.0);
  const double gbe = q.is_a * sbe / q.vt_v;
  const double gbc = q.is_a * sbc / q.vt_v;
  const double inv_vaf = (q.vaf_v > 0.0 && std::isfinite(q.vaf_v)) ? 1.0 / q.vaf_v : 0.0;
  const double early = 1.0 - vbc_v * inv_vaf;  // 1/qb with qb = q1 = 1/(1 - vbc/VAF)
  BjtEval e;
  e.ic_a = (ibe - ibc) * early - ibc / q.br;
  e.ib_a = ibe / q.bf + ibc / q.br;
  e.dic_dvbe = gbe * early;
  e.dic_dvbc = -gbc * early - (ibe - ibc) * inv_vaf - gbc / q.br;
  e.dib_dvbe = gbe / q.bf;
  e.dib_dvbc = gbc / q.br;
  return e;
}

double depletion_capacitance(double c0_f, double v, double vj_v, double m, double fc) {
  if (c0_f <= 0.0) return 0.0;
  if (v < fc * vj_v) return c0_f * std::pow(1.0 - v / vj_v, -m);
  const double f1 = std::pow(1.0 - fc, -(1.0 + m));
  return c0_f * f1 * (1.0 - fc * (1.0 + m) + m * v / vj_v);
}

JfetInstance jfet_at(const JfetParams& p, DeviceKind kind, double idss_a, double vp_abs_v, double celsius) {
  const double dt = celsius - kNominalCelsius;
  JfetInstance q;
  q.kind = kind;
  q.idss_a = idss_a * std::max(0.05, 1.0 + p.tc_idss_per_k * dt);
  q.vp_abs_v = std::max(0.01, vp_abs_v + p.tc_vp_v_per_k * dt);
  q.lambda_per_v = p.lambda_per_v;
  q.cgs_f = p.cgs_f;
  q.cgd_f = p.cgd_f;
  return q;
}

BjtInstance bjt_at(const BjtParams& p, DeviceKind kind, double bf, double celsius, double vbe_shift_v) {
  // SPICE's saturation-current temperature law with XTI = 3, EG = 1.11 eV, N = 1.
  constexpr double kXti = 3.0, kEg = 1.11;
  const double t = celsius + kZeroCelsius;
  const double tn = kNominalCelsius + kZeroCelsius;
  BjtInstance q;
  q.kind = kind;
  q.vt_v = thermal_voltage(celsius);
  const double is_piece = p.is_a * std::exp(-vbe_shift_v / thermal_voltage(kNominalCelsius));
  q.is_a = is_piece * std::pow(t / tn, kXti) * std::exp(kEg * (t / tn - 1.0) / q.vt_v);
  q.bf = bf * std::max(0.2, 1.0 + 0.005 * (celsius - kNominalCelsius));
  q.vaf_v = p.vaf_v;
  q.cje_f = p.cje_f;
  q.cjc_f = p.cjc_f;
  q.vce_sat_v = p.vce_sat_v;
  return q;
}

}  // namespace shelfstage::devices
