// Tests of the stage analysis: figures against the textbook self-bias solution and ngspice,
// the 1 % agreement rule, rating warnings (common practice) and cautions, role parsing.
#include "shelfstage/report/analysis.hpp"

#include <nlohmann/json.hpp>
#include <doctest/doctest.h>

#include <cmath>
#include <numbers>
#include <string>

#include "report_fixture.hpp"
#include "shelfstage/devices/spread.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/stages/exact.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage;
using report::Analysis;
using report::PartInfo;
using report::StageUnderTest;

namespace {

const stages::Topology& cs_self() { return *stages::find_topology("jfet-cs-self"); }

// An N-channel piece without channel-length modulation, so the square law alone sets the
// bias and the hand solution below is exact: IDSS 4 mA, |VP| 2 V.
stages::Transistor square_law_jfet(devices::DeviceKind kind = devices::DeviceKind::njfet) {
  stages::Transistor q;
  q.kind = kind;
  q.jfet.kind = kind;
  q.jfet.idss_a = 4e-3;
  q.jfet.vp_abs_v = 2.0;
  q.jfet.lambda_per_v = 0.0;
  q.jfet.cgs_f = 4.5e-12;
  q.jfet.cgd_f = 1.5e-12;
  return q;
}

constexpr double kRg = 1e6, kRd = 4.7e3, kRs1 = 500, kCin = 10e-6, kCout = 1e-6, kLoad = 10e3, kSupply = 12;

// Common source, self-biased through an unbypassed RS1 (no RS2/CS), into 10k from 0 ohms.
StageUnderTest self_bias_stage(double supply_v = kSupply, double rd = kRd,
                               devices::DeviceKind kind = devices::DeviceKind::njfet) {
  const auto& t = cs_self();
  StageUnderTest s;
  s.topology = &t;
  s.values = report::role_values(t, {{"RG", kRg}, {"RD", rd}, {"RS1", kRs1}, {"CIN", kCin}, {"COUT", kCout}});
  s.transistor = square_law_jfet(kind);
  s.conditions.supply_v = supply_v;
  s.conditions.load_ohm = kLoad;
  s.conditions.source_ohm = 0;
  s.conditions.band_lo_hz = 20;
  s.conditions.band_hi_hz = 20e3;
  s.conditions.hd2_peak_v = 0;  // the analysis picks
  s.device = "test JFET";
  return s;
}

// Self-bias by hand (Sedra & Smith, Microelectronic Circuits, JFET biasing; also
// docs/physics.md, Bias): ID = IDSS (1 - ID RS/|VP|)^2, the root with ID RS < |VP|.
double hand_drain_current(double idss, double vp_abs, double rs) {
  const double k = rs / vp_abs;
  const double a = idss * k * k, b = -(2 * idss * k + 1), c = idss;
  return (-b - std::sqrt(b * b - 4 * a * c)) / (2 * a);
}

// What the stock would say about a part: its rating, and for capacitors its polarity.
PartInfo rated(const std::string& role, double rating, bool polarised = false, const std::string& plus_net = "") {
  PartInfo p;
  p.role = role;
  p.rating = rating;
  p.polarised = polarised;
  p.fitted_plus_net = plus_net;
  return p;
}

bool has_warning(const Analysis& a, const std::string& needle) {
  for (const auto& w : a.warnings)
    if (w.find(needle) != std::string::npos) return true;
  return false;
}

bool has_caution(const Analysis& a, const std::string& needle) {
  for (const auto& w : a.cautions)
    if (w.find(needle) != std::string::npos) return true;
  return false;
}

const report::PartStress& part(const Analysis& a, const std::string& role) {
  for (const auto& p : a.parts)
    if (p.name == role) return p;
  FAIL("no part " << role);
  return a.parts.front();
}

}  // namespace

TEST_CASE("bias point and gain agree with the self-bias solution by hand (Sedra & Smith, JFET self-bias)") {
  const Analysis a = report::analyze_stage(self_bias_stage());
  REQUIRE(a.exact);
  const double id = hand_drain_current(4e-3, 2.0, kRs1);
  // Small-signal: gm = (2/|VP|) sqrt(IDSS ID); Av = -gm (RD||RL) / (1 + gm RS1).
  const double gm = 2.0 / 2.0 * std::sqrt(4e-3 * id);
  const double rl_par = kRd * kLoad / (kRd + kLoad);
  const double gain = -gm * rl_par / (1 + gm * kRs1);
  CHECK(a.exact->bias_current_a == doctest::Approx(id).epsilon(0.005));
  CHECK(a.exact->v_common == doctest::Approx(id * kRs1).epsilon(0.005));
  CHECK(a.exact->v_out == doctest::Approx(kSupply - id * kRd).epsilon(0.005));
  CHECK(a.exact->gain == doctest::Approx(gain).epsilon(0.01));
  CHECK(a.closed_form.bias_current_a == doctest::Approx(id).epsilon(0.005));
  CHECK(a.closed_form.gain == doctest::Approx(gain).epsilon(0.01));
  // Resistor power I^2 R at the operating point (Joule's law).
  CHECK(part(a, "RD").power_w == doctest::Approx(id * id * kRd).epsilon(0.01));
  CHECK(part(a, "RS1").power_w == doctest::Approx(id * id * kRs1).epsilon(0.01));
  // DC across the output capacitor: the drain voltage (the load side sits at 0 V).
  CHECK(part(a, "COUT").dc_v == doctest::Approx(kSupply - id * kRd).epsilon(0.005));
  CHECK(part(a, "COUT").plus_net == "drain");
}

TEST_CASE("the output coupling corner matches 1/(2 pi COUT (Zout + RL)) (first-order high-pass)") {
  // CIN 10 uF into 1 MOhm puts the input pole at 0.016 Hz: the output pole alone sets f_low.
  const Analysis a = report::analyze_stage(self_bias_stage());
  REQUIRE(a.exact);
  const double f = 1.0 / (2 * std::numbers::pi * kCout * (a.exact->zout_ohm + kLoad));
  CHECK(a.exact->f_low_hz == doctest::Approx(f).epsilon(0.03));
  // Band-edge loss of one pole at 20 Hz: 10 log10(1 + (f/20)^2) dB.
  CHECK(a.exact->loss_lo_db == doctest::Approx(10 * std::log10(1 + (f / 20) * (f / 20))).epsilon(0.05));
}

TEST_CASE("the exported netlist runs in ngspice and gives the analysis's operating point and corners") {
  const StageUnderTest s = self_bias_stage();
  const Analysis a = report::analyze_stage(s);
  REQUIRE(a.exact);
  const std::string netlist = report::stage_spice(s);
  CHECK(netlist.find(".control") != std::string::npos);
  const auto run = test::run_ngspice(netlist);
  INFO(run.output);
  CHECK(run.error_lines().empty());
  CHECK(run.get("v(drain)") == doctest::Approx(a.exact->v_out).epsilon(0.01));
  CHECK(run.get("v(source)") == doctest::Approx(a.exact->v_common).epsilon(0.01));
  CHECK(run.get("supply_current") == doctest::Approx(a.exact->supply_current_a).epsilon(0.01));
  CHECK(std::pow(10.0, run.get("gain_mid_db") / 20) == doctest::Approx(std::abs(a.exact->gain)).epsilon(0.01));
  // ngspice reads the corners off a sweep of 20 points per decade: within 3 %.
  CHECK(run.get("f_low") == doctest::Approx(a.exact->f_low_hz).epsilon(0.03));
  CHECK(run.get("f_high") == doctest::Approx(a.exact->f_high_hz).epsilon(0.03));
}

TEST_CASE("two figures differ when they are more than 1 % apart and beyond the floor") {
  CHECK_FALSE(report::differs(100.0, 100.9));
  CHECK(report::differs(100.0, 101.2));
  CHECK(report::differs(-10.0, -10.2));
  CHECK_FALSE(report::differs(0.0, 2e-6, 1e-3));  // a gate at 0 V against 2 uV of leakage
  CHECK(report::differs(0.0, 2e-6));
  const Analysis a = report::analyze_stage(self_bias_stage());
  const auto j = report::analysis_json(a);
  // Every key listed as differing really does, by the same rule.
  for (const auto& key : j["differs"]) {
    const std::string k = key.get<std::string>();
    if (k.starts_with("nodes.")) continue;
    CHECK(report::differs(j["exact"][k].get<double>(), j["closed_form"][k].get<double>()));
  }
}

TEST_CASE("a resistor over half its rating warns (common practice: at most half); under it does not") {
  const double id = hand_drain_current(4e-3, 2.0, kRs1);
  const double p_rd = id * id * kRd;  // about 11 mW
  StageUnderTest s = self_bias_stage();
  SUBCASE("a tiny rating") {
    s.parts = {rated("RD", 1e-3)};
    const Analysis a = report::analyze_stage(s);
    CHECK(part(a, "RD").over);
    CHECK(has_warning(a, "R2 (RD) dissipates"));
    CHECK(has_warning(a, "more than all of its 1mW rating"));
  }
  SUBCASE("just under twice the dissipation: over half, under all") {
    s.parts = {rated("RD", 1.8 * p_rd)};
    const Analysis a = report::analyze_stage(s);
    CHECK(part(a, "RD").over);
    CHECK(has_warning(a, "more than half its"));
  }
  SUBCASE("just over twice the dissipation: fine") {
    s.parts = {rated("RD", 2.2 * p_rd)};
    const Analysis a = report::analyze_stage(s);
    CHECK_FALSE(part(a, "RD").over);
    CHECK(part(a, "RD").use == doctest::Approx(1 / 1.1).epsilon(0.01));
    CHECK(a.warnings.empty());
  }
}

TEST_CASE("a capacitor rated below its DC plus the signal peak (with a quarter of margin) warns") {
  StageUnderTest s = self_bias_stage();
  const double dc = kSupply - hand_drain_current(4e-3, 2.0, kRs1) * kRd;  // about 4.8 V on COUT
  SUBCASE("rated below the DC alone") {
    s.parts = {rated("COUT", dc * 0.9)};
    const Analysis a = report::analyze_stage(s);
    CHECK(part(a, "COUT").over);
    CHECK(has_warning(a, "C3 (COUT) holds"));
    CHECK(has_warning(a, "more than its"));
  }
  SUBCASE("rated 63 V: fine") {
    s.parts = {rated("COUT", 63)};
    const Analysis a = report::analyze_stage(s);
    CHECK_FALSE(part(a, "COUT").over);
    CHECK(a.warnings.empty());
  }
}

TEST_CASE("a polarised capacitor fitted the wrong way round warns; the right way gives its + lead") {
  StageUnderTest s = self_bias_stage();
  SUBCASE("+ lead on the output side, which sits lower") {
    s.parts = {rated("COUT", 25, true, "out")};
    const Analysis a = report::analyze_stage(s);
    CHECK(part(a, "COUT").reversed);
    CHECK(has_warning(a, "turn it round"));
  }
  SUBCASE("+ lead on the drain") {
    s.parts = {rated("COUT", 25, true, "drain")};
    const Analysis a = report::analyze_stage(s);
    CHECK_FALSE(part(a, "COUT").reversed);
    CHECK(a.warnings.empty());
    CHECK(has_caution(a, "C3 (COUT) is polarised: its + lead goes to the drain"));
  }
  SUBCASE("P-channel on a negative rail mirrors every voltage: the drain sits below ground, + to the output side") {
    StageUnderTest p = self_bias_stage(kSupply, kRd, devices::DeviceKind::pjfet);
    p.conditions.negative_rail = true;
    const Analysis a = report::analyze_stage(p);
    REQUIRE(a.exact);
    CHECK(a.exact->v_out < 0);
    CHECK(part(a, "COUT").plus_net == "out");
  }
  SUBCASE("P-channel on a positive rail, as one battery powers it: the stage turned over, every node above ground") {
    const Analysis a = report::analyze_stage(self_bias_stage(kSupply, kRd, devices::DeviceKind::pjfet));
    REQUIRE(a.exact);
    CHECK(a.exact->v_out > 0);
    CHECK(a.exact->v_in == doctest::Approx(kSupply).epsilon(1e-4));  // the gate returned to the rail
    CHECK(a.exact->v_common > a.exact->v_out);                       // the source toward the + rail
    CHECK(part(a, "COUT").plus_net == "drain");
    CHECK(part(a, "CIN").plus_net == "gate");
    // The closed form places it on the rail the same way.
    CHECK(a.closed_form.v_out == doctest::Approx(a.exact->v_out).epsilon(0.01));
  }
}

TEST_CASE("a transistor out of its amplifying region warns; a working one does not") {
  // RD 47k would need 72 V across it at 1.5 mA: the drain falls into the triode region.
  const Analysis bad = report::analyze_stage(self_bias_stage(kSupply, 47e3));
  CHECK(has_warning(bad, "the small-signal figures do not describe a linear amplifier"));
  const Analysis good = report::analyze_stage(self_bias_stage());
  CHECK_FALSE(has_warning(good, "linear amplifier"));
}

TEST_CASE("above 60 V DC the hazardous-voltage caution appears (docs/physics.md, Safety), not below") {
  CHECK(has_caution(report::analyze_stage(self_bias_stage(70, 33e3)), "hazardous voltage"));
  CHECK(has_caution(report::analyze_stage(self_bias_stage(70, 33e3)), "local codes and licensed practice"));
  CHECK_FALSE(has_caution(report::analyze_stage(self_bias_stage(60)), "hazardous voltage"));
}

TEST_CASE("parts without a stated rating are named in one caution") {
  StageUnderTest s = self_bias_stage();
  s.parts = {rated("RD", 0.25), rated("COUT", 25)};
  const Analysis a = report::analyze_stage(s);
  CHECK(has_caution(a, "no rating stated for R1, R3, C1"));
}

TEST_CASE("the corners bracket the nominal piece: self-bias current grows with IDSS and |VP|") {
  devices::DeviceRecord r;
  r.name = "NJ-spread";
  r.kind = devices::DeviceKind::njfet;
  r.jfet.idss_a = {1e-3, 8e-3, {}};
  r.jfet.vp_v = {-0.8, -4.0, {}};
  r.jfet.lambda_per_v = 0.0;
  const devices::DeviceSpread spread(r);
  StageUnderTest s = self_bias_stage();
  s.transistor.jfet = spread.jfet(spread.nominal());
  const Analysis a = report::analyze_stage(s, &spread);
  REQUIRE(a.corners.size() == spread.corners().size());
  double lo = 1, hi = 0;
  for (const auto& c : a.corners) {
    // Each corner by hand, as the nominal above.
    CHECK(c.performance.bias_current_a ==
          doctest::Approx(hand_drain_current(c.piece.idss_a, c.piece.vp_abs_v, kRs1)).epsilon(0.005));
    lo = std::min(lo, c.performance.bias_current_a);
    hi = std::max(hi, c.performance.bias_current_a);
  }
  CHECK(lo < a.closed_form.bias_current_a);
  CHECK(a.closed_form.bias_current_a < hi);
  CHECK(report::corners_text(a).find("corner 1") != std::string::npos);
}

TEST_CASE("role values: names in any case, optional roles left out, every mistake named") {
  const auto& t = cs_self();
  const auto v = report::role_values(t, {{"rg", 1e6}, {"Rd", 4.7e3}, {"CIN", 1e-7}, {"cout", 1e-6}});
  CHECK(v[t.role_index("RG")] == 1e6);
  CHECK(v[t.role_index("RS1")] == 0);
  CHECK(report::role_list(t) == "RG RD [RS1] [RS2] [CS] CIN COUT");

  auto message = [&](const std::vector<std::pair<std::string, double>>& given) {
    try {
      report::role_values(t, given);
    } catch (const InputError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  const std::string missing = message({{"RG", 1e6}, {"CIN", 1e-7}, {"COUT", 1e-6}});
  CHECK(missing.find("role RD") != std::string::npos);
  CHECK(missing.find("RG RD [RS1] [RS2] [CS] CIN COUT") != std::string::npos);
  const std::string unknown = message({{"RX", 1e3}});
  CHECK(unknown.find("role 'RX' is unknown") != std::string::npos);
  CHECK(unknown.find("RG RD [RS1]") != std::string::npos);
  CHECK(message({{"RG", 1e6}, {"RD", 4.7e3}, {"rd", 1e4}, {"CIN", 1e-7}, {"COUT", 1e-6}}).find("given twice") !=
        std::string::npos);
  CHECK(message({{"RG", 1e6}, {"RD", 0}, {"CIN", 1e-7}, {"COUT", 1e-6}}).find("role RD '0'") != std::string::npos);
  // A bypass capacitor needs the resistor it bypasses.
  CHECK(
      message({{"RG", 1e6}, {"RD", 4.7e3}, {"CS", 1e-4}, {"CIN", 1e-7}, {"COUT", 1e-6}}).find("no place without RS2") !=
      std::string::npos);
  // CIN=100 is 100 F: a slip of the prefix.
  CHECK(
      message({{"RG", 1e6}, {"RD", 4.7e3}, {"CIN", 100}, {"COUT", 1e-6}}).find("role CIN '100F' is not a plausible") !=
      std::string::npos);
  // RS2 without its bypass capacitor is a plain unbypassed resistor: allowed.
  CHECK(message({{"RG", 1e6}, {"RD", 4.7e3}, {"RS2", 470}, {"CIN", 1e-7}, {"COUT", 1e-6}}) == "no error");
}

TEST_CASE("a topology refuses a device of the wrong kind") {
  StageUnderTest s = self_bias_stage();
  s.transistor.kind = devices::DeviceKind::npn;
  CHECK_THROWS_AS(report::analyze_stage(s), InputError);
}

TEST_CASE("JSON: schema 1, plain SI numbers, both evaluators, parts with their stress") {
  StageUnderTest s = self_bias_stage();
  s.parts = {rated("RD", 1e-3)};
  const Analysis a = report::analyze_stage(s);
  const auto j = report::analysis_json(a);
  CHECK(j["schema"] == 1);
  CHECK(j["topology"] == "jfet-cs-self");
  CHECK(j["device"]["kind"] == "NJFET");
  CHECK(j["device"]["model"]["vp"].get<double>() == doctest::Approx(-2.0));
  CHECK(j["conditions"]["supply"].get<double>() == doctest::Approx(12));
  CHECK(j["exact"]["gain"].is_number());
  CHECK(j["exact"]["gain_db"].get<double>() == doctest::Approx(20 * std::log10(std::abs(a.exact->gain))));
  CHECK(j["exact"]["nodes"]["drain"].get<double>() == doctest::Approx(a.exact->v_out));
  CHECK(j["closed_form"]["bias_current"].is_number());
  REQUIRE(j["parts"].size() == 5);
  CHECK(j["parts"][1]["role"] == "RD");
  CHECK(j["parts"][1]["over"] == true);
  CHECK(j["parts"][1]["rating"].get<double>() == doctest::Approx(1e-3));
  CHECK(j["warnings"].size() == 1);
  CHECK(j["corners"].empty());
}

TEST_CASE("text: one figure where the evaluators agree, both where they differ by more than 1 %") {
  const Analysis a = report::analyze_stage(self_bias_stage());
  const std::string text = report::figures_text(a);
  CHECK(text.find("V(drain)") != std::string::npos);
  CHECK(text.find("gain, source to load") != std::string::npos);
  CHECK(text.find("nV/√Hz") != std::string::npos);
  CHECK(text.find("loss at 20Hz") != std::string::npos);
  const bool any_differ = !report::analysis_json(a)["differs"].empty();
  // The closed-form column (the last one) shows only when some figure differs: empty
  // columns are dropped.
  CHECK((text.find("closed form\n") != std::string::npos) == any_differ);
  const std::string parts = report::parts_text(a);
  CHECK(parts.find("+ to drain") != std::string::npos);
  CHECK(parts.find("not stated") != std::string::npos);
}

namespace {

// The demo's SA-210 (data-demo/devices.csv: Vos 5 mV, Ib 400 nA at most, Iq 2 mA) in a
// non-inverting stage on one 12 V supply: the inputs at the divider's mid-rail reference
// through RB, the gain 1 + RF/RG with CG holding it to one at DC.
struct OpampBench {
  devices::DeviceRecord record;
  devices::DeviceSpread spread;
  StageUnderTest stage;
};

OpampBench opamp_bench() {
  const auto devs = store::parse_devices_csv(test::read_source_file("data-demo/devices.csv"), "devices.csv");
  const auto it = std::find_if(devs.begin(), devs.end(), [](const auto& d) { return d.name == "SA-210"; });
  REQUIRE(it != devs.end());
  OpampBench b{*it, devices::DeviceSpread(*it), {}};
  const auto& t = *stages::find_topology("opamp-noninv");
  b.stage.topology = &t;
  b.stage.values = report::role_values(t, {{"RB", 100e3},
                                           {"RF", 47e3},
                                           {"RG", 4.7e3},
                                           {"RA1", 47e3},
                                           {"RA2", 47e3},
                                           {"CIN", 1e-6},
                                           {"CG", 22e-6},
                                           {"CREF", 10e-6},
                                           {"COUT", 10e-6}});
  b.stage.transistor.kind = devices::DeviceKind::opamp;
  b.stage.transistor.opamp = b.spread.opamp(b.spread.nominal(), 25);
  b.stage.conditions.supply_v = 12;
  b.stage.conditions.load_ohm = 10e3;
  b.stage.device = "SA-210";
  return b;
}

}  // namespace

TEST_CASE("an op-amp stage: U1's supply current and pins, and each corner at its own piece") {
  const OpampBench b = opamp_bench();
  const Analysis a = report::analyze_stage(b.stage, &b.spread);
  // Text: the op-amp's own current and its pins by name; nothing of a transistor.
  const std::string text = report::figures_text(a);
  CHECK(text.find("U1 supply current (quiescent)") != std::string::npos);
  CHECK(text.find("V(U1 +in)") != std::string::npos);
  CHECK(text.find("V(U1 out)") != std::string::npos);
  CHECK(text.find("collector") == std::string::npos);
  // The output's DC: the reference (6 V, RA1 = RA2) less Ib+ through RB and the divider's
  // Thevenin resistance RA1 || RA2 at the + input, plus Ib- RF (CG leaves no DC path through
  // RG: the DC gain is one, a textbook non-inverting stage with its gain resistor AC-coupled);
  // the nominal piece draws half the 400 nA maximum into each input.
  const double ib = 200e-9, r_plus = 100e3 + 23.5e3;
  const auto j = report::analysis_json(a);
  CHECK(j["closed_form"]["nodes"]["output"].get<double>() ==
        doctest::Approx(6 - ib * r_plus + ib * 47e3).epsilon(1e-5));
  CHECK(j["closed_form"]["nodes"]["plus"].get<double>() == doctest::Approx(6 - ib * r_plus).epsilon(1e-5));
  CHECK(j["closed_form"]["nodes"].contains("minus"));
  CHECK(j["device"]["designator"] == "U1");
  CHECK(j["device"]["model"]["gbw"].get<double>() == doctest::Approx(1.1e6));      // the record's typical GBW
  CHECK(j["closed_form"]["bias_current"].get<double>() == doctest::Approx(2e-3));  // the record's Iq
  // The corners: 16 pieces (devices/opamp.hpp), each evaluated at its own figures. Two pieces
  // apart only in the offset's sign (corners 1 and 5: Vos -5 mV and +5 mV) put the output
  // 10 mV apart: the offset reaches the output with the DC gain of one.
  REQUIRE(a.corners.size() == 16);
  REQUIRE(j["corners"][0].contains("opamp"));
  CHECK_FALSE(j["corners"][0].contains("hfe"));
  CHECK(j["corners"][0]["opamp"]["vos"].get<double>() == doctest::Approx(-5e-3));
  CHECK(j["corners"][4]["opamp"]["vos"].get<double>() == doctest::Approx(5e-3));
  CHECK(a.corners[4].performance.v_out - a.corners[0].performance.v_out == doctest::Approx(10e-3).epsilon(0.02));
  // The table: the figures a corner moves, each row tagged by its number alone.
  const std::string corners = report::corners_text(a);
  for (const char* col : {"GBW", "Vos", "Ib+", "Ib-", "V(U1 out)", "rated pk"})
    CHECK_MESSAGE(corners.find(col) != std::string::npos, col);
  CHECK(corners.find("hFE") == std::string::npos);
  CHECK(corners.find("corner 1)") == std::string::npos);
  CHECK(corners.find("  corner 16 ") != std::string::npos);
}

TEST_CASE("an op-amp's SPICE netlist prints its pins' voltages") {
  const OpampBench b = opamp_bench();
  const std::string net = report::stage_spice(b.stage);
  CHECK(net.find("print v(plus) v(minus) v(opout)") != std::string::npos);
}
