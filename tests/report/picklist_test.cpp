// Tests of pick lists: assembly and polarity notes, nets for people, JSON, CSV and the
// shopping list (the allocation itself: tests/build/plan_test.cpp).
#include "shelfstage/report/picklist.hpp"

#include <nlohmann/json.hpp>
#include <doctest/doctest.h>

#include <algorithm>

#include "build/plan_fixture.hpp"

using namespace shelfstage;
using namespace shelfstage::test;
using report::make_pick_list;
using report::PickList;

TEST_CASE("assembly and polarity notes: combinations spelled out, + lead on the higher DC net") {
  // Common practice (docs/physics.md, Parts): electrolytics are polarised and the pick list
  // must say where the + lead goes; the bypass capacitor's + goes to the RE1-RE2 junction
  // (above ground), the output coupling capacitor's + to the collector (above the load's 0 V
  // DC).
  const PickList p = make_pick_list(ce_stage(), 1, ce_shelf());
  REQUIRE(p.assemblies.size() == 2);
  CHECK(p.assemblies[0].text == "R4 (RE1): 470 || 4k75 in parallel (R4a, R4b, side by side)");
  CHECK(p.assemblies[1].text == "R5 (RE2): 1k0 + 150 in series (R5a, R5b, end to end)");
  CHECK(p.assemblies[1].pieces == std::vector<std::string>{"R5a", "R5b"});
  REQUIRE(p.polarities.size() == 2);
  CHECK(p.polarities[0].designator == "C2");
  CHECK(p.polarities[0].minus_net == "0");
  CHECK(p.polarities[0].text == "C2 (CE, 220u electrolytic): + lead to the RE1\u2013RE2 junction, - lead to ground");
  CHECK(p.polarities[1].minus_net == "out");
  CHECK(p.polarities[1].plus == "the collector of Q1");
  CHECK(p.polarities[1].minus == "the output side (toward the load)");
}

TEST_CASE("net_for_people: x is the junction, or the emitter when RE1 is left out") {
  auto c = ce_stage();
  CHECK(report::net_for_people("x", c) == "the RE1\u2013RE2 junction");
  c.parts.erase(c.parts.begin() + 3);  // no RE1
  CHECK(report::net_for_people("x", c) == "the emitter of Q1 (RE1 is left out)");
  CHECK(report::net_for_people("0", c) == "ground");
  CHECK(report::net_for_people("in", c) == "the input side (toward the signal source)");
}

TEST_CASE("pick_json: the documented keys, numbers for R and C, the device name for transistors") {
  auto shelf = ce_shelf();
  shelf[8].qty = 0;  // no 470n: short
  const auto j = report::pick_json(make_pick_list(ce_stage(), 1, shelf));
  CHECK(j["schema"] == 1);
  REQUIRE(j["lines"].is_array());
  for (const auto& l : j["lines"])
    for (const char* key : {"bin", "kind", "value", "qty", "designators"}) CHECK(l.contains(key));
  CHECK(j["lines"][0]["bin"] == "A1");
  CHECK(j["lines"][0]["kind"] == "R");
  CHECK(j["lines"][0]["value"].is_number());
  const auto& last = j["lines"].back();
  CHECK(last["kind"] == "NPN");
  CHECK(last["value"] == "SQ-420");
  REQUIRE(j["short"].size() == 1);
  CHECK(j["short"][0]["kind"] == "C");
  CHECK(j["short"][0]["value"].get<double>() == doctest::Approx(470e-9));
  CHECK(j["short"][0]["qty"] == 1);
  CHECK(j["short"][0]["designators"] == report::Json::array({"C1"}));
}

TEST_CASE("pick_csv: a header, one row per line and per short item") {
  auto shelf = ce_shelf();
  shelf[8].qty = 0;
  const auto csv = report::pick_csv(make_pick_list(ce_stage(), 2, shelf));
  CHECK(csv.rfind("status,bin,kind,value,qty,designators,tol,rating,dielectric,part_id\n", 0) == 0);
  CHECK(std::count(csv.begin(), csv.end(), '\n') == 1 + 10 + 1);
  CHECK(csv.find("pick,A2,R,10k,4,R2.1 R2.2 R3.1 R3.2,5%,0.25,,3\n") != std::string::npos);
  CHECK(csv.find("short,,C,470n,2,C1.1 C1.2,") != std::string::npos);
}

TEST_CASE("shopping_text: quantity, value, tolerance and the least rating to order") {
  auto shelf = ce_shelf();
  shelf[2].qty = 0;  // no 10k
  shelf[7].qty = 0;  // no 220u (16 V electrolytic)
  const auto text = report::shopping_text(make_pick_list(ce_stage(), 2, shelf).short_items);
  CHECK(text.find("4  R       10k  5%   at least 0.25W") != std::string::npos);
  CHECK(text.find("R2.1 R2.2 R3.1 R3.2") != std::string::npos);
  CHECK(text.find("2  C      220u  20%  at least 16V electrolytic") != std::string::npos);
}

// Op-amps: counting rules of the bench (common practice, build/plan.hpp): a stock line
// counts packages, each U place takes one channel of a package, and the places of one type
// share its packages.

TEST_CASE("pick_text: an op-amp's packages and the channel each place takes, in words") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-4", 2, "D3"));
  const std::string text = report::pick_text(make_pick_list(opamp_stage(4), 3, shelf));
  // The table: one package (QTY 1) of the quad type for the three places.
  CHECK(text.find("D3   OPAMP   SA-4") != std::string::npos);
  CHECK(text.find("quad    1  U1.1 U1.2 U1.3\n") != std::string::npos);
  CHECK(text.find("SA-4, quad: 1 package, 3 of its 4 channels used, 1 spare.") != std::string::npos);
  CHECK(text.find("package 1 (bin D3): U1.1 on A, U1.2 on B, U1.3 on C; D spare") != std::string::npos);
  CHECK(text.find("Wire each spare channel as a follower") != std::string::npos);
  // Five copies of a dual with one package on the shelf: one taken, two short.
  shelf.back().device = "SA-2";
  shelf.back().qty = 1;
  const std::string short_text = report::pick_text(make_pick_list(opamp_stage(2), 5, shelf));
  CHECK(short_text.find("SA-2, dual: 1 package, 2 of its 2 channels used, none spare; 2 more packages short (3 "
                        "places without a channel).") != std::string::npos);
  CHECK(short_text.find("package 1 (bin D3): U1.1 on A, U1.2 on B\n") != std::string::npos);
  CHECK(short_text.find("Wire each spare channel") == std::string::npos);  // none is spare
  CHECK(short_text.find("2  OPAMP   SA-2  dual packages  U1.3 U1.4 U1.5") != std::string::npos);
}

TEST_CASE("pick_text: a transistor design has no package notes") {
  const std::string text = report::pick_text(make_pick_list(ce_stage(), 2, ce_shelf()));
  CHECK(text.find("Op-amp packages") == std::string::npos);
  CHECK(report::package_notes(make_pick_list(ce_stage(), 2, ce_shelf())).empty());
}

TEST_CASE("pick_json: an op-amp line's packages and channels, a summary per type, short items in packages") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-2", 1, "D3"));
  const auto j = report::pick_json(make_pick_list(opamp_stage(2), 3, shelf));
  const auto line =
      std::find_if(j["lines"].begin(), j["lines"].end(), [](const auto& l) { return l["kind"] == "OPAMP"; });
  REQUIRE(line != j["lines"].end());
  CHECK((*line)["value"] == "SA-2");
  CHECK((*line)["qty"] == 1);  // packages
  CHECK((*line)["channels"] == 2);
  CHECK((*line)["designators"] == report::Json::array({"U1.1", "U1.2"}));
  REQUIRE((*line)["packages"].size() == 1);
  const auto& pk = (*line)["packages"][0];
  CHECK(pk["number"] == 1);
  CHECK(pk["spare"] == 0);
  CHECK(pk["from_reserved"] == false);
  REQUIRE(pk["channels"].size() == 2);
  CHECK(pk["channels"][1]["channel"] == "B");
  CHECK(pk["channels"][1]["designator"] == "U1.2");
  REQUIRE(j["short"].size() == 1);
  CHECK(j["short"][0]["kind"] == "OPAMP");
  CHECK(j["short"][0]["qty"] == 1);
  CHECK(j["short"][0]["needed"] == 2);
  CHECK(j["short"][0]["channels"] == 2);
  CHECK(j["short"][0]["designators"] == report::Json::array({"U1.3"}));
  REQUIRE(j["opamps"].size() == 1);
  CHECK(j["opamps"][0]["device"] == "SA-2");
  CHECK(j["opamps"][0]["packages"] == 1);
  CHECK(j["opamps"][0]["channels_used"] == 2);
  CHECK(j["opamps"][0]["channels_spare"] == 0);
  CHECK(j["opamps"][0]["packages_short"] == 1);
  // A transistor design's JSON keeps its keys as they were: no op-amp keys.
  const auto t = report::pick_json(make_pick_list(ce_stage(), 1, ce_shelf()));
  CHECK_FALSE(t.contains("opamps"));
  for (const auto& l : t["lines"]) {
    CHECK_FALSE(l.contains("channels"));
    CHECK_FALSE(l.contains("packages"));
  }
}

TEST_CASE("net_for_people: an op-amp stage's device is U1 (U201 in a chain's second stage)") {
  auto c = opamp_stage(2);
  c.parts.clear();  // no RE1: the stand-in topology's junction falls back on the device's terminal
  CHECK(report::net_for_people("x", c) == "the emitter of U1 (RE1 is left out)");
  for (auto& rp : c.parts) rp.stage = 2;
  c.parts.push_back(role("RF", "R201", 'R', {47e3}, {{1}}));
  c.parts.back().stage = 2;
  CHECK(report::net_for_people("x", c) == "the emitter of U201 (RE1 is left out)");
}
