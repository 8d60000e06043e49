// Tests of src/report/design_json.cpp against docs/interface.md, the scripts' contract: every
// key its tables list for the request and the candidates (read from the document itself), the
// keys its paragraphs list for parts, nominal and worst, the figures as the candidate holds
// them, and the request back from its JSON.
#include "shelfstage/report/design_json.hpp"

#include <nlohmann/json.hpp>
#include <doctest/doctest.h>

#include <regex>
#include <sstream>
#include <set>
#include <string>

#include "report_fixture.hpp"

using namespace shelfstage;
using report::Json;

namespace {

struct DocKey {
  std::string key;
  std::string content;
};

// The keys of the table that follows `heading` in docs/interface.md: every `backticked` name in
// a row's first cell, with the row's second cell.
std::vector<DocKey> table_after(const std::string& heading) {
  const std::string doc = test::read_source_file("docs/interface.md");
  const auto at = doc.find(heading);
  REQUIRE(at != std::string::npos);
  std::vector<DocKey> keys;
  std::istringstream in(doc.substr(at + heading.size()));
  std::string line;
  bool in_table = false;
  const std::regex name("`([a-z_]+)`");
  while (std::getline(in, line)) {
    if (line.rfind("|", 0) != 0) {
      if (in_table) break;
      continue;
    }
    in_table = true;
    const auto second = line.find('|', 1);
    const std::string first = line.substr(1, second - 1);
    const std::string content = line.substr(second + 1);
    for (auto it = std::sregex_iterator(first.begin(), first.end(), name); it != std::sregex_iterator(); ++it)
      keys.push_back({(*it)[1].str(), content});
  }
  REQUIRE(keys.size() > 5);
  return keys;
}

bool is_range(const Json& j) { return j.is_array() && j.size() == 2 && j[0].is_number() && j[1].is_number(); }

}  // namespace

TEST_CASE("spec_json: every key of docs/interface.md's request table, and the request back from it") {
  synth::Spec s = test::request("jfet-cs-self", "SJ-101", 5, 12, 0.5);
  s.temp_c = std::pair{0.0, 40.0};
  s.max_current_a = 5e-3;
  const Json j = report::spec_json(s);
  for (const auto& k : table_after("**`spec`**")) CHECK_MESSAGE(j.contains(k.key), k.key);
  // Documented units: SI, a supply range as a number when it is one voltage, the band as
  // [low, high], the temperature as [low, high].
  CHECK(j["gain"] == 5);
  CHECK(j["load"] == 10e3);
  CHECK(j["supply"] == 12);
  CHECK(j["band"] == Json::array({20.0, 20e3}));
  CHECK(j["temp"] == Json::array({0.0, 40.0}));
  CHECK(j["swing"] == 0.5);
  CHECK(j["max_current"] == 5e-3);
  CHECK(j["spread"] == "correlated");
  // Back again: the same request.
  const synth::Spec back = report::spec_from_json(nlohmann::json::parse(j.dump()));
  CHECK(report::spec_json(back) == j);
  CHECK(back.gain == s.gain);
  CHECK(back.zin_min_ohm == s.zin_min_ohm);
  CHECK(back.temp_c == s.temp_c);
}

TEST_CASE("candidate_json: a single stage carries every documented key, and the candidate's own figures") {
  const auto inv = test::demo_inventory();
  const synth::Spec spec = test::request("bjt-ce-divider", "SQ-410", 10, 12);
  const synth::Candidate c = test::design_one(spec, inv);
  const Json j = report::candidate_json(c);
  for (const auto& k : table_after("**`candidates[]`**")) {
    if (k.content.find("chains only") != std::string::npos) {
      CHECK_MESSAGE(!j.contains(k.key), k.key);
      continue;
    }
    CHECK_MESSAGE(j.contains(k.key), k.key);
  }
  CHECK(j["topology"] == "bjt-ce-divider");
  CHECK(j["device"]["name"] == "SQ-410");
  CHECK(j["spread"] == "correlated");
  REQUIRE(c.yield);
  CHECK(j["yield"] == *c.yield);
  CHECK(j["pieces"] == c.pieces);
  CHECK(j["error_worst"] == doctest::Approx(c.error_worst));
  // nominal (docs/interface.md's **`nominal`** paragraph).
  const Json& n = j["nominal"];
  for (const char* k :
       {"gain", "bias_current", "nodes", "zin", "zout", "f_low", "f_high", "swing_peak", "supply_current", "swing_up",
        "swing_down", "swing_vpp", "clip_peak", "loss_low_db", "loss_high_db", "hd2", "hd3", "thd", "noise"})
    CHECK_MESSAGE(n.contains(k), k);
  CHECK(n["gain"] == doctest::Approx(c.nominal.gain));
  CHECK(n["swing_vpp"] == doctest::Approx(2 * n["swing_peak"].get<double>()));
  for (const char* k : {"base", "emitter", "collector"}) CHECK_MESSAGE(n["nodes"].contains(k), k);
  // worst: [min, max] each, holding its nominal figure (docs/worst-case.md).
  const Json& w = j["worst"];
  for (const char* k : {"gain", "bias_current", "swing_peak", "swing_vpp", "thd", "zin", "zout", "f_low", "f_high",
                        "supply_current", "loss_low_db", "loss_high_db"}) {
    CAPTURE(k);
    REQUIRE(is_range(w[k]));
    CHECK(w[k][0].get<double>() <= w[k][1].get<double>());
    if (n.contains(k) && n[k].is_number()) {
      CHECK(w[k][0].get<double>() <= n[k].get<double>() * (1 + 1e-9) + 1e-15);
      CHECK(w[k][1].get<double>() >= n[k].get<double>() * (1 - 1e-9) - 1e-15);
    }
  }
  CHECK(w.contains("nodes"));
  CHECK(w["evaluations"].is_number_integer());
  // parts (the **`parts[]`** paragraph): bounds are the combination's.
  REQUIRE(j["parts"].size() == c.parts.size());
  for (std::size_t i = 0; i < c.parts.size(); ++i) {
    const Json& p = j["parts"][i];
    CAPTURE(c.parts[i].role);
    for (const char* k : {"role", "designator", "value", "tol", "recipe", "kind", "text", "bounds", "rating",
                          "polarised", "plus_net", "lines"})
      CHECK_MESSAGE(p.contains(k), k);
    CHECK(p["recipe"].contains("join"));
    CHECK(p["recipe"].contains("values"));
    CHECK(p["bounds"][0] == doctest::Approx(c.parts[i].combo.lo));
    CHECK(p["bounds"][1] == doctest::Approx(c.parts[i].combo.hi));
    if (c.parts[i].kind == 'C')
      for (const char* k : {"dielectric", "minus_net", "dc", "plus_node", "minus_node"})
        CHECK_MESSAGE(p.contains(k), k);
  }
  // The transistor's stress (single stages): the shares docs/interface.md states.
  CHECK(j["transistor"]["voltage_share"] == doctest::Approx(0.8));
  CHECK(j["transistor"]["power_share"] == doctest::Approx(0.5));
}

TEST_CASE("candidate_json: a feedback stage's loop (docs/interface.md's `loop`), its ranges holding the nominal") {
  const auto inv = test::demo_inventory();
  const synth::Spec spec = test::request("bjt-ce-shunt", "SQ-410", 10, 12);
  const synth::Candidate c = test::design_one(spec, inv);
  REQUIRE(c.loop.has_value());
  const Json j = report::candidate_json(c);
  const Json& l = j["loop"];
  REQUIRE(l.is_object());
  for (const char* k : {"broken_at", "f_mid", "nominal", "gain", "f_cross", "phase_margin", "least_phase_margin",
                        "corners", "crossing"})
    CHECK_MESSAGE(l.contains(k), k);
  CHECK(l["broken_at"].get<std::string>().find("(RF) at the collector") != std::string::npos);
  CHECK(l["least_phase_margin"] == doctest::Approx(45));
  // Every corner piece and the nominal one at both supply ends, and the nominal build.
  CHECK(l["corners"].get<int>() >= 5);
  REQUIRE(is_range(l["gain"]));
  const double t = l["nominal"]["gain"].get<double>();
  CHECK(t > 0);
  CHECK(l["gain"][0].get<double>() <= t);
  CHECK(l["gain"][1].get<double>() >= t);
  if (l["nominal"]["f_cross"].is_number()) {
    REQUIRE(is_range(l["phase_margin"]));
    const double pm = l["nominal"]["phase_margin"].get<double>();
    CHECK(l["phase_margin"][0].get<double>() <= pm);
    CHECK(l["phase_margin"][1].get<double>() >= pm);
  } else {
    CHECK(l["nominal"]["phase_margin"].is_null());
  }
  // A stage without a feedback loop: null.
  const synth::Candidate d = test::design_one(test::request("bjt-ce-divider", "SQ-410", 10, 12), inv);
  CHECK(report::candidate_json(d)["loop"].is_null());
}

TEST_CASE("candidate_json: no Monte Carlo, a null yield; and the candidate back from its JSON") {
  const auto inv = test::demo_inventory();
  synth::Spec spec = test::request("jfet-cs-self", "SJ-101", 5, 12, 0.5);
  synth::Candidate c = test::design_one(spec, inv);
  c.yield.reset();
  const Json j = report::candidate_json(c);
  CHECK(j["yield"].is_null());
  const synth::Candidate back = report::candidate_from_json(nlohmann::json::parse(j.dump()), inv.devices, inv.pieces);
  CHECK(back.topology == c.topology);
  CHECK(back.device.name == c.device.name);
  REQUIRE(back.parts.size() == c.parts.size());
  for (std::size_t i = 0; i < c.parts.size(); ++i)
    CHECK(back.parts[i].combo.nominal == doctest::Approx(c.parts[i].combo.nominal));
  CHECK(report::candidate_devices(j) == std::vector<std::string>{"SJ-101"});
}

TEST_CASE("design_json: schema 1, spec, candidates and search; nothing fits adds the diagnosis") {
  const auto inv = test::demo_inventory();
  synth::Spec spec = test::request("jfet-cs-self", "SJ-101", 5, 12, 0.5);
  const auto r = synth::design(spec, inv);
  const Json j = report::design_json(r);
  CHECK(j["schema"] == 1);
  CHECK(j.contains("spec"));
  CHECK(j["candidates"].size() == r.candidates.size());
  for (const char* k : {"proposals", "evaluations", "seconds"}) CHECK_MESSAGE(j["search"].contains(k), k);
  CHECK_FALSE(j.contains("diagnosis"));
  spec.gain = 5000;  // beyond one stage (stages_max is 1)
  const auto none = synth::design(spec, inv);
  REQUIRE(none.candidates.empty());
  const Json d = report::design_json(none);
  REQUIRE(d.contains("diagnosis"));
  for (const char* k : {"binding", "detail", "suggestions", "with_purchases", "pieces_to_buy"})
    CHECK_MESSAGE(d["diagnosis"].contains(k), k);
}

TEST_CASE("candidate_json: an op-amp stage's device is U1, its pins the nodes, its piece's figures and ratings") {
  // The demo's SA-210 on +/-12 V: a 24 V span (the split supply's definition, 2 x 12 V)
  // within its 10..36 V operating range and 0.8 x its 40 V absolute maximum.
  auto spec = test::request("opamp-noninv-split", "SA-210", 5, 12);
  spec.split_supply = true;
  const auto c = test::design_one(spec, test::demo_inventory());
  const auto j = report::candidate_json(c);
  CHECK(j["device"]["kind"] == "OPAMP");
  for (const char* key : {"gbw", "aol", "pole2", "slew", "vos", "ib_plus", "ib_minus", "iq"})
    CHECK_MESSAGE(j["device"]["model"].contains(key), key);
  CHECK(j["device"]["model"]["gbw"].get<double>() == doctest::Approx(1.1e6));  // data-demo/devices.csv
  for (const char* key : {"plus", "minus", "output"}) {
    CHECK_MESSAGE(j["nominal"]["nodes"].contains(key), key);
    CHECK_MESSAGE(j["worst"]["nodes"].contains(key), key);
  }
  CHECK_FALSE(j["nominal"]["nodes"].contains("collector"));
  CHECK(j["nominal"]["nodes"]["output"].get<double>() == doctest::Approx(c.nominal.v_out));
  const auto& u = j["transistor"];
  CHECK(u["designator"] == "U1");
  CHECK(u["v_main"][1].get<double>() == doctest::Approx(24));
  CHECK(u["v_max"].get<double>() == doctest::Approx(40));
  CHECK(u["vs_min"].get<double>() == doctest::Approx(10));
  CHECK(u["vs_max"].get<double>() == doctest::Approx(36));
  CHECK(u["v_reverse"][1].get<double>() < 0.1);  // the offset, millivolts: linear operation
  // At least the quiescent share: the span times the supply current (2 mA).
  CHECK(u["power"][0].get<double>() >= 24 * 2e-3 * 0.999);
  CHECK(u["opamp"]["iq"].get<double>() == doctest::Approx(2e-3));
}
