// Tests of src/devices/models.cpp: the square-law JFET, the Gummel-Poon-subset BJT, junction
// capacitance and temperature, against the textbook equations (docs/physics.md: the
// Shichman-Hodges square law, Ebers-Moll / Gummel-Poon forward active) and the ngspice manual's
// model equations (JFET level 1, BJT, depletion capacitance with FC).
#include "shelfstage/devices/models.hpp"

#include <doctest/doctest.h>

#include <cmath>

using namespace shelfstage::devices;

namespace {

JfetInstance njfet(double idss, double vp_abs, double lambda = 0.0) {
  JfetInstance q;
  q.kind = DeviceKind::njfet;
  q.idss_a = idss;
  q.vp_abs_v = vp_abs;
  q.lambda_per_v = lambda;
  return q;
}

BjtInstance npn(double bf = 200, double vaf = 100) {
  BjtInstance q;
  q.kind = DeviceKind::npn;
  q.is_a = 1e-14;
  q.bf = bf;
  q.vaf_v = vaf;
  q.vt_v = thermal_voltage(kNominalCelsius);
  return q;
}

// Central difference of f at x.
template <class F>
double slope(F f, double x, double h = 1e-6) {
  return (f(x + h) - f(x - h)) / (2 * h);
}

}  // namespace

TEST_CASE("Thermal voltage kT/q is 25.85 mV at 300 K (CODATA 2018 / SI 2019 constants)") {
  CHECK(thermal_voltage(300.0 - kZeroCelsius) == doctest::Approx(0.0258520).epsilon(1e-5));
  CHECK(thermal_voltage(25.0) == doctest::Approx(0.0256926).epsilon(1e-5));
  // Proportional to absolute temperature.
  CHECK(thermal_voltage(100.0) / thermal_voltage(0.0) == doctest::Approx(373.15 / 273.15));
}

TEST_CASE("Square law (Shichman-Hodges): ID at VGS = 0 is IDSS, times 1 + lambda*VDS") {
  const auto q = njfet(5e-3, 2.0);
  CHECK(jfet_eval(q, 0.0, 6.0).id_a == doctest::Approx(5e-3));
  CHECK(jfet_eval(q, 0.0, 6.0).region == JfetRegion::saturation);
  const auto ql = njfet(5e-3, 2.0, 0.02);
  CHECK(jfet_eval(ql, 0.0, 6.0).id_a == doctest::Approx(5e-3 * (1 + 0.02 * 6.0)));
  // SPICE level-1 mapping: BETA = IDSS / VP^2.
  CHECK(q.beta() == doctest::Approx(5e-3 / 4.0));
}

TEST_CASE("Square law in saturation: ID = IDSS*(1 - VGS/VP)^2 and gm = 2*IDSS/|VP|*(1 - VGS/VP)") {
  const double idss = 4e-3, vp = -2.5;  // datasheet signs, N channel
  const auto q = njfet(idss, 2.5);
  for (double vgs : {-2.4, -2.0, -1.25, -0.5, -0.1, 0.0}) {
    CAPTURE(vgs);
    const auto e = jfet_eval(q, vgs, 10.0);
    const double r = 1 - vgs / vp;
    CHECK(e.region == JfetRegion::saturation);
    CHECK(e.id_a == doctest::Approx(idss * r * r));
    CHECK(e.gm_s == doctest::Approx(2 * idss / 2.5 * r));
    // The same gm from the current: (2/|VP|)*sqrt(IDSS*ID).
    CHECK(e.gm_s == doctest::Approx(2.0 / 2.5 * std::sqrt(idss * e.id_a)));
    CHECK(e.gds_s == doctest::Approx(0.0));
  }
  // Cut-off at and beyond pinch-off.
  CHECK(jfet_eval(q, -2.5, 10.0).id_a == 0.0);
  CHECK(jfet_eval(q, -3.0, 10.0).region == JfetRegion::cutoff);
  // The inverse used for design: VGS = VP*(1 - sqrt(ID/IDSS)).
  CHECK(jfet_vgs_for_current(q, 1e-3) == doctest::Approx(vp * (1 - std::sqrt(0.25))));
  CHECK(jfet_eval(q, jfet_vgs_for_current(q, 1e-3), 10.0).id_a == doctest::Approx(1e-3));
}

TEST_CASE("Square law in triode: ID = IDSS/VP^2*VDS*(2*(VGS - VP) - VDS), continuous at the saturation edge") {
  const auto q = njfet(6e-3, 3.0, 0.01);
  const double vgs = -1.0, vgst = vgs + 3.0;
  const auto t = jfet_eval(q, vgs, 0.5);
  CHECK(t.region == JfetRegion::triode);
  CHECK(t.id_a == doctest::Approx(6e-3 / 9.0 * 0.5 * (2 * vgst - 0.5) * (1 + 0.01 * 0.5)));
  // At VDS = VGS - VP both regions give the same current, gm and gds.
  const auto below = jfet_eval(q, vgs, vgst * (1 - 1e-10));
  const auto above = jfet_eval(q, vgs, vgst * (1 + 1e-10));
  CHECK(below.region == JfetRegion::triode);
  CHECK(above.region == JfetRegion::saturation);
  CHECK(below.id_a == doctest::Approx(above.id_a).epsilon(1e-8));
  CHECK(below.gm_s == doctest::Approx(above.gm_s).epsilon(1e-8));
  CHECK(below.gds_s == doctest::Approx(above.gds_s).epsilon(1e-6));
}

TEST_CASE("JFET derivatives match the current's slopes in every region") {
  const auto q = njfet(3e-3, 1.5, 0.02);
  for (double vgs : {-1.2, -0.6, 0.0}) {
    for (double vds : {-2.0, -0.3, 0.2, 0.7, 5.0}) {
      CAPTURE(vgs);
      CAPTURE(vds);
      const auto e = jfet_eval(q, vgs, vds);
      CHECK(e.gm_s == doctest::Approx(slope([&](double x) { return jfet_eval(q, x, vds).id_a; }, vgs)).epsilon(1e-5));
      CHECK(e.gds_s == doctest::Approx(slope([&](double x) { return jfet_eval(q, vgs, x).id_a; }, vds)).epsilon(1e-5));
    }
  }
}

TEST_CASE("Inverse mode: the channel is symmetric, swapping drain and source negates the current") {
  const auto q = njfet(5e-3, 2.0, 0.01);
  for (double vg_s : {-1.5, -0.8, 0.0}) {
    for (double v : {0.3, 1.0, 4.0}) {
      CAPTURE(vg_s);
      CAPTURE(v);
      // Drain at -v below the source: the drain acts as source, with VGD = VGS + v.
      const auto inv = jfet_eval(q, vg_s, -v);
      const auto fwd = jfet_eval(q, vg_s + v, v);
      CHECK(inv.id_a == doctest::Approx(-fwd.id_a));
      CHECK(inv.region == fwd.region);
    }
  }
  // At VDS = 0 no current flows, whatever VGS.
  CHECK(jfet_eval(q, -0.5, 0.0).id_a == 0.0);
}

TEST_CASE("BJT (Gummel-Poon without high injection, as ngspice's BJT): IC at a VBE, hFE = IC/IB, Early slope") {
  const auto q = npn(200, 100);
  const double vt = q.vt_v;
  const double vbe = 0.65, vce = 5.0, vbc = vbe - vce;
  const auto e = bjt_eval(q, vbe, vbc);
  const double ibe = 1e-14 * (std::exp(vbe / vt) - 1), ibc = 1e-14 * (std::exp(vbc / vt) - 1);
  CHECK(e.ic_a == doctest::Approx((ibe - ibc) * (1 - vbc / 100) - ibc / q.br));
  CHECK(e.ib_a == doctest::Approx(ibe / 200 + ibc / q.br));
  // Forward active without Early effect: IC/IB = BF exactly (reverse leakage negligible).
  const auto flat = npn(200, 0);
  const auto f = bjt_eval(flat, vbe, vbc);
  CHECK(f.ic_a / f.ib_a == doctest::Approx(200).epsilon(1e-6));
  // gm = IC/VT (docs/physics.md, The BJT).
  CHECK(f.dic_dvbe == doctest::Approx(f.ic_a / vt).epsilon(1e-9));
  // Early effect: IC against VCE at fixed VBE is a straight line that extrapolates to zero
  // at VCB = -VAF (textbook definition of the Early voltage).
  auto ic_at = [&](double v_ce) { return bjt_eval(q, vbe, vbe - v_ce).ic_a; };
  const double s = (ic_at(10.0) - ic_at(2.0)) / 8.0;
  const double vce_zero = 2.0 - ic_at(2.0) / s;
  CHECK(vce_zero - vbe == doctest::Approx(-100.0).epsilon(1e-6));
  // The output conductance the solver stamps is that slope.
  CHECK(-bjt_eval(q, vbe, vbe - 5.0).dic_dvbc == doctest::Approx(s).epsilon(1e-6));
  // Derivatives against the slopes of the currents.
  CHECK(e.dic_dvbe ==
        doctest::Approx(slope([&](double x) { return bjt_eval(q, x, vbc).ic_a; }, vbe, 1e-7)).epsilon(1e-5));
  CHECK(e.dic_dvbc ==
        doctest::Approx(slope([&](double x) { return bjt_eval(q, vbe, x).ic_a; }, vbc, 1e-7)).epsilon(1e-5));
  CHECK(e.dib_dvbe ==
        doctest::Approx(slope([&](double x) { return bjt_eval(q, x, vbc).ib_a; }, vbe, 1e-7)).epsilon(1e-5));
  // A decade of current per about 59 mV at 25 °C (VT*ln 10; common practice "60 mV per decade").
  const double i1 = bjt_eval(flat, 0.60, -5).ic_a, i2 = bjt_eval(flat, 0.60 + vt * std::log(10.0), -5).ic_a;
  CHECK(i2 / i1 == doctest::Approx(10.0).epsilon(1e-6));
  // A huge VBE (a Newton step gone wild) gives a large but finite current.
  CHECK(std::isfinite(bjt_eval(q, 50.0, 0.0).ic_a));
}

TEST_CASE("Depletion capacitance (ngspice manual, junction capacitance with FC): c0/(1 - v/vj)^m, linear past fc*vj") {
  const double c0 = 4e-12, vj = 0.75, m = 0.33;
  CHECK(depletion_capacitance(c0, 0.0, vj, m) == doctest::Approx(c0));
  CHECK(depletion_capacitance(c0, -3.0, vj, m) == doctest::Approx(c0 * std::pow(1 + 3.0 / vj, -m)));
  const double edge = 0.5 * vj;
  const double below = depletion_capacitance(c0, edge * (1 - 1e-9), vj, m);
  const double above = depletion_capacitance(c0, edge * (1 + 1e-9), vj, m);
  CHECK(below == doctest::Approx(above).epsilon(1e-8));
  // The extension is the tangent: the slopes on either side agree too.
  auto c = [&](double v) { return depletion_capacitance(c0, v, vj, m); };
  CHECK(slope(c, edge - 1e-3, 1e-5) == doctest::Approx(slope(c, edge + 1e-3, 1e-5)).epsilon(1e-2));
  // And it keeps growing linearly beyond.
  CHECK(c(0.7) > c(0.5));
  CHECK(c(0.9) - c(0.7) == doctest::Approx(c(0.7) - c(0.5)).epsilon(1e-9));
  CHECK(depletion_capacitance(0.0, 0.3, vj, m) == 0.0);
}

TEST_CASE("Temperature: datasheet figures at 25 °C stay put; IDSS falls, |VP| grows; VBE falls about 2 mV/K") {
  JfetParams jp;
  jp.lambda_per_v = 0.01;
  const auto j25 = jfet_at(jp, DeviceKind::njfet, 4e-3, 2.0, 25.0);
  CHECK(j25.idss_a == doctest::Approx(4e-3));
  CHECK(j25.vp_abs_v == doctest::Approx(2.0));
  const auto j75 = jfet_at(jp, DeviceKind::njfet, 4e-3, 2.0, 75.0);
  CHECK(j75.idss_a == doctest::Approx(4e-3 * (1 + jp.tc_idss_per_k * 50)));
  CHECK(j75.vp_abs_v == doctest::Approx(2.0 + jp.tc_vp_v_per_k * 50));
  CHECK(j75.idss_a < j25.idss_a);
  BjtParams bp;
  bp.is_a = 1e-14;
  const auto b25 = bjt_at(bp, DeviceKind::npn, 200, 25.0);
  const auto b35 = bjt_at(bp, DeviceKind::npn, 200, 35.0);
  CHECK(b25.is_a == doctest::Approx(1e-14));
  CHECK(b25.bf == doctest::Approx(200));
  // VBE at a fixed 1 mA: the bench figure is about -2 mV/K (common practice; docs/physics.md).
  const double vbe25 = b25.vt_v * std::log(1e-3 / b25.is_a), vbe35 = b35.vt_v * std::log(1e-3 / b35.is_a);
  const double tc = (vbe35 - vbe25) / 10.0;
  CHECK(tc < -1.5e-3);
  CHECK(tc > -2.5e-3);
  CHECK(b35.bf > b25.bf);
}
