// Tests of src/stages/common.cpp: the closed-form pieces every stage evaluator shares, each
// against a hand calculation shown beside it or a textbook small-signal result named there.
#include "../../src/stages/common.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

using namespace shelfstage;
using namespace shelfstage::stages;
using namespace shelfstage::stages::detail;

namespace {

devices::JfetInstance jfet(double idss, double vp_abs, double lambda = 0) {
  devices::JfetInstance q;
  q.idss_a = idss;
  q.vp_abs_v = vp_abs;
  q.lambda_per_v = lambda;
  return q;
}

devices::BjtInstance bjt(double bf, double vaf) {
  devices::BjtInstance q;
  q.is_a = 1e-14;
  q.bf = bf;
  q.vaf_v = vaf;
  q.vt_v = 0.025852;
  return q;
}

// A stand-in shelf offering any value (ValueSource): nearest gives the target itself.
struct AnyValue : ValueSource {
  void nearest(double target, std::size_t n, std::vector<double>& out) const override {
    if (n > 0) out.push_back(target);
  }
  void spread(double lo, double hi, std::size_t n, std::vector<double>& out) const override {
    for (std::size_t i = 0; i < n; ++i)
      out.push_back(lo * std::pow(hi / lo, n > 1 ? static_cast<double>(i) / static_cast<double>(n - 1) : 0.0));
  }
};

}  // namespace

TEST_CASE("par: R1 R2 / (R1 + R2), an absent (0) or infinite resistor leaves the other") {
  CHECK(par(1e3, 1e3) == doctest::Approx(500));
  CHECK(par(3.3e3, 10e3) == doctest::Approx(3.3e3 * 10e3 / 13.3e3));
  CHECK(par(0, 4.7e3) == 4.7e3);
  CHECK(par(4.7e3, 0) == 4.7e3);
  CHECK(par(INFINITY, 4.7e3) == 4.7e3);
}

TEST_CASE("jfet_bias: self bias solves the square law with VGS = -ID RS (hand calculation)") {
  // IDSS 4 mA, |VP| 2 V (BETA = IDSS / VP^2 = 1 mA/V^2), RS 500, gate at 0 V, no lambda.
  // ID = BETA u^2 with u = VGS + |VP| = 2 - 500 ID: 0.5 u^2 + u - 2 = 0, u = -1 + sqrt(5)
  // = 1.23607 V, ID = 1.52786 mA, VGS = -0.76393 V. gm = 2 IDSS / |VP| (1 - VGS/VP)
  // (the square law's derivative, as in Sedra & Smith's JFET chapter) = 2.47214 mS.
  const JfetBias b = jfet_bias(jfet(4e-3, 2.0), 0.0, 500, 3.3e3, 12);
  REQUIRE(b.conducts);
  const double u = std::sqrt(5.0) - 1;
  CHECK(b.id_a == doctest::Approx(1e-3 * u * u).epsilon(1e-9));
  CHECK(b.vgs_v == doctest::Approx(u - 2).epsilon(1e-9));
  CHECK(b.vs_v == doctest::Approx(500 * 1e-3 * u * u).epsilon(1e-9));
  CHECK(b.vd_v == doctest::Approx(12 - 3.3e3 * 1e-3 * u * u).epsilon(1e-9));
  CHECK(b.gm_s == doctest::Approx(2 * 4e-3 / 2.0 * (1 - (u - 2) / -2.0)).epsilon(1e-9));
  CHECK(std::isinf(b.ro_ohm));  // no channel-length modulation: no output conductance
  CHECK(b.saturated());         // VDS 6.43 V above VGS - VP = 1.24 V

  // Gate at 0 V and no source resistor: ID = IDSS.
  CHECK(jfet_bias(jfet(4e-3, 2.0), 0.0, 0, 1e3, 12).id_a == doctest::Approx(4e-3));
  // Gate held beyond pinch-off: no current.
  CHECK_FALSE(jfet_bias(jfet(4e-3, 2.0), -2.5, 500, 1e3, 12).conducts);
}

TEST_CASE("jfet_bias: with lambda the solution satisfies ID = BETA (VGS + |VP|)^2 (1 + lambda VDS)") {
  // The square law with channel-length modulation (SPICE's level-1 JFET), checked by putting
  // the returned point back into it; ro = 1 / (lambda BETA u^2) (the textbook 1/(lambda ID)).
  const auto q = jfet(6e-3, 2.5, 0.02);
  const JfetBias b = jfet_bias(q, 1.0, 1.5e3, 2.2e3, 15);
  REQUIRE(b.conducts);
  const double u = b.vgs_v + 2.5;
  CHECK(b.id_a == doctest::Approx(q.beta() * u * u * (1 + 0.02 * b.vds_v)).epsilon(1e-6));
  CHECK(b.vgs_v == doctest::Approx(1.0 - b.id_a * 1.5e3).epsilon(1e-9));
  CHECK(b.ro_ohm == doctest::Approx(1 / (0.02 * q.beta() * u * u)).epsilon(1e-9));
}

TEST_CASE("bjt_bias: the base loop vth = IB rth + VBE + IE re against a bisection written here") {
  // Ebers-Moll forward active without Early effect: IC = IS (exp(VBE/VT) - 1), IB = IC / BF,
  // IE = IC + IB. The test finds VBE by bisection on the loop equation.
  const auto q = bjt(200, INFINITY);
  const double vth = 2.0, rth = 10e3, re = 1e3, rc = 4.7e3, vcc = 12;
  double lo = 0.3, hi = 0.9;
  const auto loop = [&](double vbe) {
    const double ic = q.is_a * (std::exp(vbe / q.vt_v) - 1);
    return ic / q.bf * rth + vbe + (ic + ic / q.bf) * re - vth;
  };
  for (int i = 0; i < 100; ++i) ((loop(0.5 * (lo + hi)) > 0) ? hi : lo) = 0.5 * (lo + hi);
  const double vbe = 0.5 * (lo + hi), ic = q.is_a * (std::exp(vbe / q.vt_v) - 1);
  const BjtBias b = bjt_bias(q, vth, rth, re, rc, vcc);
  REQUIRE(b.conducts);
  CHECK(b.vbe_v == doctest::Approx(vbe).epsilon(1e-7));
  CHECK(b.ic_a == doctest::Approx(ic).epsilon(1e-6));
  CHECK(b.ve_v == doctest::Approx((ic + ic / q.bf) * re).epsilon(1e-6));
  CHECK(b.vc_v == doctest::Approx(vcc - ic * rc).epsilon(1e-6));
  // The usual hand estimate IC ~ (vth - 0.65) / (re + rth / (BF + 1)) lands within 5 %.
  CHECK(b.ic_a == doctest::Approx((vth - 0.65) / (re + rth / 201)).epsilon(0.05));
  // gm = IC / VT and r_pi = BF / gm (Sedra & Smith's hybrid-pi model).
  CHECK(b.gm_s == doctest::Approx(b.ic_a / q.vt_v).epsilon(1e-9));
  CHECK(b.rpi_ohm == doctest::Approx(q.bf / b.gm_s).epsilon(1e-6));
  CHECK(std::isinf(b.ro_ohm));
}

TEST_CASE("bjt_bias: with an Early voltage IC carries the factor 1 + VCB / VAF at its own point") {
  const auto q = bjt(150, 80);
  const BjtBias b = bjt_bias(q, 2.5, 20e3, 1.5e3, 3.3e3, 12);
  REQUIRE(b.conducts);
  const double is_e = q.is_a * (std::exp(b.vbe_v / q.vt_v) - 1);
  CHECK(b.ic_a == doctest::Approx(is_e * (1 + (b.vc_v - b.vb_v) / 80)).epsilon(1e-6));
  CHECK(b.vb_v == doctest::Approx(2.5 - b.ib_a * 20e3).epsilon(1e-9));
  // ro = VAF / IC0 (the Early model's output resistance), IC0 without the Early factor.
  CHECK(b.ro_ohm == doctest::Approx(80 / is_e).epsilon(1e-9));
}

TEST_CASE("lf_corner_hz: one pole, two equal poles, a shelf (first-order sections, hand calculations)") {
  const double p = 2 * std::numbers::pi * 100;
  // One coupling pole: -3 dB at the pole.
  const LfSection one[] = {{p, 0}};
  CHECK(lf_corner_hz(one) == doctest::Approx(100).epsilon(1e-6));
  // Two equal poles: (w^2 / (w^2 + p^2))^2 = 1/2 gives w = p / sqrt(sqrt(2) - 1) = 1.5538 p.
  const LfSection two[] = {{p, 0}, {p, 0}};
  CHECK(lf_corner_hz(two) == doctest::Approx(100 / std::sqrt(std::sqrt(2.0) - 1)).epsilon(1e-6));
  // A bypassed resistor's shelf, pole p and zero z: (w^2 + z^2) / (w^2 + p^2) = 1/2 gives
  // w^2 = p^2 - 2 z^2.
  const double z = 2 * std::numbers::pi * 10;
  const LfSection shelf[] = {{p, z}};
  CHECK(lf_corner_hz(shelf) == doctest::Approx(std::sqrt(p * p - 2 * z * z) / (2 * std::numbers::pi)).epsilon(1e-6));
  // A shelf shallower than 3 dB (z > p / sqrt 2) never falls 3 dB; no sections, no corner.
  const LfSection shallow[] = {{p, 0.8 * p}};
  CHECK(lf_corner_hz(shallow) == 0.0);
  CHECK(lf_corner_hz({}) == 0.0);
}

TEST_CASE("hybrid-pi: common-emitter gain, input pole, Miller capacitance, follower (Sedra & Smith results)") {
  // rs 1k, r_pi 2.5k, gm 40 mS (beta 100), RC 5k, emitter grounded (a huge conductance).
  HybridPi m;
  m.g_src = 1 / 1e3;
  m.gpi = 1 / 2.5e3;
  m.gm = 0.04;
  m.g_e = 1e9;
  m.g_c = 1 / 5e3;
  // Mid-band: rpi / (rs + rpi) gm RC = 142.857.
  CHECK(hybrid_pi_dc_gain(m) == doctest::Approx(2.5 / 3.5 * 0.04 * 5e3).epsilon(1e-6));
  CHECK(hybrid_pi_gain(m, 1.0) == doctest::Approx(2.5 / 3.5 * 200).epsilon(1e-6));
  // Cpi alone: one pole at 1 / (2 pi Cpi (rs || rpi)) = 22.28 MHz.
  m.cpi = 10e-12;
  CHECK(hybrid_pi_corner_hz(m) ==
        doctest::Approx(1 / (2 * std::numbers::pi * 10e-12 * (1e3 * 2.5e3 / 3.5e3))).epsilon(1e-3));
  // Miller: Cin = Cpi + Cmu (1 + gm RC) at low frequency = 10 p + 1 p x 201.
  m.cmu = 1e-12;
  CHECK(hybrid_pi_input_capacitance(m, 2 * std::numbers::pi * 10) == doctest::Approx(211e-12).epsilon(1e-4));
  // Load capacitance alone: the output pole 1 / (2 pi CL RC) = 318.3 kHz.
  m.cpi = m.cmu = 0;
  m.c_load = 100e-12;
  CHECK(hybrid_pi_corner_hz(m) == doctest::Approx(1 / (2 * std::numbers::pi * 100e-12 * 5e3)).epsilon(1e-3));
  // Emitter degeneration RE 500: beta RC / (rs + rpi + (beta + 1) RE) = 9.259.
  m.c_load = 0;
  m.g_e = 1 / 500.0;
  CHECK(hybrid_pi_dc_gain(m) == doctest::Approx(100 * 5e3 / (1e3 + 2.5e3 + 101 * 500)).epsilon(1e-6));
  // Emitter follower into RE 1k: (beta + 1) RE / (rs + rpi + (beta + 1) RE) = 0.9665.
  HybridPi f = m;
  f.out_at_emitter = true;
  f.g_c = 1e9;
  f.g_e = 1 / 1e3;
  CHECK(hybrid_pi_dc_gain(f) == doctest::Approx(101e3 / (3.5e3 + 101e3)).epsilon(1e-6));
}

TEST_CASE("finish_response: band-edge losses from the sections and the upper pole") {
  // One coupling pole at 20 Hz: at 20 Hz the loss is 3.01 dB; an upper pole at 318.3 kHz
  // (load capacitance, as above) loses 10 log10(1 + (f/fp)^2) at f.
  HybridPi m;
  m.g_src = 1 / 1e3;
  m.gpi = 1 / 2.5e3;
  m.gm = 0.04;
  m.g_e = 1e9;
  m.g_c = 1 / 5e3;
  const LfSection lf[] = {{2 * std::numbers::pi * 20, 0}};
  Conditions c;
  c.load_farads = 100e-12;
  c.band_lo_hz = 20;
  c.band_hi_hz = 100e3;
  Performance p;
  finish_response(p, lf, m, c, 0.0, Detail::full);
  CHECK(p.loss_lo_db == doctest::Approx(10 * std::log10(2.0)).epsilon(1e-6));
  const double fp = 1 / (2 * std::numbers::pi * 100e-12 * 5e3);
  CHECK(p.loss_hi_db == doctest::Approx(10 * std::log10(1 + std::pow(100e3 / fp, 2))).epsilon(1e-4));
  CHECK(p.f_low_hz == doctest::Approx(20).epsilon(1e-6));
  CHECK(p.f_high_hz == doctest::Approx(fp).epsilon(1e-3));
  // Detail::core leaves the corners alone (they cost the most) but not the losses.
  Performance q;
  finish_response(q, lf, m, c, 0.0, Detail::core);
  CHECK(q.f_low_hz == 0);
  CHECK(q.loss_lo_db == doctest::Approx(p.loss_lo_db));
}

TEST_CASE("cap_for, thermal_v2 and the junction capacitances (hand calculations)") {
  // C = 1 / (2 pi R f): 1 k at 159.155 Hz takes 1 uF.
  CHECK(detail::cap_for(1e3, 1 / (2 * std::numbers::pi * 1e3 * 1e-6)) == doctest::Approx(1e-6));
  // Johnson-Nyquist 4 k T R: 1 k at 300 K = 1.6568e-17 V^2/Hz, the familiar 4.07 nV/sqrt(Hz).
  CHECK(thermal_v2(1e3, 26.85) == doctest::Approx(4 * 1.380649e-23 * 300 * 1e3).epsilon(1e-9));
  CHECK(std::sqrt(thermal_v2(1e3, 26.85)) == doctest::Approx(4.07e-9).epsilon(0.002));
  // A depletion capacitance is its zero-bias value at 0 V and falls with reverse bias as
  // C0 / (1 - V/phi)^m (the junction law SPICE uses): at V = -3 phi, C0 / 4^m.
  auto q = jfet(4e-3, 2);
  q.cgs_f = 4e-12;
  q.cgd_f = 1.5e-12;
  CHECK(cgs_at(q, 0) == doctest::Approx(4e-12));
  CHECK(cgd_at(q, -3 * devices::kJfetPb) == doctest::Approx(1.5e-12 / std::pow(4.0, devices::kJfetM)));
  auto b = bjt(100, 100);
  b.cje_f = 6e-12;
  b.cjc_f = 3e-12;
  CHECK(cbe_at(b, 0) == doctest::Approx(6e-12));
  CHECK(cbc_at(b, -3 * devices::kBjtVj) == doctest::Approx(3e-12 / std::pow(4.0, devices::kBjtM)));
}

TEST_CASE("triode_edge_excursion and gate_conduction_excursion: the roots of their load-line equations") {
  // BETA 1 mA/V^2, ID0 1 mA, headroom 3 V, k 1, r_ac 10k: (3 - a)^2 = 1 + 0.1 a, so
  // a^2 - 6.1 a + 8 = 0 and the smaller root a = (6.1 - sqrt(5.21)) / 2 = 1.90873 V.
  CHECK(triode_edge_excursion(1e-3, 0, 1e-3, 3, 1, 1e4) == doctest::Approx((6.1 - std::sqrt(5.21)) / 2).epsilon(1e-9));
  // Past the edge (BETA vds0^2 = 9 mA below ID0 = 10 mA): no room.
  CHECK(triode_edge_excursion(1e-3, 0, 10e-3, 3, 1, 1e4) == 0.0);
  // With lambda the root satisfies BETA (1 + lambda (vds0 - k a)) (vds0 - k a)^2 = ID0 + a/r_ac.
  const double a = triode_edge_excursion(1e-3, 0.02, 1e-3, 3, 2, 5e3);
  CHECK(1e-3 * (1 + 0.02 * (3 - 2 * a)) * std::pow(3 - 2 * a, 2) == doctest::Approx(1e-3 + a / 5e3).epsilon(1e-6));
  // Gate conduction without lambda: IDSS = ID0 + a / r_ac: (4 mA - 1.5 mA) x 2k = 5 V.
  CHECK(gate_conduction_excursion(1e-3, 0, 2, 1.5e-3, 6, 1, 2e3) == doctest::Approx(5.0));
  // With lambda: BETA VP^2 (1 + lambda (vds0 - k a)) = ID0 + a / r_ac.
  const double g = gate_conduction_excursion(1e-3, 0.02, 2, 1.5e-3, 6, 1, 2e3);
  CHECK(4e-3 * (1 + 0.02 * (6 - g)) == doctest::Approx(1.5e-3 + g / 2e3).epsilon(1e-9));
  // Already conducting (ID0 above IDSS): none.
  CHECK(gate_conduction_excursion(1e-3, 0, 2, 5e-3, 6, 1, 2e3) == 0.0);
}

TEST_CASE("bench and add_role: the supply on its rail, the source resistance, the load, a present role only") {
  Conditions c;
  c.supply_v = 9;
  c.source_ohm = 600;
  c.load_ohm = 2.2e3;
  auto net = bench(c);
  REQUIRE(net.find("VDD"));
  CHECK(net.find("VDD")->c.value == 9);
  CHECK(net.find("RSIG")->c.value == 600);
  CHECK(net.find("RL")->c.value == 2.2e3);
  CHECK(net.find("VSIG")->c.ac_volts == 1);
  CHECK_FALSE(net.find("CL"));
  c.negative_rail = true;
  c.source_ohm = 0;  // an ideal source: a milliohm stands in
  c.load_farads = 1e-9;
  net = bench(c);
  CHECK(net.find("VDD")->c.value == -9);
  CHECK(net.find("RSIG")->c.value == doctest::Approx(1e-3));
  REQUIRE(net.find("CL"));
  CHECK(net.find("CL")->c.value == 1e-9);

  const Role roles[] = {{"RD", "R3", 'R', false, false, "", "", "drain load"},
                        {"CS", "C2", 'C', true, true, "source", "0", "bypass"}};
  Values v;
  v[0] = 4.7e3;  // CS left out (0)
  const auto before = net.elements().size();
  add_role(net, roles, v, 0, "vdd", "drain");
  add_role(net, roles, v, 1, "source", "0");
  CHECK(net.elements().size() == before + 1);
  REQUIRE(net.find("R3"));
  CHECK(net.find("R3")->c.role == "RD");
  CHECK(net.find("R3")->c.value == 4.7e3);
  CHECK_FALSE(net.find("C2"));
}

TEST_CASE("load_resistor_for_gain: RL' = a (1/gm + r_deg), RD = 1 / (1/RL' - 1/RL) (hand calculation)") {
  // a 5, gm 2 mS, r_deg 100: RL' = 5 x 600 = 3 k; RD = 1 / (1/3k - 1/10k) = 4285.7.
  CHECK(load_resistor_for_gain(5, 2e-3, 100, 10e3) == doctest::Approx(1 / (1 / 3e3 - 1 / 10e3)));
  // Out of reach (RL' would pass the load): RL' = 0.9 RL, RD = 90 k.
  CHECK(load_resistor_for_gain(50, 2e-3, 100, 10e3) == doctest::Approx(1 / (1 / 9e3 - 1 / 10e3)));
}

TEST_CASE("gate_resistors: every one holds the input impedance with a 5 % part at its low end") {
  const AnyValue shelf;
  for (double zin : {50e3, 470e3, 2e6}) {
    CAPTURE(zin);
    const auto rs = gate_resistors(shelf, zin);
    REQUIRE_FALSE(rs.empty());
    for (double r : rs) CHECK(r * 0.95 >= zin);
    CHECK(std::is_sorted(rs.begin(), rs.end()));
  }
  // The bench's usual 1 M is offered when it is enough.
  const auto rs = gate_resistors(shelf, 100e3);
  CHECK(std::find(rs.begin(), rs.end(), 1e6) != rs.end());
}

TEST_CASE("unique_values: sorted, equal values (to 1e-9 relative) once") {
  std::vector<double> v = {3.3e3, 1e3, 1e3 * (1 + 1e-12), 2.2e3, 3.3e3};
  unique_values(v);
  CHECK(v == std::vector<double>{1e3, 2.2e3, 3.3e3});
}

TEST_CASE("jfet_cs: mid-band gain -gm RL' / (1 + gm RS1) behind the gate divider (Sedra & Smith CS stage)") {
  // The self-bias point of jfet_bias's first test: ID 1.528 mA, gm 2.472 mS, RS 500.
  const auto q = jfet(4e-3, 2.0);
  Conditions c;
  c.supply_v = 12;
  c.load_ohm = 10e3;
  c.source_ohm = 600;
  const double u = std::sqrt(5.0) - 1, gm = 2e-3 * u, rl = par(3.3e3, 10e3), divider = 1e6 / (1e6 + 600);
  CsCircuit s;
  s.r_gate_ohm = 1e6;
  s.rd = 3.3e3;
  s.cin = 1e-6;
  s.cout = 10e-6;
  SUBCASE("unbypassed source resistor") {
    s.rs1 = 500;
    JfetBias b;
    const Performance p = jfet_cs(s, q, c, Detail::core, b);
    REQUIRE(p.valid);
    CHECK(b.id_a == doctest::Approx(1e-3 * u * u).epsilon(1e-9));
    CHECK(p.gain == doctest::Approx(-gm * rl / (1 + gm * 500) * divider).epsilon(1e-4));
    CHECK(p.zin_ohm == doctest::Approx(1e6).epsilon(1e-6));
  }
  SUBCASE("bypassed source resistor: the full -gm RL'") {
    s.rs2 = 500;
    s.cs = 1e-3;
    JfetBias b;
    const Performance p = jfet_cs(s, q, c, Detail::core, b);
    REQUIRE(p.valid);
    CHECK(p.gain == doctest::Approx(-gm * rl * divider).epsilon(1e-4));
  }
}
