// Tests of src/circuit/solver.cpp: DC, AC and noise of simple circuits against their closed
// forms (circuit theory textbooks: the divider, the RC low-pass, Johnson-Nyquist noise 4kTR),
// and of a JFET and a BJT stage against ngspice; the fallbacks (gmin and source stepping).
#include "shelfstage/circuit/solver.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <fmt/format.h>
#include <numbers>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage;
using circuit::Circuit;

namespace {

constexpr double kPi = std::numbers::pi;

double kt(double celsius = devices::kNominalCelsius) { return devices::kBoltzmann * (celsius + devices::kZeroCelsius); }

devices::JfetInstance jfet(devices::DeviceKind kind = devices::DeviceKind::njfet) {
  devices::JfetInstance q;
  q.kind = kind;
  q.idss_a = 6e-3;
  q.vp_abs_v = 2.2;
  q.lambda_per_v = 0.015;
  q.cgs_f = 5e-12;
  q.cgd_f = 2e-12;
  return q;
}

devices::BjtInstance bjt(devices::DeviceKind kind = devices::DeviceKind::npn) {
  devices::BjtInstance q;
  q.kind = kind;
  q.is_a = 7e-15;
  q.bf = 250;
  q.vaf_v = 80;
  q.cje_f = 5e-12;
  q.cjc_f = 3.5e-12;
  q.vt_v = devices::thermal_voltage(devices::kNominalCelsius);
  return q;
}

}  // namespace

TEST_CASE("DC: a resistive divider gives VDD*R2/(R1 + R2) and the source current SPICE reports") {
  Circuit c;
  c.vsource("V1", "supply", "top", "0", 10.0);
  c.resistor("R1", "R1", "top", "mid", 3e3);
  c.resistor("R2", "R2", "mid", "0", 1e3);
  const auto op = circuit::solve_dc(c);
  CHECK(op.v(c, "mid") == doctest::Approx(2.5).epsilon(1e-12));
  CHECK(op.v(c, "top") == doctest::Approx(10.0).epsilon(1e-12));
  // SPICE's sign: the current into the + terminal, negative when the source delivers.
  REQUIRE(op.source_i.size() == 1);
  CHECK(op.source_i[0] == doctest::Approx(-2.5e-3).epsilon(1e-12));
  CHECK(op.method == "newton");
  CHECK_THROWS_AS(op.v(c, "nowhere"), InputError);
}

TEST_CASE("AC: an RC low-pass has its -3 dB corner at 1/(2 pi R C), -45 degrees there") {
  Circuit c;
  c.vsource("V1", "signal", "in", "0", 0.0, 1.0);
  c.resistor("R1", "R", "in", "out", 1e3);
  c.capacitor("C1", "C", "out", "0", 100e-9);
  const auto op = circuit::solve_dc(c);
  const double fc = 1.0 / (2 * kPi * 1e3 * 100e-9);
  const auto v = circuit::solve_ac(c, op, fc);
  const auto out = *c.find_net("out");
  CHECK(std::abs(v[out]) == doctest::Approx(1 / std::sqrt(2.0)).epsilon(1e-12));
  CHECK(std::arg(v[out]) == doctest::Approx(-kPi / 4).epsilon(1e-12));
  // A decade above: 1/sqrt(1 + 100).
  CHECK(std::abs(circuit::ac_sweep(c, op, "out", {10 * fc})[0]) == doctest::Approx(1 / std::sqrt(101.0)));
  const auto k = circuit::find_corners(c, op, "out", 0.1, 1e8);
  CHECK(k.f_high_hz == doctest::Approx(fc).epsilon(1e-6));
  CHECK(k.f_low_hz == 0.0);
  CHECK(k.mid_gain == doctest::Approx(1.0).epsilon(1e-6));
  // And the RC high-pass (swap the parts) has its corner at the same frequency, below the band.
  Circuit h;
  h.vsource("V1", "signal", "in", "0", 0.0, 1.0);
  h.capacitor("C1", "C", "in", "out", 100e-9);
  h.resistor("R1", "R", "out", "0", 1e3);
  const auto kh = circuit::find_corners(h, circuit::solve_dc(h), "out", 0.1, 1e8);
  CHECK(kh.f_low_hz == doctest::Approx(fc).epsilon(1e-6));
  CHECK(kh.f_high_hz == 0.0);
}

TEST_CASE("Noise: a resistor gives sqrt(4kTR) (Johnson-Nyquist); a divider gives that of R1 || R2") {
  Circuit c;
  c.vsource("V1", "signal", "in", "0", 0.0, 1.0);
  c.resistor("R1", "R1", "in", "out", 30e3);
  c.resistor("R2", "R2", "out", "0", 10e3);
  const auto op = circuit::solve_dc(c);
  const auto n = circuit::noise(c, op, "out", 1e3);
  const double rp = 30e3 * 10e3 / 40e3;
  CHECK(n.output_v_rthz == doctest::Approx(std::sqrt(4 * kt() * rp)).epsilon(1e-9));
  CHECK(n.gain == doctest::Approx(0.25).epsilon(1e-12));
  CHECK(n.input_v_rthz == doctest::Approx(std::sqrt(4 * kt() * rp) / 0.25).epsilon(1e-9));
  // 10 kOhm at 300 K: 12.9 nV/sqrt(Hz), the figure every noise table quotes (from memory).
  Circuit r;
  r.vsource("V1", "signal", "in", "0", 0.0, 1.0);
  r.resistor("R1", "R", "in", "out", 1e-3);
  r.resistor("R2", "R", "out", "0", 10e3);
  CHECK(circuit::noise(r, circuit::solve_dc(r), "out", 1e3, 300 - devices::kZeroCelsius).output_v_rthz ==
        doctest::Approx(12.87e-9).epsilon(2e-3));
}

namespace {

// A JFET common-source stage with an unbypassed source resistor, driven through a source
// resistance, loaded through a coupling capacitor.
Circuit jfet_stage(devices::DeviceKind kind) {
  const double s = devices::polarity(kind);
  Circuit c;
  c.vsource("VDD", "supply", "vdd", "0", s * 15.0);
  c.vsource("VSIG", "signal", "sig", "0", 0.0, 1.0);
  c.resistor("RSIG", "source", "sig", "in", 10e3);
  c.capacitor("CIN", "CIN", "in", "gate", 100e-9);
  c.resistor("RG", "RG", "gate", "0", 1e6);
  c.resistor("RD", "RD", "vdd", "drain", 3.3e3);
  c.resistor("RS", "RS1", "source", "0", 470);
  c.capacitor("COUT", "COUT", "drain", "out", 10e-6);
  c.resistor("RL", "load", "out", "0", 22e3);
  c.jfet("Q1", "drain", "gate", "source", jfet(kind));
  return c;
}

// A BJT common-emitter stage with divider bias and a bypassed emitter resistor.
Circuit bjt_stage(devices::DeviceKind kind) {
  const double s = devices::polarity(kind);
  Circuit c;
  c.vsource("VDD", "supply", "vdd", "0", s * 12.0);
  c.vsource("VSIG", "signal", "sig", "0", 0.0, 1.0);
  c.resistor("RSIG", "source", "sig", "in", 600);
  c.capacitor("CIN", "CIN", "in", "base", 10e-6);
  c.resistor("R1", "R1", "vdd", "base", 47e3);
  c.resistor("R2", "R2", "base", "0", 10e3);
  c.resistor("RC", "RC", "vdd", "col", 4.7e3);
  c.resistor("RE1", "RE1", "emit", "x", 100);
  c.resistor("RE2", "RE2", "x", "0", 1e3);
  c.capacitor("CE", "CE", "x", "0", 100e-6);
  c.capacitor("COUT", "COUT", "col", "out", 10e-6);
  c.resistor("RL", "load", "out", "0", 10e3);
  c.bjt("Q1", "col", "base", "emit", bjt(kind));
  return c;
}

// Compares the solver with ngspice on one circuit: node voltages and supply current at the
// operating point, the complex output at three frequencies, output and input noise.
void check_against_ngspice(const Circuit& c, const std::vector<std::string>& nets) {
  circuit::SpiceOptions o;
  // Tight tolerances: ngspice's default RELTOL (1e-3) stops its Newton iteration short of
  // the agreement checked here.
  o.analyses = {".options reltol=1e-7 vntol=1e-10 abstol=1e-15", ".control", "op"};
  std::string pr = "print i(vdd)";
  for (const auto& n : nets) pr += " v(" + n + ")";
  o.analyses.push_back(pr);
  const double freqs[] = {20.0, 1e3, 1e7};
  for (std::size_t i = 0; i < 3; ++i) {
    o.analyses.push_back(fmt::format("ac lin 1 {0:g} {0:g}", freqs[i]));
    o.analyses.push_back(fmt::format("let re{0} = real(v(out))", i));
    o.analyses.push_back(fmt::format("let im{0} = imag(v(out))", i));
    o.analyses.push_back(fmt::format("print re{0} im{0}", i));
  }
  o.analyses.push_back("noise v(out) vsig lin 1 1k 1k");
  o.analyses.push_back("print onoise_spectrum inoise_spectrum");
  o.analyses.push_back(".endc");
  const auto run = test::run_ngspice(circuit::to_spice(c, o));
  CAPTURE(run.output);
  const auto op = circuit::solve_dc(c);
  for (const auto& n : nets) {
    CAPTURE(n);
    // ngspice prints six significant figures: 1e-5 is as close as the comparison can go.
    CHECK(op.v(c, n) == doctest::Approx(run.get("v(" + n + ")")).epsilon(1e-5));
  }
  CHECK(op.source_i.front() == doctest::Approx(run.get("i(vdd)")).epsilon(1e-5));
  for (std::size_t i = 0; i < 3; ++i) {
    CAPTURE(freqs[i]);
    const auto v = circuit::solve_ac(c, op, freqs[i])[*c.find_net("out")];
    const double mag = std::hypot(run.get(fmt::format("re{}", i)), run.get(fmt::format("im{}", i)));
    CHECK(v.real() == doctest::Approx(run.get(fmt::format("re{}", i))).epsilon(1e-5).scale(mag));
    CHECK(v.imag() == doctest::Approx(run.get(fmt::format("im{}", i))).epsilon(1e-5).scale(mag));
  }
  const auto n = circuit::noise(c, op, "out", 1e3);
  CHECK(n.output_v_rthz == doctest::Approx(run.get("onoise_spectrum")).epsilon(1e-5));
  CHECK(n.input_v_rthz == doctest::Approx(run.get("inoise_spectrum")).epsilon(1e-5));
}

}  // namespace

TEST_CASE("JFET common source, N and P channel: DC, AC and noise agree with ngspice to 1e-5") {
  for (auto kind : {devices::DeviceKind::njfet, devices::DeviceKind::pjfet}) {
    CAPTURE(devices::kind_name(kind));
    check_against_ngspice(jfet_stage(kind), {"gate", "source", "drain"});
  }
}

TEST_CASE("BJT common emitter, NPN and PNP: DC, AC and noise agree with ngspice to 1e-5") {
  for (auto kind : {devices::DeviceKind::npn, devices::DeviceKind::pnp}) {
    CAPTURE(devices::kind_name(kind));
    check_against_ngspice(bjt_stage(kind), {"base", "emit", "col", "x"});
  }
}

TEST_CASE("Device operating point: JFET region and small-signal figures follow the square law") {
  const Circuit c = jfet_stage(devices::DeviceKind::njfet);
  const auto op = circuit::solve_dc(c);
  REQUIRE(op.devices.size() == 1);
  const auto& d = op.devices.front();
  CHECK(d.designator == "Q1");
  CHECK(d.jfet_region == devices::JfetRegion::saturation);
  CHECK(d.v_ctrl_v == doctest::Approx(op.v(c, "gate") - op.v(c, "source")));
  CHECK(d.v_main_v == doctest::Approx(op.v(c, "drain") - op.v(c, "source")));
  CHECK(d.i_main_a == doctest::Approx(op.v(c, "source") / 470).epsilon(1e-6));
  // gm = 2*sqrt(BETA*(1 + lambda*VDS)*ID) for the square law with lambda.
  const auto q = jfet();
  CHECK(d.gm_s == doctest::Approx(2 * std::sqrt(q.beta() * (1 + q.lambda_per_v * d.v_main_v) * d.i_main_a)));
}

namespace {

// A BJT switch with its base driven from 25 V through 10 Ohm (an amp of base current, both
// junctions forward): damped Newton from zero needs about 80 iterations to get there.
Circuit hard_switch() {
  Circuit c;
  c.vsource("VDD", "supply", "vdd", "0", 30.0);
  c.vsource("VB", "bias", "drive", "0", 25.0);
  c.resistor("RB", "RB", "drive", "base", 10.0);
  c.resistor("RC", "RC", "vdd", "col", 100e3);
  c.bjt("Q1", "col", "base", "0", bjt());
  return c;
}

}  // namespace

TEST_CASE(
    "Hard DC case: when plain Newton runs out of iterations, gmin stepping and then source stepping reach the same "
    "answer") {
  const Circuit c = hard_switch();
  const auto ref = circuit::solve_dc(c);
  CHECK(ref.method == "newton");
  CHECK(ref.devices.front().bjt_saturated);
  // KCL at the base: the current through RB is the device's base current.
  CHECK((25.0 - ref.v(c, "base")) / 10.0 == doctest::Approx(ref.devices.front().i_ctrl_a).epsilon(1e-6));
  circuit::SolverOptions o;
  o.max_iterations = 60;  // too few for Newton from zero; enough per gmin step
  const auto g = circuit::solve_dc(c, o);
  CHECK(g.method == "gmin stepping");
  o.max_iterations = 20;  // too few for the gmin steps too: sources ramp up from zero
  const auto s = circuit::solve_dc(c, o);
  CHECK(s.method == "source stepping");
  for (const auto* op : {&g, &s}) {
    CAPTURE(op->method);
    CHECK(op->v(c, "base") == doctest::Approx(ref.v(c, "base")).epsilon(1e-7));
    CHECK(op->v(c, "col") == doctest::Approx(ref.v(c, "col")).epsilon(1e-7));
  }
  o.max_iterations = 1;  // nothing converges in one step: InfeasibleError
  CHECK_THROWS_AS(circuit::solve_dc(c, o), InfeasibleError);
}

TEST_CASE("A stack of three transistors on a divider solves, each VBE near 0.65 V") {
  Circuit c;
  c.vsource("VCC", "supply", "vcc", "0", 24.0);
  c.resistor("R1", "R1", "vcc", "b3", 20e3);
  c.resistor("R2", "R2", "b3", "b2", 10e3);
  c.resistor("R3", "R3", "b2", "b1", 10e3);
  c.resistor("R4", "R4", "b1", "0", 10e3);
  c.resistor("RC", "RC", "vcc", "c3", 1e3);
  c.bjt("Q3", "c3", "b3", "e3", bjt());
  c.bjt("Q2", "e3", "b2", "e2", bjt());
  c.bjt("Q1", "e2", "b1", "e1", bjt());
  c.resistor("RE", "RE", "e1", "0", 1e3);
  const auto op = circuit::solve_dc(c);
  REQUIRE(op.devices.size() == 3);
  for (const auto& d : op.devices) {
    CAPTURE(d.designator);
    CHECK(d.v_ctrl_v == doctest::Approx(0.65).epsilon(0.1));
    CHECK_FALSE(d.bjt_saturated);
  }
  // Each device's emitter current is the collector current of the one below it (KCL).
  CHECK(op.devices[0].i_main_a + op.devices[0].i_ctrl_a == doctest::Approx(op.devices[1].i_main_a).epsilon(1e-9));
  CHECK(op.devices[1].i_main_a + op.devices[1].i_ctrl_a == doctest::Approx(op.devices[2].i_main_a).epsilon(1e-9));
  CHECK(op.v(c, "e1") / 1e3 == doctest::Approx(op.devices[2].i_main_a + op.devices[2].i_ctrl_a).epsilon(1e-9));
}

TEST_CASE("Hard DC case against ngspice: the saturated switch with its stiff base drive") {
  const Circuit c = hard_switch();
  circuit::SpiceOptions o;
  o.analyses = {".options reltol=1e-7 vntol=1e-10 abstol=1e-15", ".control", "op", "print v(base) v(col) i(vdd)",
                ".endc"};
  const auto run = test::run_ngspice(circuit::to_spice(c, o));
  const auto op = circuit::solve_dc(c);
  CHECK(op.v(c, "base") == doctest::Approx(run.get("v(base)")).epsilon(1e-5));
  CHECK(op.v(c, "col") == doctest::Approx(run.get("v(col)")).epsilon(1e-4));
}

TEST_CASE("A circuit that fails validation is refused before solving") {
  Circuit c;
  c.vsource("V1", "supply", "a", "0", 5);
  c.capacitor("C1", "C", "a", "b", 1e-6);
  c.resistor("R1", "R", "b", "c", 1e3);
  CHECK_THROWS_AS(circuit::solve_dc(c), InputError);
}

TEST_CASE("log_sweep: points per decade, both ends included") {
  const auto f = circuit::log_sweep(10, 1e4, 10);
  REQUIRE(f.size() == 31);
  CHECK(f.front() == doctest::Approx(10));
  CHECK(f.back() == doctest::Approx(1e4));
  CHECK(f[10] == doctest::Approx(100));
}
