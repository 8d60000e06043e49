// Tests of src/stages/distortion.cpp: the device laws' power series against the laws
// themselves (numerically), and the stage transfer's harmonics against the classic closed
// forms for a square-law and an exponential stage (hand derivations in the comments).
#include "../../src/stages/distortion.hpp"

#include <doctest/doctest.h>

#include <cmath>

using namespace shelfstage;
using namespace shelfstage::stages;
using namespace shelfstage::stages::detail;

namespace {

devices::JfetInstance square_law_jfet(double idss, double vp_abs, double lambda) {
  devices::JfetInstance q;
  q.idss_a = idss;
  q.vp_abs_v = vp_abs;
  q.lambda_per_v = lambda;
  return q;
}

// A common-source (common-emitter) network: ideal drive into the gate (base), the source
// (emitter) grounded by a huge conductance unless g_e is given, the load r_load at the drain.
HybridPi grounded(double gm, double gpi, double r_load, double g_e = 1e9) {
  HybridPi m;
  m.g_src = 1e6;  // an ideal source: 1 micro-ohm
  m.gpi = gpi;
  m.gm = gm;
  m.g_e = g_e;
  m.g_c = 1 / r_load;
  return m;
}

}  // namespace

TEST_CASE("jfet_orders: the series of ID = BETA (Vov + u)^2 (1 + lambda (VDS + w)) term by term") {
  // Expanding by hand: BETA (Vov^2 + 2 Vov u + u^2)(1 + lambda VDS + lambda w); the terms of
  // order two and up are u^2 BETA (1 + lambda VDS), u w 2 BETA Vov lambda, u^2 w BETA lambda.
  // Checked against the law itself at a small (u, w): the series plus the linear part.
  const auto q = square_law_jfet(5e-3, 2.0, 0.02);
  const double vov = 0.8, vds = 6.0, beta = q.beta();
  const DeviceOrders k = jfet_orders(q, vov, vds);
  const auto law = [&](double u, double w) { return beta * std::pow(vov + u, 2) * (1 + 0.02 * (vds + w)); };
  const double u = 0.05, w = -0.3;
  const double linear = law(0, 0) + 2 * beta * vov * (1 + 0.02 * vds) * u + beta * vov * vov * 0.02 * w;
  double series = linear;
  for (int a = 0; a <= DeviceOrders::kOrder; ++a)
    series += k.main_u[a] * std::pow(u, a) + k.main_uw[a] * std::pow(u, a) * w;
  CHECK(series == doctest::Approx(law(u, w)).epsilon(1e-12));
  // The linear terms belong to the network: left at zero.
  CHECK(k.main_u[1] == 0);
  CHECK(k.main_uw[0] == 0);
  for (double c : k.control_u) CHECK(c == 0);  // a JFET's gate draws no current
}

TEST_CASE("bjt_orders: the series of IC = IS exp(VBE/VT) (1 + (VCE - VBE)/VAF) and IB = IC0/BF") {
  // The law about its bias, u and w small: the sum of the terms of order two and up must
  // equal the law less its value and its linear part, to the order kept (7): at u = VT/5 the
  // first term left out is (1/5)^8 / 8! of IC, far below the tolerance.
  const double is = 1e-14, vt = 0.025852, vaf = 60, bf = 180, vbe = 0.62, vce = 5;
  const auto ic = [&](double u, double w) { return is * std::exp((vbe + u) / vt) * (1 + (vce + w - vbe - u) / vaf); };
  const double ibe0 = is * std::exp(vbe / vt), ic0 = ic(0, 0), go = ibe0 / vaf;
  const DeviceOrders k = bjt_orders(ic0, ibe0 / bf, vt, vaf / ibe0);
  // k uses IC's own exponential term ibe0 (1 + (VCE - VBE)/VAF) = ic0 in u^a and go in the rest.
  const double u = vt / 5, w = 0.2;
  const double gm = ic0 / vt - go;  // dIC/du at the bias
  const double linear = ic0 + gm * u + go * w;
  double series = linear;
  for (int a = 0; a <= DeviceOrders::kOrder; ++a)
    series += k.main_u[a] * std::pow(u, a) + k.main_uw[a] * std::pow(u, a) * w;
  CHECK(series == doctest::Approx(ic(u, w)).epsilon(1e-9));
  // The base current: IB = IS exp(VBE/VT) / BF, its terms of order two and up.
  double base = ibe0 / bf * (1 + u / vt);
  for (int a = 0; a <= DeviceOrders::kOrder; ++a) base += k.control_u[a] * std::pow(u, a);
  CHECK(base == doctest::Approx(ibe0 / bf * std::exp(u / vt)).epsilon(1e-9));
}

TEST_CASE("transfer: a square-law common source has only a second-order term, HD2 = A / (4 Vov)") {
  // vout = -RL BETA ((Vov + vin)^2 - Vov^2) = -RL (2 BETA Vov vin + BETA vin^2): o1 = -gm RL,
  // o2 = -BETA RL, nothing above. A cosine of peak A gives HD2 = o2 A^2/2 / (o1 A) = A/(4 Vov),
  // the classic square-law result.
  const auto q = square_law_jfet(4e-3, 2.0, 0.0);
  const double vov = 1.2, rl = 3.3e3, beta = q.beta(), gm = 2 * beta * vov;
  const Transfer t = transfer(grounded(gm, 0, rl), jfet_orders(q, vov, 6));
  CHECK(t.o[1] == doctest::Approx(-gm * rl).epsilon(1e-6));
  CHECK(t.o[2] == doctest::Approx(-beta * rl).epsilon(1e-6));
  for (int n = 3; n <= Transfer::kOrder; ++n) CHECK(std::abs(t.o[n]) < 1e-9 * std::abs(t.o[2]));
  const double a = 0.1;
  const auto h = t.harmonics_at_input(a);
  CHECK(std::abs(h[2] / h[1]) == doctest::Approx(a / (4 * vov)).epsilon(1e-6));
  CHECK(thd_at_input(t, a) == doctest::Approx(a / (4 * vov)).epsilon(1e-6));
}

TEST_CASE("transfer: an exponential common emitter, o_n = -RC IC / (n! VT^n), HD2 = A/(4 VT), HD3 = A^2/(24 VT^2)") {
  // vout = -RC IC (exp(vin/VT) - 1) with the base driven ideally and no Early effect; the
  // leading terms of the harmonics give the classic HD2 = A/(4 VT), HD3 = A^2/(24 VT^2)
  // (from memory; each is the first term of its harmonic: o2 A^2/2 and o3 A^3/4 over o1 A).
  const double vt = 0.025852, ic = 1e-3, bf = 200, rc = 4.7e3;
  const Transfer t = transfer(grounded(ic / vt, ic / bf / vt, rc), bjt_orders(ic, ic / bf, vt, INFINITY));
  double fact = 1;
  for (int n = 1; n <= Transfer::kOrder; ++n) {
    fact *= n;
    CAPTURE(n);
    CHECK(t.o[n] == doctest::Approx(-rc * ic / (fact * std::pow(vt, n))).epsilon(1e-6));
  }
  const double a = 1e-3;  // 1 mV peak: the terms left out are (A/VT)^2 ~ 0.15 % of each
  const auto h = t.harmonics_at_input(a);
  CHECK(std::abs(h[2] / h[1]) == doctest::Approx(a / (4 * vt)).epsilon(0.005));
  CHECK(std::abs(h[3] / h[1]) == doctest::Approx(a * a / (24 * vt * vt)).epsilon(0.005));
}

TEST_CASE("transfer: emitter degeneration divides HD2 by (1 + gm RE)^2 at the same input") {
  // Hand derivation (beta large): x/VT = ln(1 + y) + T y with y = i/IC, T = gm RE. Inverting,
  // y = x'/(1 + T) + x'^2 / (2 (1 + T)^3) + ..., so HD2 = (A/VT) / (4 (1 + T)^2).
  const double vt = 0.025852, ic = 1e-3, bf = 1e6, rc = 4.7e3, re = 260;
  const double gm = ic / vt, t_loop = gm * re;
  const Transfer t = transfer(grounded(gm, ic / bf / vt, rc, 1 / re), bjt_orders(ic, ic / bf, vt, INFINITY));
  const double a = 1e-3;
  const auto h = t.harmonics_at_input(a);
  CHECK(std::abs(h[2] / h[1]) == doctest::Approx(a / vt / (4 * std::pow(1 + t_loop, 2))).epsilon(0.01));
  // The gain is the degenerated one, gm RC / (1 + gm RE).
  CHECK(std::abs(t.o[1]) == doctest::Approx(gm * rc / (1 + t_loop)).epsilon(1e-3));
}

TEST_CASE("finish_distortion: the rated level is where THD reaches the bound, or the clipping point") {
  // The square-law stage above: THD = |o2| L / (2 o1^2) exactly at output level L (no odd
  // terms), so THD = 1 % at L = 0.02 o1^2 / |o2| = 8 BETA Vov^2 RL x 1 %.
  const auto q = square_law_jfet(4e-3, 2.0, 0.0);
  const double vov = 1.2, rl = 3.3e3, beta = q.beta(), gm = 2 * beta * vov;
  const Transfer t = transfer(grounded(gm, 0, rl), jfet_orders(q, vov, 6));
  const double rated = 8 * beta * vov * vov * rl * 0.01;
  Conditions c;
  c.max_thd = 0.01;
  c.hd2_peak_v = 1.0;
  Performance p;
  p.swing_peak_v = 10;  // clipping far above
  finish_distortion(p, t, c);
  CHECK(p.clip_peak_v == 10);
  CHECK(p.swing_peak_v == doctest::Approx(rated).epsilon(1e-5));
  // HD2 at the 1 V level: input 1 V / (gm RL), HD2 = A / (4 Vov).
  CHECK(p.hd2 == doctest::Approx(1.0 / (gm * rl) / (4 * vov)).epsilon(1e-6));
  CHECK(p.hd3 == doctest::Approx(0).epsilon(1e-9));
  CHECK(p.thd == doctest::Approx(p.hd2).epsilon(1e-9));
  // Clipping below that level: the clipping point is the rated level.
  Performance low;
  low.swing_peak_v = 0.5 * rated;
  finish_distortion(low, t, c);
  CHECK(low.swing_peak_v == doctest::Approx(0.5 * rated));
  // No bound: the clipping point.
  c.max_thd = 0;
  Performance free;
  free.swing_peak_v = 10;
  finish_distortion(free, t, c);
  CHECK(free.swing_peak_v == 10);
}
