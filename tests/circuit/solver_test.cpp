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

// Tight tolerances: ngspice's default RELTOL (1e-3) stops its Newton iteration short of the
// agreement the tests check.
constexpr const char* kTight = ".options reltol=1e-7 vntol=1e-10 abstol=1e-15";

// The operating point ngspice finds for the writer's netlist; `print` lists what it prints.
test::SpiceRun ngspice_op(const Circuit& c, const std::string& print) {
  circuit::SpiceOptions o;
  o.analyses = {kTight, ".control", "op", "print " + print, ".endc"};
  return test::run_ngspice(circuit::to_spice(c, o));
}

// What check_against_ngspice compares beside the node voltages.
struct Compare {
  std::string out = "out";                       ///< the net whose AC response and noise are compared
  std::vector<double> freqs = {20.0, 1e3, 1e7};  ///< AC frequencies
  bool noise = true;                             ///< compare output and input noise at 1 kHz
};

// The SPICE name of the first element of a kind that `pick` accepts, lower-cased as ngspice
// prints it.
std::string first_source(const Circuit& c, bool (*pick)(const circuit::Component&)) {
  for (const auto& el : c.elements()) {
    if (!pick(el.c)) continue;
    std::string name = circuit::spice_name(el.c);
    for (char& ch : name) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
    return name;
  }
  return {};
}

// Compares the solver with ngspice on one circuit, both running the writer's netlist: node
// voltages and the first voltage source's current at the operating point, the complex output
// at each frequency, output and input noise (the input: the first source with an AC value).
void check_against_ngspice(const Circuit& c, const std::vector<std::string>& nets, const Compare& k = {}) {
  const std::string supply =
      first_source(c, [](const circuit::Component& e) { return e.kind == circuit::ElementKind::vsource; });
  const std::string input = first_source(c, [](const circuit::Component& e) {
    return (e.kind == circuit::ElementKind::vsource || e.kind == circuit::ElementKind::isource) && e.ac_volts != 0;
  });
  circuit::SpiceOptions o;
  o.analyses = {kTight, ".control", "op"};
  std::string pr = "print";
  if (!supply.empty()) pr += " i(" + supply + ")";
  for (const auto& n : nets) pr += " v(" + n + ")";
  o.analyses.push_back(pr);
  for (std::size_t i = 0; i < k.freqs.size(); ++i) {
    o.analyses.push_back(fmt::format("ac lin 1 {0:g} {0:g}", k.freqs[i]));
    o.analyses.push_back(fmt::format("let re{0} = real(v({1}))", i, k.out));
    o.analyses.push_back(fmt::format("let im{0} = imag(v({1}))", i, k.out));
    o.analyses.push_back(fmt::format("print re{0} im{0}", i));
  }
  if (k.noise) {
    o.analyses.push_back(fmt::format("noise v({}) {} lin 1 1k 1k", k.out, input));
    o.analyses.push_back("print onoise_spectrum inoise_spectrum");
  }
  o.analyses.push_back(".endc");
  const auto run = test::run_ngspice(circuit::to_spice(c, o));
  CAPTURE(run.output);
  const auto op = circuit::solve_dc(c);
  for (const auto& n : nets) {
    CAPTURE(n);
    // ngspice prints six significant figures: 1e-5 is as close as the comparison can go.
    CHECK(op.v(c, n) == doctest::Approx(run.get("v(" + n + ")")).epsilon(1e-5));
  }
  if (!supply.empty()) CHECK(op.source_i.front() == doctest::Approx(run.get("i(" + supply + ")")).epsilon(1e-5));
  for (std::size_t i = 0; i < k.freqs.size(); ++i) {
    CAPTURE(k.freqs[i]);
    const auto v = circuit::solve_ac(c, op, k.freqs[i])[*c.find_net(k.out)];
    const double mag = std::hypot(run.get(fmt::format("re{}", i)), run.get(fmt::format("im{}", i)));
    CHECK(v.real() == doctest::Approx(run.get(fmt::format("re{}", i))).epsilon(1e-5).scale(mag));
    CHECK(v.imag() == doctest::Approx(run.get(fmt::format("im{}", i))).epsilon(1e-5).scale(mag));
  }
  if (k.noise) {
    const auto n = circuit::noise(c, op, k.out, 1e3);
    CHECK(n.output_v_rthz == doctest::Approx(run.get("onoise_spectrum")).epsilon(1e-5));
    CHECK(n.input_v_rthz == doctest::Approx(run.get("inoise_spectrum")).epsilon(1e-5));
  }
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
  const auto run = ngspice_op(c, "v(base) v(col) i(vdd)");
  const auto op = circuit::solve_dc(c);
  CHECK(op.v(c, "base") == doctest::Approx(run.get("v(base)")).epsilon(1e-5));
  CHECK(op.v(c, "col") == doctest::Approx(run.get("v(col)")).epsilon(1e-4));
}

TEST_CASE("A warm start (SolverOptions::start) reaches the cold start's operating point in fewer iterations") {
  // The common-emitter stage above driven quasi-statically by its base divider, from cutoff
  // (R2 1k: the base at 0.25 V) through the active region into saturation (R2 100k), each
  // point started from the last, as the swing and distortion sweeps do.
  Circuit c = bjt_stage(devices::DeviceKind::npn);
  circuit::OperatingPoint last;
  int warm_iterations = 0, cold_iterations = 0;
  for (int k = 0; k <= 40; ++k) {
    const double r2 = 1e3 * std::pow(100.0, k / 40.0);
    CAPTURE(r2);
    c.set_value("R2", r2);
    const auto cold = circuit::solve_dc(c);
    circuit::SolverOptions o;
    if (k > 0) o.start = &last;
    const auto warm = circuit::solve_dc(c, o);
    for (const char* n : {"base", "col", "emit"}) {
      CAPTURE(n);
      CHECK(warm.v(c, n) == doctest::Approx(cold.v(c, n)).epsilon(1e-6).scale(1e-3));
    }
    if (k > 0) {
      warm_iterations += warm.iterations;
      cold_iterations += cold.iterations;
    }
    last = warm;
  }
  CHECK(last.devices.front().bjt_saturated);
  MESSAGE("Newton iterations over the sweep: " << warm_iterations << " warm, " << cold_iterations << " cold");
  CHECK(2 * warm_iterations < cold_iterations);
  // The saturated end against ngspice (the outside check of the point the sweep reached).
  const auto run = ngspice_op(c, "v(base) v(col) i(vdd)");
  CHECK(last.v(c, "col") == doctest::Approx(run.get("v(col)")).epsilon(1e-4));
  CHECK(last.v(c, "base") == doctest::Approx(run.get("v(base)")).epsilon(1e-5));
  // A start from another circuit (other nets) is not used; a far-off start still converges to
  // the same point.
  const Circuit other = hard_switch();
  const auto other_op = circuit::solve_dc(other);
  circuit::SolverOptions o;
  o.start = &other_op;
  CHECK(circuit::solve_dc(c, o).v(c, "col") == doctest::Approx(last.v(c, "col")).epsilon(1e-6));
  circuit::OperatingPoint far = last;
  for (double& v : far.node_v) v = -50.0;
  far.node_v[0] = 0.0;
  o.start = &far;
  CHECK(circuit::solve_dc(c, o).v(c, "col") == doctest::Approx(last.v(c, "col")).epsilon(1e-6));
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

// The macro-model elements, each alone in a small circuit, against ngspice running the
// writer's netlist and against circuit theory (Ohm's and Kirchhoff's laws, the Shockley
// diode law).

TEST_CASE("Current source: SPICE's sign (the current flows from + through the source to -), DC and AC") {
  // 1 mA from `a` through I1 to ground: it draws the current out of `a`, which sits at -1 V
  // on 1 kOhm; a second source from ground into `b` lifts it, in AC too.
  Circuit c;
  c.isource("I1", "bias", "a", "0", 1e-3);
  c.resistor("R1", "R", "a", "0", 1e3);
  c.isource("I2", "signal", "0", "b", 2e-3, 1e-3);
  c.resistor("R2", "R", "b", "0", 2e3);
  c.capacitor("C2", "C", "b", "0", 100e-9);
  c.vsource("V1", "supply", "s", "0", 5.0);
  c.resistor("R3", "R", "s", "b", 3e3);
  const auto op = circuit::solve_dc(c);
  CHECK(op.v(c, "a") == doctest::Approx(-1.0).epsilon(1e-12));
  // b: 2 mA into 2k || 3k, plus 5 V through 3k into 2k: 2.4 + 2 V.
  CHECK(op.v(c, "b") == doctest::Approx(4.4).epsilon(1e-12));
  // V1 delivers (5 - 4.4)/3k: SPICE's sign, negative.
  REQUIRE(op.source_i.size() == 1);
  CHECK(op.source_i[0] == doctest::Approx(-0.2e-3).epsilon(1e-12));
  // AC: 1 mA into 2k || 3k || C.
  const double f = 1e3, w = 2 * kPi * f;
  const std::complex<double> z = 1.0 / (1.0 / 2e3 + 1.0 / 3e3 + std::complex<double>(0, w * 100e-9));
  const auto v = circuit::solve_ac(c, op, f)[*c.find_net("b")];
  CHECK(v.real() == doctest::Approx((1e-3 * z).real()).epsilon(1e-12));
  CHECK(v.imag() == doctest::Approx((1e-3 * z).imag()).epsilon(1e-12));
  // A current source is noiseless: the noise at b is that of 2k || 3k alone.
  const auto zb = [&](double fq) {
    return 1.0 / (1.0 / 2e3 + 1.0 / 3e3 + std::complex<double>(0, 2 * kPi * fq * 100e-9));
  };
  CHECK(circuit::noise(c, op, "b", 1e3).output_v_rthz ==
        doctest::Approx(std::sqrt(4 * kt() * (1.0 / 2e3 + 1.0 / 3e3)) * std::abs(zb(1e3))).epsilon(1e-9));
  check_against_ngspice(c, {"a", "b", "s"}, {.out = "b", .freqs = {10.0, 1e3, 1e5}});
}

namespace {

// The control of a controlled source off ground: two dividers of the input, c at 1/2 of it and
// d at 1/3, each resistor a noise source.
Circuit control_dividers() {
  Circuit c;
  c.vsource("VIN", "signal", "in", "0", 1.0, 1.0);
  c.resistor("R1", "R", "in", "c", 10e3);
  c.resistor("R2", "R", "c", "0", 10e3);
  c.resistor("R3", "R", "in", "d", 20e3);
  c.resistor("R4", "R", "d", "0", 10e3);
  return c;
}

}  // namespace

TEST_CASE("VCCS: gm (v(c) - v(d)) from out+ through the source to out-, all four pins off ground, DC, AC and noise") {
  // Output: the current from o through G1 into m, o loaded by RL || CL, m by RM.
  Circuit c = control_dividers();
  c.vccs("G1", "gain", "o", "m", "c", "d", 2e-3);
  c.resistor("RL", "R", "o", "0", 1e3);
  c.capacitor("CL", "C", "o", "0", 100e-9);
  c.resistor("RM", "R", "m", "0", 500);
  const auto op = circuit::solve_dc(c);
  const double i = 2e-3 * (0.5 - 1.0 / 3.0);
  CHECK(op.v(c, "o") == doctest::Approx(-i * 1e3).epsilon(1e-12));
  CHECK(op.v(c, "m") == doctest::Approx(i * 500).epsilon(1e-12));
  CHECK(op.v(c, "c") == doctest::Approx(0.5).epsilon(1e-12));  // the control draws nothing
  const double w = 2 * kPi * 1e3;
  const auto h = -2e-3 * (0.5 - 1.0 / 3.0) / (1.0 / 1e3 + std::complex<double>(0, w * 100e-9));
  const auto v = circuit::solve_ac(c, op, 1e3)[*c.find_net("o")];
  CHECK(v.real() == doctest::Approx(h.real()).epsilon(1e-12));
  CHECK(v.imag() == doctest::Approx(h.imag()).epsilon(1e-12));
  // The control's resistors' noise reaches o through gm: the adjoint solve of a matrix that
  // is not symmetric any more.
  check_against_ngspice(c, {"c", "d", "o", "m"}, {.out = "o", .freqs = {10.0, 1e3, 1e5}});
}

TEST_CASE("VCVS: v(o) - v(m) = gain (v(c) - v(d)), a floating output, DC, AC and noise; no source current of its own") {
  Circuit c = control_dividers();
  c.vcvs("E1", "gain", "x", "m", "c", "d", 4.0);
  c.resistor("RS", "R", "x", "o", 1e3);
  c.resistor("RL", "R", "o", "0", 2e3);
  c.capacitor("CL", "C", "o", "0", 100e-9);
  c.resistor("RM", "R", "m", "0", 1e3);
  const auto op = circuit::solve_dc(c);
  const double e = 4.0 * (0.5 - 1.0 / 3.0);
  CHECK(op.v(c, "x") - op.v(c, "m") == doctest::Approx(e).epsilon(1e-12));
  // The loop x -> RS -> RL -> ground -> RM -> m carries e / 4k.
  CHECK(op.v(c, "o") == doctest::Approx(e * 2e3 / 4e3).epsilon(1e-12));
  CHECK(op.v(c, "m") == doctest::Approx(-e * 1e3 / 4e3).epsilon(1e-12));
  CHECK(op.source_i.size() == 1);  // VIN's alone
  const std::complex<double> zo = 1.0 / (1.0 / 2e3 + std::complex<double>(0, 2 * kPi * 1e3 * 100e-9));
  const auto h = e * zo / (1e3 + zo + 1e3);
  const auto v = circuit::solve_ac(c, op, 1e3)[*c.find_net("o")];
  CHECK(v.real() == doctest::Approx(h.real()).epsilon(1e-12));
  CHECK(v.imag() == doctest::Approx(h.imag()).epsilon(1e-12));
  check_against_ngspice(c, {"c", "d", "x", "o", "m"}, {.out = "o", .freqs = {10.0, 1e3, 1e5}});
}

TEST_CASE("Diode: forward drop N Vt ln(I/IS + 1) at three currents, within 0.1 mV of ngspice; its AC conductance") {
  // A 1N4148-like junction (IS and N of that order, from memory), fed from a current source.
  const double is = 4e-9, n = 1.8;
  const double vt = devices::thermal_voltage(devices::kNominalCelsius);
  for (const double amps : {10e-6, 1e-3, 20e-3}) {
    CAPTURE(amps);
    Circuit c;
    c.isource("IF", "bias", "0", "a", amps, 1e-6);
    c.diode("D1", "clamp", "a", "0", is, n);
    const auto op = circuit::solve_dc(c);
    // The Shockley law; 1 pS of gmin across the junction takes a part in 1e7 of the current.
    CHECK(op.v(c, "a") == doctest::Approx(n * vt * std::log(amps / is + 1)).epsilon(1e-6));
    REQUIRE(op.diodes.size() == 1);
    CHECK(op.diodes[0].i_a == doctest::Approx(amps).epsilon(1e-6));
    CHECK(op.diodes[0].g_s == doctest::Approx((amps + is) / (n * vt)).epsilon(1e-6));
    // AC: 1 uA into the small-signal resistance N Vt / I.
    CHECK(std::abs(circuit::solve_ac(c, op, 1e3)[*c.find_net("a")]) ==
          doctest::Approx(1e-6 / (op.diodes[0].g_s + 1e-12)).epsilon(1e-9));
    const auto run = ngspice_op(c, "v(a)");
    CAPTURE(run.output);
    CHECK(std::abs(op.v(c, "a") - run.get("v(a)")) < 0.1e-3);
    // ngspice's diode has shot noise and ours none: the comparison leaves noise out.
    check_against_ngspice(c, {"a"}, {.out = "a", .freqs = {1e3}, .noise = false});
  }
}

namespace {

// An op-amp macro-model of standard elements in a non-inverting stage of gain 10 on +/-12 V:
// Aol 200k, GBW 1 MHz, a second pole at 5 MHz, Rout 50 Ohm, Vos 1 mV, 100 nA into each input.
// The input stage's current gm1 vd into R1 || C1 sets the gain and the dominant pole; the
// second VCCS into R2 || C2 (unity gain) the second pole; the VCVS copies that node behind
// ROUT. The clamp diodes hold the dominant-pole node within 1.5 V (plus a diode drop) of
// each rail, through sources hung from the rails: the output follows through the unity
// gains and ROUT, so it swings less into a heavier load, and no node of the model leaves the
// rails (the clamp current is gm1 vd at most).
struct MacroModel {
  double aol = 200e3, gbw_hz = 1e6, pole2_hz = 5e6, rout = 50, vos = 1e-3, ib = 100e-9;
  double gm1 = 1e-3, gm2 = 1e-3, headroom = 1.5, is = 1e-15, n = 1;
  double rf = 90e3, rg = 10e3, rl = 2e3;
  double r1() const { return aol / gm1; }
  double c1() const { return 1.0 / (2 * kPi * r1() * gbw_hz / aol); }
  double r2() const { return 1.0 / gm2; }
  double c2() const { return 1.0 / (2 * kPi * r2() * pole2_hz); }
  Circuit stage(double vin_dc) const {
    Circuit c;
    c.vsource("VCC", "supply", "vcc", "0", 12.0);
    c.vsource("VEE", "supply", "vee", "0", -12.0);
    c.vsource("VSIG", "signal", "in", "0", vin_dc, 1.0);
    c.vsource("VOS", "offset", "inp", "in", vos);
    c.isource("IBP", "bias", "inp", "0", ib);
    c.isource("IBN", "bias", "inm", "0", ib);
    c.vccs("G1", "gain", "0", "n1", "inp", "inm", gm1);
    c.resistor("R1", "gain", "n1", "0", r1());
    c.capacitor("C1", "pole", "n1", "0", c1());
    c.vccs("G2", "pole2", "0", "n2", "n1", "0", gm2);
    c.resistor("R2", "pole2", "n2", "0", r2());
    c.capacitor("C2", "pole2", "n2", "0", c2());
    c.vcvs("E1", "output", "n3", "0", "n2", "0", 1.0);
    c.resistor("ROUT", "output", "n3", "out", rout);
    c.vsource("VCLP", "clamp", "vcc", "clp", headroom);
    c.vsource("VCLN", "clamp", "cln", "vee", headroom);
    c.diode("DP", "clamp", "n1", "clp", is, n);
    c.diode("DN", "clamp", "cln", "n1", is, n);
    c.resistor("RF", "RF", "out", "inm", rf);
    c.resistor("RG", "RG", "inm", "0", rg);
    c.resistor("RL", "load", "out", "0", rl);
    return c;
  }
};

}  // namespace

TEST_CASE("Op-amp macro-model, non-inverting gain 10: DC offset, gain at 1 kHz and -3 dB corner against ngspice") {
  const MacroModel m;
  const Circuit c = m.stage(0.0);
  circuit::SpiceOptions o;
  o.analyses = {kTight,
                ".control",
                "op",
                "print v(out)",
                "ac dec 1000 100 10meg",
                "meas ac g1k find vm(out) at=1k",
                "meas ac gmax max vm(out)",
                "let lim = gmax/sqrt(2)",
                "meas ac fhi when vm(out)=lim fall=1",
                ".endc"};
  const std::string text = circuit::to_spice(c, o);
  const auto run = test::run_ngspice(text);
  CAPTURE(text);
  CAPTURE(run.output);
  CHECK(run.error_lines().empty());
  const auto op = circuit::solve_dc(c);
  // Output offset: Vos times the noise gain plus Ib times RF (the textbook sum, from memory),
  // 10 mV + 9 mV; the finite loop gain takes 5e-5 of it.
  const double noise_gain = 1 + m.rf / m.rg;
  CHECK(op.v(c, "out") == doctest::Approx(m.vos * noise_gain + m.ib * m.rf).epsilon(1e-3));
  CHECK(op.v(c, "out") == doctest::Approx(run.get("v(out)")).epsilon(1e-3));
  // The clamps are off: picoamperes through them.
  REQUIRE(op.diodes.size() == 2);
  for (const auto& d : op.diodes) CHECK(std::abs(d.i_a) < 1e-12);
  const double g1k = std::abs(circuit::solve_ac(c, op, 1e3)[*c.find_net("out")]);
  CHECK(g1k == doctest::Approx(noise_gain).epsilon(1e-3));
  CHECK(g1k == doctest::Approx(run.get("g1k")).epsilon(1e-3));
  // The corner: GBW over the noise gain for one pole (from memory); ROUT into the load and
  // the second pole take a few per cent off.
  const auto k = circuit::find_corners(c, op, "out", 1.0, 1e8);
  CHECK(k.f_high_hz == doctest::Approx(m.gbw_hz / noise_gain).epsilon(0.05));
  CHECK(k.f_high_hz == doctest::Approx(run.get("fhi")).epsilon(5e-3));
  // And the whole operating point, the response and the noise to ngspice's six figures.
  check_against_ngspice(c, {"inp", "inm", "n1", "n2", "n3", "out"}, {.freqs = {1e3, 1e5, 1e6}});
}

TEST_CASE("Op-amp macro-model driven into its clamps: the output sits at the clamp, as in ngspice within 10 mV") {
  const MacroModel m;
  for (const double vin : {2.0, -2.0}) {
    CAPTURE(vin);
    const Circuit c = m.stage(vin);
    const auto run = ngspice_op(c, "v(out) v(n1)");
    CAPTURE(run.output);
    const auto op = circuit::solve_dc(c);
    CHECK(op.method == "newton");  // the junction limiting takes the clamp on the first try
    const double out = op.v(c, "out");
    CHECK(std::abs(out - run.get("v(out)")) < 10e-3);
    CHECK(std::abs(op.v(c, "n1") - run.get("v(n1)")) < 10e-3);
    // The clamp: the rail less the headroom plus one diode drop at gm1 vd, then ROUT into
    // the load and the feedback network (a voltage divider).
    const double s = vin > 0 ? 1.0 : -1.0;
    const auto& on = op.diodes[vin > 0 ? 0 : 1];
    CHECK(on.i_a > 1e-4);
    // KCL at n1: G1's current less R1's goes through the clamp diode.
    const double vd = op.v(c, "inp") - op.v(c, "inm");
    CHECK(on.i_a == doctest::Approx(s * (m.gm1 * vd - op.v(c, "n1") / m.r1())).epsilon(1e-6));
    const double load = 1.0 / (1.0 / m.rl + 1.0 / (m.rf + m.rg));
    const double clamp = s * (12.0 - m.headroom) + s * on.v_v;
    CHECK(out == doctest::Approx(clamp * load / (load + m.rout)).epsilon(1e-6));
    CHECK(std::abs(out) < 12.0 - m.headroom + 1.0);
    CHECK(std::abs(out) > 10.0);
  }
}
