// Tests of the HTML report, rendered in headless Chromium (the outside reference for "a browser
// shows it"): designs from the demo shelf in every topology, N and P, a feedback pair with both
// its transistors, and one above 60 V. Each report must load nothing from elsewhere, parse as
// XML as a whole (so every inline SVG does), paint a page that is not blank with no console
// output, print to PDF, and name every part.
#include "shelfstage/report/html_report.hpp"

#include <doctest/doctest.h>
#include <fmt/format.h>

#include <filesystem>
#include <fstream>
#include <map>
#include <random>
#include <regex>
#include <tuple>

#include "report_fixture.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"
#include "support/browser.hpp"
#include "support/palette_check.hpp"

using namespace shelfstage;

namespace {

// Every colour of the page from the project's palette (draw/palette.hpp), and every CSS
// variable the style reads declared (a misspelt name would fall back to the browser's colour
// without a word).
bool palette_only(const std::string& html) {
  const auto foreign = test::foreign_colours(html);
  for (const auto& c : foreign) MESSAGE("not a palette colour: " << c);
  bool declared = true;
  const std::regex use(R"(var\(--([a-z-]+)\))");
  for (auto it = std::sregex_iterator(html.begin(), html.end(), use); it != std::sregex_iterator(); ++it)
    if (html.find("--" + (*it)[1].str() + ":") == std::string::npos) {
      MESSAGE("undeclared CSS variable: " << (*it)[1].str());
      declared = false;
    }
  return foreign.empty() && declared && html.find("var(--") != std::string::npos;
}

using Case = test::TopologyCase;

/// Capacitors rated for a 70 V supply, added to the demo shelf for the hazard case.
const char* const kHighVoltageStock =
    "C,1u,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,2u2,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,3u3,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,4u7,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,10u,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,47u,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,100u,10,20%,,160,electrolytic,Z1,radial,\n"
    "C,220n,10,10%,,250,film,Z2,box,\n"
    "C,1u,10,10%,,250,film,Z2,box,\n";

/// How the report names a transistor's kind.
std::string kind_words(devices::DeviceKind k) {
  switch (k) {
    case devices::DeviceKind::njfet: return "N-channel JFET";
    case devices::DeviceKind::pjfet: return "P-channel JFET";
    case devices::DeviceKind::npn: return "NPN transistor";
    case devices::DeviceKind::pnp: return "PNP transistor";
    case devices::DeviceKind::opamp: return "op-amp";
  }
  return "transistor";
}

std::string temp_dir() {
  std::random_device rd;
  const auto d = std::filesystem::temp_directory_path() / ("shelfstage-report-test-" + std::to_string(rd()));
  std::filesystem::create_directories(d);
  return d.string();
}

report::ReportInput input_for(const Case& k, const synth::Inventory& inv) {
  report::ReportInput in;
  in.spec = test::request(k.topology, k.device, k.gain, k.supply_v, k.swing_vpp);
  in.candidate = test::design_one(in.spec, inv);
  in.id = in.candidate.id;
  in.created = "2024-05-01 10:00:00";
  in.generator = "shelfstage (test)";
  in.pick = report::make_pick_list(in.candidate, 2, inv.parts);
  in.bias_samples = 80;
  return in;
}

/// Checks that hold for every report; returns the dumped DOM.
std::string check_report(const report::ReportInput& in, const std::string& html, const std::string& dir,
                         const std::string& name, std::size_t expected_svgs = 6, const std::string& device = "Q1") {
  INFO(name);
  // Self-contained: no scripts, no external references of any kind (the only URLs are the two
  // XML namespaces), a content security policy that forbids fetching anything.
  CHECK(html.starts_with("<!DOCTYPE html>"));
  CHECK(html.find("<script") == std::string::npos);
  CHECK(html.find("<link") == std::string::npos);
  CHECK(html.find("<img") == std::string::npos);
  CHECK(html.find("@import") == std::string::npos);
  CHECK(html.find("default-src 'none'") != std::string::npos);
  const std::regex url_re(R"(https?://[^"' )]*)");
  for (auto it = std::sregex_iterator(html.begin(), html.end(), url_re); it != std::sregex_iterator(); ++it) {
    const std::string u = it->str();
    CHECK_MESSAGE((u == "http://www.w3.org/2000/svg" || u == "http://www.w3.org/1999/xhtml"), u);
  }
  for (std::size_t at = html.find("url("); at != std::string::npos; at = html.find("url(", at + 1))
    CHECK(html.compare(at, 5, "url(#") == 0);
  CHECK(html.find("@media print") != std::string::npos);

  const std::string page = dir + "/" + name + ".html";
  std::ofstream(page, std::ios::binary) << html;
  // The whole document through Chromium's XML parser: every inline SVG is well-formed XML.
  const std::string xhtml = dir + "/" + name + ".xhtml";
  std::ofstream(xhtml, std::ios::binary) << html;
  const std::string xml_dom = test::dump_dom(xhtml);
  CHECK(xml_dom.find("parsererror") == std::string::npos);
  std::size_t svgs = 0;
  for (std::size_t at = html.find("<svg"); at != std::string::npos; at = html.find("<svg", at + 1)) ++svgs;
  CHECK(svgs == expected_svgs);  // schematic, gain, phase, bias (none for an op-amp), transfer, sine

  // Rendered: not blank, and not a word on the console (the DOM and the PDF print from the
  // same launch).
  const auto run = test::render(page, 1200, 2400, {.dom = true, .pdf = true});
  CHECK_MESSAGE(run.console.empty(), run.log);
  REQUIRE(!run.screenshot.empty());
  const auto img = test::decode_png(run.screenshot);
  CHECK(img.width == 1200);
  CHECK(test::distinct_colours(img) > 200);
  CHECK(test::inked_fraction(img) > 0.5);  // the paper column on the grey page, and what is on it

  // Every part by its designator, in the page as the browser built it.
  const std::string dom = run.dom;
  for (const auto& rp : in.candidate.parts)
    CHECK_MESSAGE(dom.find(">" + rp.designator + "<") != std::string::npos, rp.designator);
  CHECK(dom.find(">" + device + "<") != std::string::npos);
  for (const char* id : {"schematic", "response", "bias", "swing", "parts", "pick", "figures", "cautions"})
    CHECK_MESSAGE(dom.find(std::string("<section id=\"") + id + "\"") != std::string::npos, id);

  // It prints: a PDF of a few A4 pages.
  const std::string& pdf = run.pdf;
  REQUIRE(pdf.starts_with("%PDF-"));
  const int pages = test::pdf_pages(pdf);
  CHECK(pages >= 2);
  CHECK(pages <= 12);
  return dom;
}

}  // namespace

TEST_CASE("the browser harness sees console errors and blank pages (so the checks below can fail)") {
  const std::string dir = temp_dir();
  std::ofstream(dir + "/bad.html") << "<!DOCTYPE html><html><body><script>nosuchfunction()</script></body></html>";
  const auto run = test::render(dir + "/bad.html", 400, 300);
  CHECK(!run.console.empty());
  const auto img = test::decode_png(run.screenshot);
  CHECK(test::distinct_colours(img) == 1);
  CHECK(test::inked_fraction(img) == 0.0);
  std::filesystem::remove_all(dir);
}

TEST_CASE("html_report: every topology, N and P, renders whole in Chromium") {
  const auto inv = test::demo_inventory();
  const std::string dir = temp_dir();
  for (const auto& k : test::kTopologyCases) {
    const auto in = input_for(k, inv);
    const std::string html = report::html_report(in);
    const std::string dom = check_report(in, html, dir, k.topology);
    CHECK(palette_only(html));
    // The pick list's bins and the request's band are in it.
    REQUIRE(in.pick);
    for (const auto& l : in.pick->lines)
      if (!l.bin.empty()) CHECK(dom.find(">" + l.bin + "<") != std::string::npos);
    CHECK(dom.find("requested band") != std::string::npos);
    // Electrolytics: the schematic marks them and the cautions say which way they go.
    for (const auto& rp : in.candidate.parts)
      if (rp.polarised) CHECK(dom.find(rp.designator + " (" + rp.role + ") is polarised") != std::string::npos);
    CHECK(dom.find("Hazardous voltage") == std::string::npos);
  }
  if (std::getenv("SHELFSTAGE_KEEP_REPORTS") == nullptr) std::filesystem::remove_all(dir);
}

TEST_CASE("html_report: an op-amp stage, on one supply and on a split one: U1 as an op-amp, no bias picture") {
  const auto inv = test::demo_inventory();
  const std::string dir = temp_dir();
  for (const bool split : {false, true}) {
    const Case k = split ? Case{"opamp-inv-split", "SA-210", 5, 12, 2} : Case{"opamp-noninv", "SA-210", 10, 12, 2};
    report::ReportInput in;
    in.spec = test::request(k.topology, k.device, k.gain, k.supply_v, k.swing_vpp);
    in.spec.split_supply = split;
    in.candidate = test::design_one(in.spec, inv);
    in.id = in.candidate.id;
    in.created = "2024-05-01 10:00:00";
    in.generator = "shelfstage (test)";
    in.pick = report::make_pick_list(in.candidate, 1, inv.parts);
    in.bias_samples = 80;
    const std::string html = report::html_report(in);
    // Five pictures: the bias picture is left out, and a line says why.
    const std::string dom = check_report(in, html, dir, k.topology, 5, "U1");
    CHECK(palette_only(html));
    CHECK(dom.find("No bias picture for an op-amp stage") != std::string::npos);
    CHECK(html.find("id=\"bias\"><svg") == std::string::npos);
    // The schematic draws the op-amp, not its model's elements; the parts table names it.
    CHECK(dom.find("U1.G1") == std::string::npos);
    CHECK(dom.find(">op-amp<") != std::string::npos);
    CHECK(dom.find("U1 supply current (quiescent)") != std::string::npos);
    CHECK(dom.find("V(U1 out)") != std::string::npos);
    CHECK(dom.find("collector current") == std::string::npos);
    // Its stress row: the supply span (12 V, or 2 x 12 V split: the split supply's
    // definition) and its ratings with the operating range (SA-210: 10..36 V).
    CHECK(dom.find(split ? "from a 24V span" : "from a 12V span") != std::string::npos);
    CHECK(dom.find("operating 10V") != std::string::npos);
    CHECK((dom.find(">VEE<") != std::string::npos) == split);
  }
  if (std::getenv("SHELFSTAGE_KEEP_REPORTS") == nullptr) std::filesystem::remove_all(dir);
}

TEST_CASE("html_report: a chain renders whole, the chain first and then each stage as built in it") {
  const auto inv = test::demo_inventory();
  const synth::Spec spec = test::chain_request();
  const auto r = synth::design(spec, inv);
  REQUIRE_FALSE(r.candidates.empty());
  report::ReportInput in;
  in.spec = spec;
  in.candidate = r.candidates.front();
  REQUIRE(in.candidate.is_chain());
  synth::evaluate_candidate(in.candidate, spec);
  in.id = in.candidate.id;
  in.created = "2024-05-01 10:00:00";
  in.generator = "shelfstage (test)";
  in.pick = report::make_pick_list(in.candidate, 1, inv.parts);
  in.bias_samples = 60;
  const std::string html = report::html_report(in);
  CHECK(palette_only(html));
  CHECK(html.find("<script") == std::string::npos);
  CHECK(html.find("default-src 'none'") != std::string::npos);
  // Every id once (the stages' sections and plots are renamed s1-..., s2-...), and every
  // url(#...) reference names one of them.
  std::map<std::string, int> ids;
  const std::regex id_re(R"re(id="([^"]+)")re");
  for (auto it = std::sregex_iterator(html.begin(), html.end(), id_re); it != std::sregex_iterator(); ++it)
    ++ids[(*it)[1]];
  for (const auto& [id, n] : ids) CHECK_MESSAGE(n == 1, id);
  const std::regex ref_re(R"re(url\(#([^)]+)\))re");
  for (auto it = std::sregex_iterator(html.begin(), html.end(), ref_re); it != std::sregex_iterator(); ++it)
    CHECK_MESSAGE(ids.count((*it)[1]) == 1, (*it)[1]);

  const std::string dir = temp_dir();
  const std::string page = dir + "/chain.html";
  std::ofstream(page, std::ios::binary) << html;
  const std::string xhtml = dir + "/chain.xhtml";
  std::ofstream(xhtml, std::ios::binary) << html;
  CHECK(test::dump_dom(xhtml).find("parsererror") == std::string::npos);
  const auto run = test::render(page, 1200, 2400, {.dom = true, .pdf = true});
  CHECK_MESSAGE(run.console.empty(), run.log);
  REQUIRE(!run.screenshot.empty());
  const auto img = test::decode_png(run.screenshot);
  CHECK(test::distinct_colours(img) > 200);
  CHECK(test::inked_fraction(img) > 0.5);
  const std::string& dom = run.dom;
  for (const auto& rp : in.candidate.parts)
    CHECK_MESSAGE(dom.find(">" + rp.designator + "<") != std::string::npos, rp.designator);
  for (std::size_t k = 0; k < in.candidate.stages.size(); ++k) {
    const std::string q = fmt::format("Q{}01", k + 1);
    CHECK_MESSAGE(dom.find(">" + q + "<") != std::string::npos, q);
    CHECK(dom.find(fmt::format("<section id=\"s{}-schematic\"", k + 1)) != std::string::npos);
    CHECK(dom.find(fmt::format("<section id=\"s{}-bias\"", k + 1)) != std::string::npos);
  }
  for (const char* id : {"stages", "response", "pick", "cautions"})
    CHECK_MESSAGE(dom.find(std::string("<section id=\"") + id + "\"") != std::string::npos, id);
  const std::string& pdf = run.pdf;
  REQUIRE(pdf.starts_with("%PDF-"));
  CHECK(test::pdf_pages(pdf) >= 2);
  if (std::getenv("SHELFSTAGE_KEEP_REPORTS") == nullptr) std::filesystem::remove_all(dir);
}

TEST_CASE("html_report: a feedback pair shows both transistors, in the schematic and among the parts") {
  const auto inv = test::demo_inventory();
  // Gain 100 into 10k from 9 V with a high input impedance: the demo shelf's bipolar pair.
  synth::Spec spec;
  spec.gain = 100;
  spec.load_ohm = 10e3;
  spec.supply_lo_v = spec.supply_hi_v = 9;
  spec.zin_min_ohm = 300e3;
  spec.topologies = {"bjt-fb-pair"};
  spec.stages_max = 1;
  spec.top = 1;
  spec.mc_samples = 60;
  report::ReportInput in;
  in.spec = spec;
  in.candidate = test::design_one(spec, inv);
  const auto& c = in.candidate;
  REQUIRE(c.device2);
  REQUIRE(c.topology->second_device() != stages::SecondDevice::none);
  in.id = c.id;
  in.created = "2024-05-01 10:00:00";
  in.generator = "shelfstage (test)";
  in.pick = report::make_pick_list(c, 1, inv.parts);
  in.bias_samples = 60;
  const std::string html = report::html_report(in);
  CHECK(palette_only(html));
  const std::string dir = temp_dir();
  const std::string dom = check_report(in, html, dir, "pair");
  // Q2 has its row among the parts: its type and kind, its stress beside its ratings.
  const auto parts = dom.find("<section id=\"parts\"");
  REQUIRE(parts != std::string::npos);
  const std::string table = dom.substr(parts, dom.find("</section>", parts) - parts);
  const std::string q1_row =
      "<td>Q1</td><td>device</td><td>" + c.device.name + "</td><td>" + kind_words(c.device.kind) + "</td>";
  const std::string q2_row =
      "<td>Q2</td><td>device</td><td>" + c.device2->name + "</td><td>" + kind_words(c.device2->kind) + "</td>";
  CHECK(table.find(q1_row) != std::string::npos);
  CHECK(table.find(q2_row) != std::string::npos);
  const auto& r2 = c.device2->ratings;
  const std::string rated =
      r2.v_max_v ? "VCEO " + units::format_value(*r2.v_max_v, units::Unit::volt) : std::string("not stated");
  CHECK(table.find(rated, table.find(q2_row)) != std::string::npos);
  // The schematic draws both, each labelled with its own type and kind.
  const auto schematic = dom.find("<section id=\"schematic\"");
  REQUIRE(schematic != std::string::npos);
  const std::string drawing = dom.substr(schematic, dom.find("</section>", schematic) - schematic);
  for (const auto& [q, name, kind] : {std::tuple{std::string("Q1"), c.device.name, c.device.kind},
                                      std::tuple{std::string("Q2"), c.device2->name, c.device2->kind}}) {
    const auto group = drawing.find("data-part=\"" + q + "\"");
    REQUIRE_MESSAGE(group != std::string::npos, q);
    const std::string part = drawing.substr(group, drawing.find("</g>", group) - group);
    CHECK_MESSAGE(part.find(">" + q + "<") != std::string::npos, q);
    CHECK_MESSAGE(part.find(">" + name + "<") != std::string::npos, q);
    CHECK_MESSAGE(part.find(">" + kind_words(kind) + "<") != std::string::npos, q);
  }
  // In a chain the pair's transistors take their stage's numbers (the second stage: Q201, Q202).
  synth::Candidate staged = c;
  for (auto& rp : staged.parts) rp.stage = 2;
  const auto notes = report::schematic_notes(staged).notes;
  CHECK(notes.count("Q201") == 1);
  REQUIRE(notes.count("Q202") == 1);
  CHECK(notes.at("Q202").value == c.device2->name);
  CHECK(notes.count("Q2") == 0);
  if (std::getenv("SHELFSTAGE_KEEP_REPORTS") == nullptr) std::filesystem::remove_all(dir);
}

TEST_CASE("html_report: above 60 V the hazardous-voltage caution defers to local codes and licensed practice") {
  auto inv = test::demo_inventory(kHighVoltageStock);
  // A high-voltage NPN (VCEO 300 V; invented, as the demo's types): none of the demo's small-
  // signal types may take a 70 V rail (common practice: 80 % of VCEO or VDS(max) at most).
  {
    auto hv = *std::find_if(inv.devices.begin(), inv.devices.end(), [](const auto& d) { return d.name == "SQ-410"; });
    hv.name = "SQ-H31";
    hv.bjt.hfe = {50, 250, 120};
    hv.ratings = {300.0, 6.0, 0.625, std::nullopt};
    inv.devices.push_back(hv);
    auto line = *std::find_if(inv.parts.begin(), inv.parts.end(), [](const auto& p) { return p.device == "SQ-410"; });
    line.device = hv.name;
    line.id = static_cast<std::int64_t>(inv.parts.size()) + 1;
    line.bin = "Z3";
    inv.parts.push_back(line);
  }
  const Case k{"bjt-ce-divider", "SQ-H31", 5, 70, 2};
  const auto in = input_for(k, inv);
  const std::string html = report::html_report(in);
  const std::string dir = temp_dir();
  const std::string dom = check_report(in, html, dir, "hazard");
  // docs/physics.md, Safety: the caution, deferring to local codes and licensed practice, first
  // thing on the page (before the schematic) and again among the cautions.
  const auto first = dom.find("Hazardous voltage");
  REQUIRE(first != std::string::npos);
  CHECK(first < dom.find("<section id=\"schematic\""));
  CHECK(dom.find("Hazardous voltage", dom.find("<section id=\"cautions\"")) != std::string::npos);
  CHECK(dom.find("local codes and licensed practice") != std::string::npos);
  CHECK(dom.find("discharge") != std::string::npos);
  std::filesystem::remove_all(dir);
}

TEST_CASE("html_report: without stock the parts are listed with their recipes") {
  const auto inv = test::demo_inventory();
  auto in = input_for(test::kTopologyCases[0], inv);
  in.pick.reset();
  const std::string html = report::html_report(in);
  CHECK(html.find("No stock was given for a pick list") != std::string::npos);
  for (const auto& rp : in.candidate.parts) CHECK(html.find(">" + rp.designator + "<") != std::string::npos);
}

TEST_CASE("schematic_notes: IEC 60062 values, recipes, polarity and the bench") {
  const auto inv = test::demo_inventory();
  const auto in = input_for(test::kTopologyCases[3], inv);
  const auto o = report::schematic_notes(in.candidate);
  for (const auto& rp : in.candidate.parts) {
    REQUIRE(o.notes.count(rp.designator) == 1);
    const auto& n = o.notes.at(rp.designator);
    // IEC 60062 code: the multiplier letter stands for the decimal point (4k7, 100n, 2u2).
    CHECK(n.value.find('.') == std::string::npos);
    CHECK(n.polarised == rp.polarised);
    if (rp.polarised) CHECK(!n.plus_net.empty());
  }
  CHECK(o.notes.at("Q1").value == in.candidate.device.name);
  CHECK(o.notes.count("Q2") == 0);  // one transistor
  // IEC 60062 writes 10 kOhm as 10K and 1 kOhm as 1K0 (bench notes use the lower-case k).
  CHECK(o.notes.at("RL").value == "10k");
  CHECK(o.notes.at("RSIG").value == "1k0");
  report::ReportInput bad = in;
  bad.candidate.topology = nullptr;
  CHECK_THROWS_AS(report::html_report(bad), InputError);
}
