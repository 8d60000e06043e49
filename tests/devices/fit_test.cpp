// Tests of src/devices/fit.cpp: IDSS and VP from self-bias readings simulated in ngspice (its
// level-1 JFET: IDSS = BETA*VTO^2), exact algebra, impossible readings, the uncertainty of noisy
// readings, hFE from two currents, and datasheet departures.
#include "shelfstage/devices/fit.hpp"

#include <doctest/doctest.h>
#include <fmt/format.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "shelfstage/error.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage::devices;
using shelfstage::InputError;

namespace {

double rel_err(double got, double want) { return std::abs(got - want) / std::abs(want); }

/// Self-bias readings from ngspice: one JFET per source resistor, gate at ground, in one run.
/// `model` is the .model line; `drain` how the drain is supplied, with {i} for the instance
/// number and {s} for its source node ("vdd{i} d{i} 0 15" or "vds{i} d{i} {s} 10").
std::vector<SelfBiasReading> spice_readings(const std::string& model, const std::string& drain,
                                            const std::vector<double>& rs_ohm) {
  std::string net = "* JFET self-bias readings\n" + model + "\n";
  std::string print = "print";
  for (std::size_t i = 0; i < rs_ohm.size(); ++i) {
    const std::string s = fmt::format("s{}", i);
    net += fmt::format(fmt::runtime(drain + "\n"), fmt::arg("i", i), fmt::arg("s", s));
    net += fmt::format("j{0} d{0} 0 {1} jmod\nr{0} {1} 0 {2:.12g}\n", i, s, rs_ohm[i]);
    print += fmt::format(" v({})", s);
  }
  net += ".options reltol=1e-9 vntol=1e-12 abstol=1e-15\n.control\nset numdgt=10\nop\n" + print + "\n.endc\n.end\n";
  const auto run = shelfstage::test::run_ngspice(net);
  REQUIRE_MESSAGE(run.error_lines().empty(), run.output);
  std::vector<SelfBiasReading> out;
  for (std::size_t i = 0; i < rs_ohm.size(); ++i) out.push_back({rs_ohm[i], run.get(fmt::format("v(s{})", i))});
  return out;
}

std::string error_of(auto&& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  return "(no InputError)";
}

}  // namespace

TEST_CASE("ngspice: an N-channel JFET's self-bias readings give back its IDSS and VP within 1 %") {
  // ngspice level-1 JFET: VTO = -2.2 V, BETA = 0.74 mA/V^2, so IDSS = BETA*VTO^2 = 3.5816 mA.
  const double idss = 0.74e-3 * 2.2 * 2.2, vp = -2.2;
  const auto readings = spice_readings(".model jmod njf(vto=-2.2 beta=0.74e-3 lambda=0)", "vdd{i} d{i} 0 15",
                                       {100, 220, 470, 1000, 2200, 4700});
  SUBCASE("all six readings, least squares") {
    const auto fit = fit_self_bias(readings);
    MESSAGE(fmt::format("six readings: IDSS error {:.2e}, VP error {:.2e}", rel_err(fit.idss_a, idss),
                        rel_err(fit.vp_v, vp)));
    CHECK(rel_err(fit.idss_a, idss) < 0.01);
    CHECK(rel_err(fit.vp_v, vp) < 0.01);
    // With lambda = 0 the readings lie on the square law: ten printed digits leave the
    // figures exact to well below a part per million.
    CHECK(rel_err(fit.idss_a, idss) < 1e-6);
    CHECK(rel_err(fit.vp_v, vp) < 1e-6);
    CHECK(fit.scatter < 0.01);
    CHECK_FALSE(fit.widened_by_scatter);
    CHECK(rel_err(fit.gm0_s, 2 * idss / 2.2) < 1e-6);
    for (const auto& r : fit.readings) CHECK(std::abs(r.residual_v) < 1e-6);
  }
  SUBCASE("every pair of two readings") {
    for (std::size_t i = 0; i < readings.size(); ++i) {
      for (std::size_t j = i + 1; j < readings.size(); ++j) {
        const std::vector<SelfBiasReading> two{readings[i], readings[j]};
        const auto fit = fit_self_bias(two);
        CAPTURE(readings[i].rs_ohm);
        CAPTURE(readings[j].rs_ohm);
        CHECK(rel_err(fit.idss_a, idss) < 0.01);
        CHECK(rel_err(fit.vp_v, vp) < 0.01);
        CHECK(fit.scatter == 0);
      }
    }
  }
}

TEST_CASE("ngspice: a P-channel JFET's (negative) self-bias readings give back IDSS and a positive VP") {
  // ngspice's PJF takes a negative VTO as NJF does (the polarity lives in the model type);
  // the datasheet VP is then +1.6 V. IDSS = 2.5 mA/V^2 * 1.6^2 = 6.4 mA.
  const double idss = 2.5e-3 * 1.6 * 1.6, vp = 1.6;
  const auto readings =
      spice_readings(".model jmod pjf(vto=-1.6 beta=2.5e-3 lambda=0)", "vdd{i} d{i} 0 -12", {68, 330, 1500});
  for (const auto& r : readings) REQUIRE(r.vs_v < 0);  // the source sits below ground
  const auto fit = fit_self_bias(readings, DeviceKind::pjfet);
  CHECK(rel_err(fit.idss_a, idss) < 0.01);
  CHECK(rel_err(fit.vp_v, vp) < 0.01);
  CHECK(fit.readings.front().vs_v < 0);
  // The same readings given as magnitudes fit the same piece.
  std::vector<SelfBiasReading> magnitudes = readings;
  for (auto& r : magnitudes) r.vs_v = -r.vs_v;
  const auto again = fit_self_bias(magnitudes, DeviceKind::pjfet);
  CHECK(rel_err(again.idss_a, fit.idss_a) < 1e-12);
  CHECK(rel_err(again.vp_v, fit.vp_v) < 1e-12);
}

TEST_CASE("ngspice: channel-length modulation moves the fitted IDSS by (1 + lambda*VDS) and leaves VP") {
  // With VDS held at 10 V (a controlled source puts the drain 10 V above the source), ngspice's level-1 law is
  // ID = BETA (VGS - VTO)^2 (1 + LAMBDA*VDS): the readings are those of a square-law piece with
  // IDSS (1 + 10*LAMBDA) and the same VP, as a datasheet's IDSS is stated at its own VDS.
  const double lambda = 0.005, idss = 0.74e-3 * 2.2 * 2.2, vp = -2.2;
  const std::vector<double> rs{100, 220, 470, 1000, 2200};
  const auto held = spice_readings(fmt::format(".model jmod njf(vto=-2.2 beta=0.74e-3 lambda={})", lambda),
                                   "e{i} x{i} 0 {s} 0 1\nv{i} d{i} x{i} 10", rs);
  const auto fit = fit_self_bias(held);
  MESSAGE(fmt::format("lambda {}/V at VDS 10 V moves the fitted IDSS by {:+.2f} % and VP by {:+.2e} %", lambda,
                      100 * (fit.idss_a / idss - 1), 100 * (fit.vp_v / vp - 1)));
  CHECK(rel_err(fit.idss_a, idss * (1 + 10 * lambda)) < 0.01);
  CHECK(rel_err(fit.vp_v, vp) < 0.01);

  // With the drain on a fixed 15 V supply VDS falls as VS rises; the readings then lie off the
  // square law by a few parts in a thousand: the fit still lands within 1 % of VP, and IDSS
  // within 1 % of IDSS (1 + lambda*VDS) at the mean VDS of the readings.
  const auto supplied =
      spice_readings(fmt::format(".model jmod njf(vto=-2.2 beta=0.74e-3 lambda={})", lambda), "vdd{i} d{i} 0 15", rs);
  const auto fit2 = fit_self_bias(supplied);
  double mean_vds = 0;
  for (const auto& r : supplied) mean_vds += (15 - r.vs_v) / static_cast<double>(supplied.size());
  MESSAGE(fmt::format("drain on 15 V: IDSS moves by {:+.2f} %, VP by {:+.3f} %, scatter {:.3f}",
                      100 * (fit2.idss_a / idss - 1), 100 * (fit2.vp_v / vp - 1), fit2.scatter));
  CHECK(rel_err(fit2.vp_v, vp) < 0.01);
  CHECK(rel_err(fit2.idss_a, idss * (1 + lambda * mean_vds)) < 0.01);

  // Told the drain supply and lambda, the fit models ngspice's law itself and gives IDSS at
  // VDS = 0 (BETA*VTO^2), as the models here take it.
  const auto fit3 = fit_self_bias(supplied, DeviceKind::njfet, {}, {lambda, 15.0});
  MESSAGE(fmt::format("drain on 15 V, lambda given: IDSS error {:.2e}, VP error {:.2e}", rel_err(fit3.idss_a, idss),
                      rel_err(fit3.vp_v, vp)));
  CHECK(rel_err(fit3.idss_a, idss) < 0.01);
  CHECK(rel_err(fit3.vp_v, vp) < 0.01);
  CHECK(rel_err(fit3.idss_a, idss) < 1e-6);
  CHECK(rel_err(fit3.vp_v, vp) < 1e-6);
  for (const auto& r : fit3.readings) {
    CHECK(std::abs(r.residual_v) < 1e-6);
    CHECK(r.fitted_vs_v == doctest::Approx(self_bias_source_voltage(fit3.idss_a, 2.2, r.rs_ohm, {lambda, 15.0})));
  }
}

TEST_CASE("ngspice: a P-channel piece with lambda on a -12 V drain supply, referred to VDS = 0") {
  // PJF VTO=-1.6 BETA=2.5m LAMBDA=0.02 (IDSS = 6.4 mA at VDS = 0, VP +1.6 V).
  const double lambda = 0.02;
  const auto readings = spice_readings(fmt::format(".model jmod pjf(vto=-1.6 beta=2.5e-3 lambda={})", lambda),
                                       "vdd{i} d{i} 0 -12", {68, 330, 1500});
  const auto fit = fit_self_bias(readings, DeviceKind::pjfet, {}, {lambda, -12.0});
  CHECK(rel_err(fit.idss_a, 6.4e-3) < 1e-6);
  CHECK(rel_err(fit.vp_v, 1.6) < 1e-6);
}

TEST_CASE("ngspice: readings taken below pinch-off's drain voltage (triode) are refused when the supply is given") {
  // NJF VTO=-2.2 with the drain on 1 V: VDS stays below VGS - VTO, the piece works as a
  // resistor, not on the saturation square law. Told the supply, the fit says so.
  const auto readings =
      spice_readings(".model jmod njf(vto=-2.2 beta=0.74e-3 lambda=0)", "vdd{i} d{i} 0 1", {100, 470, 2200});
  const std::string e = error_of([&] { fit_self_bias(readings, DeviceKind::njfet, {}, {0.0, 1.0}); });
  CHECK_MESSAGE(e.starts_with("drain supply 1V is below the fitted |VP|"), e);
  CHECK(e.find("not in saturation") != std::string::npos);
}

TEST_CASE("Two readings on IDSS 8 mA, VP -2 V: the figures exactly (hand computation)") {
  // By hand: at |VS| = 1 V, ID = 8m (1 - 1/2)^2 = 2 mA, so RS = 500 ohms; at |VS| = 1.5 V,
  // ID = 8m (1/4)^2 = 0.5 mA, RS = 3 kohms. sqrt(ID) halves while |VS| grows by 0.5 V, so
  // b = 2 sqrt(0.5m)/1 ... a = sqrt(2m) + b*1 = 4 sqrt(0.5m): IDSS = 16 * 0.5m = 8 mA, |VP| = a/b = 2 V.
  const std::vector<SelfBiasReading> readings{{500, 1.0}, {3000, 1.5}};
  const auto fit = fit_self_bias(readings);
  CHECK(fit.idss_a == doctest::Approx(8e-3).epsilon(1e-12));
  CHECK(fit.vp_v == doctest::Approx(-2.0).epsilon(1e-12));
  CHECK(fit.gm0_s == doctest::Approx(8e-3).epsilon(1e-12));  // 2 IDSS/|VP|
  CHECK(fit.readings[0].id_a == doctest::Approx(2e-3).epsilon(1e-12));
  CHECK(std::abs(fit.readings[1].residual_v) < 1e-12);
  // The forward law: c = RS IDSS/|VP| = 12 at 3 kohms, and 12 (1 - 0.75)^2 = 0.75.
  CHECK(self_bias_source_voltage(8e-3, 2.0, 3000) == doctest::Approx(1.5).epsilon(1e-14));
  CHECK(self_bias_source_voltage(8e-3, 2.0, 500) == doctest::Approx(1.0).epsilon(1e-14));
  CHECK(self_bias_source_voltage(8e-3, 2.0, 0) == 0.0);
}

TEST_CASE("A meter reading every voltage 1 % high moves IDSS and VP by exactly 1 % (square-law scaling)") {
  // ID (RS) = VS/RS and VGS = -VS both scale with VS: IDSS (1 - VGS/VP)^2 is unchanged in
  // form with IDSS and VP scaled alike. A check of the fit, not of its uncertainty.
  const std::vector<SelfBiasReading> readings{{220, 0.481043}, {1000, 1.023782}, {4700, 1.564}};
  auto scaled = readings;
  for (auto& r : scaled) r.vs_v *= 1.01;
  const auto a = fit_self_bias(readings), b = fit_self_bias(scaled);
  CHECK(b.idss_a / a.idss_a == doctest::Approx(1.01).epsilon(1e-9));
  CHECK(b.vp_v / a.vp_v == doctest::Approx(1.01).epsilon(1e-9));
}

TEST_CASE("Two readings: the uncertainty is the meter's and the resistors' carried through the fit") {
  // Independent check of NOTES 3 by finite differences: refit with each VS and each RS moved,
  // and combine the changes with the standard uncertainties bound/sqrt(3) (GUM 4.3.7), k = 2.
  const std::vector<SelfBiasReading> readings{{220, 0.48104337}, {2200, 1.31}};
  const ReadingAccuracy acc{0.005, 0.01};
  const auto fit = fit_self_bias(readings, DeviceKind::njfet, acc);
  double var_idss = 0, var_vp = 0;
  const double h = 1e-6;
  for (std::size_t i = 0; i < readings.size(); ++i) {
    for (int what = 0; what < 2; ++what) {
      auto moved = readings;
      (what == 0 ? moved[i].vs_v : moved[i].rs_ohm) *= 1 + h;
      const auto f = fit_self_bias(moved, DeviceKind::njfet, acc);
      // A resistor off by a fraction d moves the fit as the nominal RS moved by d would
      // (the sign does not matter once squared).
      const double sigma = (what == 0 ? acc.meter : acc.resistor) / std::sqrt(3.0);
      var_idss += std::pow((f.idss_a - fit.idss_a) / h * sigma, 2);
      var_vp += std::pow((f.vp_v - fit.vp_v) / h * sigma, 2);
    }
  }
  CHECK(fit.idss_uncertainty_a == doctest::Approx(2 * std::sqrt(var_idss)).epsilon(1e-3));
  CHECK(fit.vp_uncertainty_v == doctest::Approx(2 * std::sqrt(var_vp)).epsilon(1e-3));
  // The line sqrt(ID) = a - b|VS| pivots about the readings: a steeper line meets the ID axis
  // higher (IDSS up) and the VS axis sooner (|VP| down).
  CHECK(fit.correlation < -0.5);
  CHECK(fit.piece_uncertainty() >= fit.idss_uncertainty_a / fit.idss_a);
  CHECK(fit.piece_uncertainty() >= fit.vp_uncertainty_v / std::abs(fit.vp_v));
  CHECK(fit.piece_uncertainty() <
        1.1 * std::max(fit.idss_uncertainty_a / fit.idss_a, fit.vp_uncertainty_v / std::abs(fit.vp_v)));
}

namespace {

/// Readings of a square-law piece (the fit's own forward law, checked against ngspice above)
/// with each resistor and each meter reading off by a uniform draw within its bound.
std::vector<SelfBiasReading> noisy(std::mt19937_64& rng, double idss, double vp, const std::vector<double>& rs,
                                   double meter_bound, double resistor_bound) {
  std::uniform_real_distribution<double> u(-1, 1);
  std::vector<SelfBiasReading> out;
  for (double r : rs) {
    const double actual_rs = r * (1 + resistor_bound * u(rng));
    out.push_back({r, self_bias_source_voltage(idss, vp, actual_rs) * (1 + meter_bound * u(rng))});
  }
  return out;
}

}  // namespace

TEST_CASE("Noisy readings: the stated uncertainty covers the true IDSS and VP about 95 % of the time") {
  const double idss = 3.6e-3, vp = 2.2;
  const ReadingAccuracy acc{0.005, 0.01};
  for (const auto& rs : {std::vector<double>{150, 330, 680, 1500, 3300}, std::vector<double>{220, 2200}}) {
    CAPTURE(rs.size());
    std::mt19937_64 rng(20260717);
    int covered_idss = 0, covered_vp = 0;
    const int trials = 400;
    double worst_rel = 0;
    for (int t = 0; t < trials; ++t) {
      const auto fit = fit_self_bias(noisy(rng, idss, vp, rs, acc.meter, acc.resistor), DeviceKind::njfet, acc);
      covered_idss += std::abs(fit.idss_a - idss) <= fit.idss_uncertainty_a;
      covered_vp += std::abs(-fit.vp_v - vp) <= fit.vp_uncertainty_v;
      worst_rel = std::max(worst_rel, fit.piece_uncertainty());
    }
    MESSAGE(fmt::format("{} readings: IDSS covered {}/{}, VP covered {}/{}, widest piece uncertainty {:.1f} %",
                        rs.size(), covered_idss, trials, covered_vp, trials, 100 * worst_rel));
    // Expanded uncertainty, k = 2: about 95 % coverage for errors near normal (GUM 6.2.2).
    // Rectangular errors have shorter tails, so the coverage should be at least 90 %.
    CHECK(covered_idss >= 0.90 * trials);
    CHECK(covered_vp >= 0.90 * trials);
    CHECK(worst_rel < 0.2);  // these readings pin a piece far tighter than a datasheet box
  }
}

TEST_CASE("Readings scattering more than stated widen the uncertainty, and say so") {
  // 3 % meter errors while 0.5 % is stated: the reduced chi-square scales the covariance.
  // Five readings leave three degrees of freedom; k = 2 then covers about 86 % (Student's t,
  // three degrees of freedom, from memory); this run gives about 82 %, so require 75 %
  // (unwidened, the 0.5 % figure would cover well under half).
  const double idss = 3.6e-3, vp = 2.2;
  const std::vector<double> rs{150, 330, 680, 1500, 3300};
  std::mt19937_64 rng(7);
  int covered_idss = 0, covered_vp = 0, widened = 0, noted = 0;
  const int trials = 400;
  for (int t = 0; t < trials; ++t) {
    const auto fit = fit_self_bias(noisy(rng, idss, vp, rs, 0.03, 0.0), DeviceKind::njfet, {0.005, 0.0});
    covered_idss += std::abs(fit.idss_a - idss) <= fit.idss_uncertainty_a;
    covered_vp += std::abs(-fit.vp_v - vp) <= fit.vp_uncertainty_v;
    widened += fit.widened_by_scatter;
    noted += !fit.notes.empty();
  }
  MESSAGE(fmt::format("IDSS covered {}/{}, VP covered {}/{}, widened {}, noted {}", covered_idss, trials, covered_vp,
                      trials, widened, noted));
  CHECK(covered_idss >= 0.75 * trials);
  CHECK(covered_vp >= 0.75 * trials);
  CHECK(widened >= 0.9 * trials);
  CHECK(noted >= 0.5 * trials);
}

TEST_CASE("Readings no square-law piece can give are refused, naming the readings") {
  using V = std::vector<SelfBiasReading>;
  auto fit = [](V v, DeviceKind k = DeviceKind::njfet) { return fit_self_bias(v, k); };
  CHECK(error_of([&] { fit({{1000, 1.0}}); }).find("1 given, two or more are needed") != std::string::npos);
  CHECK(error_of([&] {
          fit({{1000, 1.0}, {1000, 1.01}});
        }).find("two different source resistors") != std::string::npos);
  CHECK(error_of([&] {
          fit({{0, 1.0}, {1000, 1.01}});
        }) == "self-bias reading 1 (RS 0Ω, VS 1V): RS must be above zero");
  CHECK(error_of([&] {
          fit({{470, 0.6}, {1000, 0}});
        }).starts_with("self-bias reading 2 (RS 1kΩ, VS 0V): VS must not be zero"));
  CHECK(error_of([&] { fit({{470, 0.6}, {1000, -1.0}}); }).find("swapped meter leads") != std::string::npos);
  CHECK(error_of([&] {
          fit({{470, -0.6}, {1000, 1.0}}, DeviceKind::pjfet);
        }).find("not a mixture") != std::string::npos);
  CHECK(error_of([&] { fit({{470, 0.6}, {1000, 1.0}}, DeviceKind::npn); }).find("fit JFETs only") != std::string::npos);
  // A larger resistor with a smaller source voltage: every JFET's current falls as its gate
  // goes more negative, so VS = ID*RS must rise with RS.
  CHECK(error_of([&] {
          fit({{1000, 1.0}, {2200, 0.8}});
        }) ==
        "self-bias reading 1 (RS 1kΩ, VS 1V) and self-bias reading 2 (RS 2.2kΩ, VS 0.8V) contradict each other: "
        "the larger source resistor must give the larger source voltage");
  // A larger resistor with a larger current (2.5 V / 2.2k = 1.14 mA against 1 mA).
  CHECK(error_of([&] {
          fit({{1000, 1.0}, {2200, 2.5}});
        }).find("must give the smaller drain current") != std::string::npos);
  // Within the meter's accuracy the order holds, but the line sqrt(ID) against |VS| rises.
  CHECK(error_of([&] {
          fit({{1000, 1.0}, {1200, 0.998}});
        }).find("does not fall as the gate goes more negative") != std::string::npos);
  // The current hardly changes with RS: a square law through it pinches off near 400 V.
  CHECK(error_of([&] { fit({{1000, 1.0}, {2000, 1.99}}); }).find("beyond any small-signal JFET") != std::string::npos);
  // The drain supply: of the wrong sign, or below a reading.
  CHECK(error_of([&] {
          fit_self_bias(V{{470, 0.6}, {1000, 1.0}}, DeviceKind::njfet, {}, {0.01, -9.0});
        }) == "drain supply -9V: an N-channel drain needs a positive supply");
  CHECK(error_of([&] {
          fit_self_bias(V{{470, 0.6}, {1000, 1.0}}, DeviceKind::njfet, {}, {0.01, 0.9});
        }) == "self-bias reading 2 (RS 1kΩ, VS 1V): the source cannot sit at or beyond the drain supply 0.9V");
  CHECK(error_of([&] {
          fit_self_bias(V{{470, 0.6}, {1000, 1.0}}, DeviceKind::njfet, {}, {0.5, 9.0});
        }) == "lambda 0.5/V must lie between 0 and 0.2/V");
  // Accuracy options out of range.
  CHECK(error_of([&] {
          fit_self_bias(V{{470, 0.6}, {1000, 1.0}}, DeviceKind::njfet, {0.7, 0.01});
        }).find("meter accuracy 70%") != std::string::npos);
}

TEST_CASE("A reading far off the others' square law is kept and named in a note") {
  // Four readings of a square-law piece (IDSS 3.6 mA, |VP| 2.2 V) and a fifth read 10 % high,
  // a misread meter; the fit still stands, the note names reading 5 (least squares spreads
  // its misfit: the full fit's largest residual is reading 4's).
  std::vector<SelfBiasReading> readings;
  for (double rs : {150.0, 330.0, 680.0, 1500.0, 3300.0})
    readings.push_back({rs, self_bias_source_voltage(3.6e-3, 2.2, rs)});
  readings[4].vs_v *= 1.10;
  const auto fit = fit_self_bias(readings);
  bool named = false;
  for (const auto& n : fit.notes) named = named || n.starts_with("self-bias reading 5 (RS 3.3kΩ");
  CHECK(named);
  CHECK(fit.widened_by_scatter);
  // The same readings without the slip: no note.
  readings[4].vs_v /= 1.10;
  CHECK(fit_self_bias(readings).notes.empty());
}

TEST_CASE("hFE = IC/IB from a measured base and collector current") {
  CHECK(hfe_from_currents(10e-6, 2.87e-3) == doctest::Approx(287));
  CHECK(hfe_from_currents(4.2e-6, 1e-3) == doctest::Approx(238.095238).epsilon(1e-6));
  CHECK(error_of([] { hfe_from_currents(1e-3, 1e-3); }).find("must be below the collector current") !=
        std::string::npos);
  CHECK(error_of([] { hfe_from_currents(0, 1e-3); }).find("base current IB 0A must be above zero") !=
        std::string::npos);
  CHECK(error_of([] { hfe_from_currents(1e-5, -1e-3); }).find("collector current IC") != std::string::npos);
}

TEST_CASE("A measured piece outside its datasheet range is named figure by figure") {
  DeviceRecord r;
  r.name = "SJ-101";
  r.kind = DeviceKind::njfet;
  r.jfet.idss_a = {1e-3, 5e-3, {}};
  r.jfet.vp_v = {-3.0, -0.5, {}};
  MeasuredPiece p;
  p.device = "SJ-101";
  p.idss_a = 6.2e-3;
  p.vp_v = -1.4;
  auto d = datasheet_departures(r, p);
  REQUIRE(d.size() == 1);
  CHECK(d[0] == "IDSS 6.2mA is above SJ-101's datasheet range 1mA..5mA");
  p.idss_a = 2e-3;
  p.vp_v = -0.3;
  d = datasheet_departures(r, p);
  REQUIRE(d.size() == 1);
  CHECK(d[0] == "VP -0.3V is above SJ-101's datasheet range -3V..-0.5V");
  p.vp_v = -1.0;
  CHECK(datasheet_departures(r, p).empty());

  DeviceRecord q;
  q.name = "SQ-410";
  q.kind = DeviceKind::npn;
  q.bjt.hfe = {110, 450, {}};
  MeasuredPiece b;
  b.hfe = 95;
  d = datasheet_departures(q, b);
  REQUIRE(d.size() == 1);
  CHECK(d[0] == "hFE 95 is below SQ-410's datasheet range 110..450");
}
