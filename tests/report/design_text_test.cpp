// Tests of src/report/design_text.cpp: the request on one line, the ranked candidates as a
// table with their recipes, the device and recipe words, the diagnosis lines. The figures are
// checked against their definitions (decibels as 20 log10 of a voltage ratio, IEC 60027-3;
// peak-to-peak as twice the peak of a sine; three significant figures as ISO 80000-1 rounds)
// and the table against the candidates it was given.
#include "shelfstage/report/design_text.hpp"

#include <doctest/doctest.h>

#include <cmath>

#include "report_fixture.hpp"
#include "shelfstage/units/notation.hpp"
#include "support/lines.hpp"

using namespace shelfstage;

namespace {

using test::lines_of;

/// How many pieces a recipe takes: "10k+150" two, "2k2||6k8" two, "4k7" one.
int pieces_in(const std::string& recipe) {
  int n = 1;
  for (std::size_t i = 0; i < recipe.size(); ++i) {
    if (recipe[i] == '+') ++n;
    if (recipe.compare(i, 2, "||") == 0) {
      ++n;
      ++i;
    }
  }
  return n;
}

}  // namespace

TEST_CASE("fixed3: three significant figures in plain decimals (ISO 80000-1 rounding)") {
  CHECK(report::fixed3(10) == "10.0");
  CHECK(report::fixed3(-10) == "-10.0");
  CHECK(report::fixed3(0.99849) == "0.998");
  CHECK(report::fixed3(0.99851) == "0.999");
  CHECK(report::fixed3(2.3456) == "2.35");
  CHECK(report::fixed3(123.46) == "123");
  CHECK(report::fixed3(4567.8) == "4568");  // more than three figures before the point: all kept
  CHECK(report::fixed3(0.012345) == "0.0123");
  CHECK(report::fixed3(0) == "0");
}

TEST_CASE("upper_corner: the value with its prefix, or beyond 1 GHz where the models stop") {
  CHECK(report::upper_corner(150e3) == "150kHz");
  CHECK(report::upper_corner(1e9) == "1GHz");
  CHECK(report::upper_corner(2.5e9) == ">1GHz");
}

TEST_CASE("spec_line: the request in words, the gain in decibels, the rail as the battery is wired") {
  synth::Spec s;
  s.gain = 10;
  s.load_ohm = 10e3;
  s.supply_lo_v = s.supply_hi_v = 9;
  std::string line = report::spec_line(s);
  // 20 log10(10) = 20 dB (IEC 60027-3: the level of a voltage ratio).
  CHECK(line.rfind("gain 10.0 (20.0 dB) into 10kΩ, +9V rail, ground at the battery's - terminal", 0) == 0);
  // No swing asked: the distortion bound is not applied (it holds at a swing), so the
  // default one is not shown and one given is shown as not applied.
  CHECK(line.find("THD") == std::string::npos);
  s.max_thd = 0.003;
  CHECK(report::spec_line(s).find("THD ≤ 0.3 % not applied (it holds at a swing; none asked)") != std::string::npos);
  s.max_thd = synth::Spec{}.max_thd;
  CHECK(line.find("1 copy") != std::string::npos);
  CHECK(line.ends_with(report::spread_words(s)));
  // Half: 20 log10(0.5) = -6.02 dB; every option shown once given.
  s.gain = 0.5;
  s.source_ohm = 600;
  s.load_farads = 220e-12;
  s.zin_min_ohm = 1e6;
  s.band_hz = std::pair{20.0, 20e3};
  s.swing_vpp = 2.0;
  s.max_current_a = 2e-3;
  s.temp_c = std::pair{0.0, 70.0};
  s.copies = 4;
  s.piece = "bag 3";
  s.prefer = synth::Spec::Prefer::distortion;
  line = report::spec_line(s);
  for (const char* part :
       {"gain 0.500 (-6.0 dB) into 10kΩ || 220pF from 600Ω", "Zin ≥ 1MΩ", "band 20Hz..20kHz",
        "swing 2 Vpp at THD ≤ 1 %", "preferring low distortion", "≤ 2mA", "0..70 °C", "4 copies", "piece bag 3"}) {
    INFO(part);
    CHECK(line.find(part) != std::string::npos);
  }
}

TEST_CASE("rail_words and spread_words: a range signed at each end on a negative rail; the two models") {
  synth::Spec s;
  s.supply_lo_v = 7;
  s.supply_hi_v = 9.6;
  CHECK(report::rail_words(s) == "+7..9.6V rail, ground at the battery's - terminal");
  s.negative_rail = true;
  CHECK(report::rail_words(s) == "-7..-9.6V rail, ground at the battery's + terminal");
  s.supply_lo_v = s.supply_hi_v = 12;
  CHECK(report::rail_words(s) == "-12V rail, ground at the battery's + terminal");
  s.spread = devices::SpreadModel::box;
  const std::string box = report::spread_words(s);
  s.spread = devices::SpreadModel::correlated;
  CHECK(box != report::spread_words(s));
  CHECK(box.find("box") != std::string::npos);
  CHECK(report::spread_words(s).find("correlated") != std::string::npos);
}

TEST_CASE("candidates_table: one line of figures per candidate, its recipes under it, pieces counted") {
  const auto inv = test::demo_inventory();
  synth::Spec spec = test::request("jfet-cs-self", "SJ-101", 5, 12, 0.5);
  spec.top = 3;
  const synth::DesignResult r = synth::design(spec, inv);
  REQUIRE(r.candidates.size() >= 2);
  const auto lines = lines_of(report::candidates_table(r));
  // A header, a rule, then two lines per candidate.
  REQUIRE(lines.size() == 2 + 2 * r.candidates.size());
  CHECK(lines[0].find("swing Vpp") != std::string::npos);
  for (std::size_t k = 0; k < r.candidates.size(); ++k) {
    const synth::Candidate& c = r.candidates[k];
    INFO(c.id);
    const std::string& row = lines[2 + 2 * k];
    const std::string& recipes = lines[3 + 2 * k];
    CHECK(row.find(c.id) != std::string::npos);
    CHECK(recipes == "      " + report::recipe_line(c));
    // The pieces per copy: every resistor and capacitor of the recipes, and the transistor.
    int pieces = 1;
    for (const auto& rp : c.parts) pieces += pieces_in(rp.recipe);
    CHECK(row.ends_with(" " + std::to_string(pieces)));
    // Peak to peak is twice the peak (a sine), nominal and the worst corner's.
    CHECK(row.find(units::format_value(2 * c.nominal.swing_peak_v) + " (" +
                   units::format_value(2 * c.worst.swing_peak.min) + ")") != std::string::npos);
    // The nominal gain lies in the worst-case range printed beside it.
    CHECK(c.worst.gain.min <= c.nominal.gain);
    CHECK(c.nominal.gain <= c.worst.gain.max);
  }
}

TEST_CASE("gain_window_note: the listed designs whose worst case leaves the gain window, named with it") {
  // From a real search on the demo shelf (a JFET stage's gain spreads with IDSS), then the
  // window set against each design's own worst error.
  const auto inv = test::demo_inventory();
  synth::Spec spec = test::request("jfet-cs-self", "SJ-101", 5, 12, 0.5);
  spec.top = 3;
  synth::DesignResult r = synth::design(spec, inv);
  REQUIRE(r.candidates.size() >= 2);
  double most = 0, least = 1;
  for (const auto& c : r.candidates) {
    most = std::max(most, c.error_worst);
    least = std::min(least, c.error_worst);
  }
  // Every one inside: nothing to say.
  r.spec.gain_tol = std::min(0.99, most + 0.01);
  CHECK(report::gain_window_note(r).empty());
  // Every one outside: said of them all, with the window in gain.
  r.spec.gain_tol = least / 2;
  const std::string all = report::gain_window_note(r);
  CHECK(all.find("No design here holds the gain within") != std::string::npos);
  CHECK(all.find(fmt::format("{}..{}", report::fixed3(r.spec.gain * (1 - r.spec.gain_tol)),
                             report::fixed3(r.spec.gain * (1 + r.spec.gain_tol)))) != std::string::npos);
  // Some: those named by their rank, and only those.
  r.candidates[0].error_worst = 0.5 * r.spec.gain_tol;
  for (std::size_t k = 1; k < r.candidates.size(); ++k) r.candidates[k].error_worst = 2 * r.spec.gain_tol;
  const std::string some = report::gain_window_note(r);
  CHECK(some.find("#1") == std::string::npos);
  CHECK(some.find("#2") != std::string::npos);
  CHECK(some.find("leave") != std::string::npos);
}

TEST_CASE("recipe_line and device_text: a stage's roles in order; a chain's by stage, its devices in signal order") {
  synth::Candidate a, b, chain;
  a.device.name = "SJ-101";
  a.parts = {{}, {}};
  a.parts[0].role = "RD";
  a.parts[0].recipe = "10k+150";
  a.parts[1].role = "RS";
  a.parts[1].recipe = "2k2||6k8";
  CHECK(report::recipe_line(a) == "RD 10k+150  RS 2k2||6k8");
  CHECK(report::device_text(a) == "SJ-101");
  devices::MeasuredPiece piece;
  piece.label = "bag 3";
  a.piece = piece;
  CHECK(report::device_text(a) == "SJ-101 [bag 3]");
  b.device.name = "SQ-510";
  chain.stages = {a, b};
  CHECK(report::device_text(chain) == "SJ-101 [bag 3] > SQ-510");
  chain.parts = a.parts;
  for (auto& p : chain.parts) p.stage = 1;
  synth::RolePart out;
  out.role = "RE";
  out.recipe = "1k";
  out.stage = 2;
  chain.parts.push_back(out);
  CHECK(report::recipe_line(chain) == "1: RD 10k+150  RS 2k2||6k8 | 2: RE 1k");
}

TEST_CASE("diagnosis_text: the reason on an error line, then the purchases, counted in pieces") {
  synth::DesignResult r;
  r.diagnosis.detail = "no stage reaches a gain of 40 within the headroom";
  CHECK(report::diagnosis_text(r) ==
        "error: no stage meets the request: no stage reaches a gain of 40 within the "
        "headroom\n");
  r.diagnosis.suggestions = {"buy 2 x 6.8k 5% (RS2 of jfet-cs-self)"};
  CHECK(report::diagnosis_text(r).find("what would make it feasible:\n  buy 2 x 6.8k") != std::string::npos);
  synth::Candidate c;
  c.topology = stages::find_topology("jfet-cs-self");
  c.device.name = "SJ-101";
  c.nominal.gain = -40.2;
  c.worst.gain.min = -44;
  c.worst.gain.max = -36.5;
  c.error_worst = 0.087;
  c.purchases = 1;
  r.diagnosis.with_purchases = c;
  const std::string text = report::diagnosis_text(r);
  CHECK(text.find("the smallest purchase that makes it feasible (1 piece):") != std::string::npos);
  CHECK(text.find("then: jfet-cs-self with SJ-101, gain -40.2 (-44.0..-36.5 worst case, error up to 8.7 %)") !=
        std::string::npos);
  r.diagnosis.with_purchases->purchases = 3;
  CHECK(report::diagnosis_text(r).find("(3 pieces):") != std::string::npos);
}
