// Tests of pick lists: natural bin order, allocation in bin order with reserved pieces first,
// designators per piece and copy, short items, assembly and polarity notes, JSON and CSV.
#include "shelfstage/report/picklist.hpp"

#include <doctest/doctest.h>

#include <algorithm>

#include "shelfstage/error.hpp"

using namespace shelfstage;
using report::make_pick_list;
using report::PickList;

namespace {

store::Part resistor(std::int64_t id, double ohms, int qty, const std::string& bin, int reserved = 0) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::resistor;
  p.value = ohms;
  p.qty = qty;
  p.reserved = reserved;
  p.bin = bin;
  p.tol = units::Tolerance{0.05, 0.05};
  p.power_w = 0.25;
  return p;
}

store::Part capacitor(std::int64_t id, double farads, int qty, const std::string& bin, const std::string& diel,
                      double volts) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::capacitor;
  p.value = farads;
  p.qty = qty;
  p.bin = bin;
  p.dielectric = diel;
  p.volts = volts;
  p.tol = units::Tolerance{0.2, 0.2};
  return p;
}

store::Part transistor(std::int64_t id, const std::string& device, int qty, const std::string& bin) {
  store::Part p;
  p.id = id;
  p.kind = store::PartKind::npn;
  p.device = device;
  p.qty = qty;
  p.bin = bin;
  return p;
}

synth::RolePart role(const std::string& name, const std::string& designator, char kind, std::vector<double> values,
                     std::vector<std::vector<std::int64_t>> lines, synth::Join join = synth::Join::single) {
  synth::RolePart rp;
  rp.role = name;
  rp.designator = designator;
  rp.kind = kind;
  rp.values = std::move(values);
  rp.lines = std::move(lines);
  rp.combo.join = join;
  rp.combo.count = static_cast<std::uint8_t>(rp.values.size());
  double v = 0;
  if (join == synth::Join::parallel) {
    for (double x : rp.values) v += 1.0 / x;
    v = 1.0 / v;
  } else {
    for (double x : rp.values) v += x;
  }
  rp.combo.nominal = v;
  rp.tol = units::Tolerance{0.05, 0.05};
  return rp;
}

/// A common-emitter stage (the roles of bjt-ce-divider, docs/interface.md) on the shelf below.
synth::Candidate ce_stage() {
  synth::Candidate c;
  c.id = "s0000pick";
  c.topology = stages::find_topology("bjt-ce-divider");
  REQUIRE(c.topology != nullptr);
  c.device.name = "SQ-420";
  c.device.kind = devices::DeviceKind::npn;
  c.parts.push_back(role("R1", "R1", 'R', {47e3}, {{1, 2}}));
  c.parts.push_back(role("R2", "R2", 'R', {10e3}, {{3}}));
  c.parts.push_back(role("RC", "R3", 'R', {10e3}, {{3}}));
  c.parts.push_back(role("RE1", "R4", 'R', {470, 4750}, {{4}, {5}}, synth::Join::parallel));
  c.parts.push_back(role("RE2", "R5", 'R', {1e3, 150}, {{6}, {7}}, synth::Join::series));
  auto ce = role("CE", "C2", 'C', {220e-6}, {{10}});
  ce.polarised = true;
  ce.plus_net = "x";
  ce.dielectric = "electrolytic";
  c.parts.push_back(ce);
  c.parts.push_back(role("CIN", "C1", 'C', {470e-9}, {{11}}));
  auto cout = role("COUT", "C3", 'C', {4.7e-6}, {{12}});
  cout.polarised = true;
  cout.plus_net = "collector";
  cout.dielectric = "electrolytic";
  c.parts.push_back(cout);
  return c;
}

std::vector<store::Part> ce_shelf() {
  return {resistor(1, 47e3, 1, "A10"),  resistor(2, 47e3, 5, "A11"), resistor(3, 10e3, 9, "A2"),
          resistor(4, 470, 4, "A3"),    resistor(5, 4750, 4, "A3"),  resistor(6, 1e3, 4, "A1"),
          resistor(7, 150, 4, "A1"),    capacitor(10, 220e-6, 3, "C5", "electrolytic", 16),
          capacitor(11, 470e-9, 3, "B6", "film", 63), capacitor(12, 4.7e-6, 3, "C1", "electrolytic", 35),
          transistor(20, "sq-420", 1, "D11"), transistor(21, "SQ-420", 5, "D9")};
}

const report::PickLine* line_of(const PickList& p, std::int64_t id) {
  const auto it = std::find_if(p.lines.begin(), p.lines.end(), [&](const auto& l) { return l.part_id == id; });
  return it == p.lines.end() ? nullptr : &*it;
}

}  // namespace

TEST_CASE("bin_less: natural order as a person walks a shelf (common practice: numbers as numbers)") {
  using report::bin_less;
  CHECK(bin_less("A2", "A10"));
  CHECK_FALSE(bin_less("A10", "A2"));
  CHECK(bin_less("A9", "B1"));
  CHECK(bin_less("a2", "A10"));   // letters without regard to case
  CHECK(bin_less("A10", "A10b"));
  CHECK(bin_less("Z99", ""));     // no bin comes last
  CHECK_FALSE(bin_less("", "A1"));
  CHECK(bin_less("drawer 2", "drawer 12"));
  CHECK_FALSE(bin_less("A2", "A2"));
  // A strict weak order on a shuffled list gives one order.
  std::vector<std::string> bins{"A10", "", "B2", "A2", "A1", "B10", "a3"};
  std::sort(bins.begin(), bins.end(), [](const auto& a, const auto& b) { return bin_less(a, b); });
  CHECK(bins == std::vector<std::string>{"A1", "A2", "a3", "A10", "B2", "B10", ""});
}

TEST_CASE("one copy: every piece from its bin, lines in walking order, designators per piece") {
  const PickList p = make_pick_list(ce_stage(), 1, ce_shelf());
  CHECK(p.complete());
  CHECK(p.copies == 1);
  CHECK(p.topology == "bjt-ce-divider");
  // 10 passive pieces and Q1.
  CHECK(p.pieces() == 11);
  std::vector<std::string> bins;
  for (const auto& l : p.lines) bins.push_back(l.bin);
  CHECK(bins == std::vector<std::string>{"A1", "A1", "A2", "A3", "A3", "A10", "B6", "C1", "C5", "D9"});
  // R2 and R3 are both 10k from line 3: one line, two pieces.
  REQUIRE(line_of(p, 3));
  CHECK(line_of(p, 3)->qty == 2);
  CHECK(line_of(p, 3)->designators == std::vector<std::string>{"R2", "R3"});
  // Combination pieces get letters in recipe order.
  CHECK(line_of(p, 4)->designators == std::vector<std::string>{"R4a"});
  CHECK(line_of(p, 5)->designators == std::vector<std::string>{"R4b"});
  // The transistor comes from the first bin holding its type (D9 before D11), names
  // compared without regard to case.
  REQUIRE(line_of(p, 21));
  CHECK(line_of(p, 21)->designators == std::vector<std::string>{"Q1"});
  CHECK(line_of(p, 21)->kind == store::PartKind::npn);
  CHECK(line_of(p, 20) == nullptr);
}

TEST_CASE("copies: pieces drawn in bin order across lines, copy numbers after a dot") {
  const PickList p = make_pick_list(ce_stage(), 3, ce_shelf());
  CHECK(p.complete());
  // R1 (47k): line 1 (A10) holds 1, line 2 (A11) gives the other two.
  CHECK(line_of(p, 1)->qty == 1);
  CHECK(line_of(p, 1)->designators == std::vector<std::string>{"R1.1"});
  CHECK(line_of(p, 2)->qty == 2);
  CHECK(line_of(p, 2)->designators == std::vector<std::string>{"R1.2", "R1.3"});
  CHECK(line_of(p, 4)->designators == std::vector<std::string>{"R4a.1", "R4a.2", "R4a.3"});
  CHECK(line_of(p, 21)->qty == 3);
  CHECK(p.pieces() == 33);
}

TEST_CASE("reserved pieces: other designs' holds are not available, the design's own hold goes first") {
  auto shelf = ce_shelf();
  shelf[1].reserved = 4;  // line 2 (A11): 5 on hand, 4 held
  // Held by someone else: 1 + 1 available for two copies, the third is short.
  PickList p = make_pick_list(ce_stage(), 3, shelf);
  REQUIRE(p.short_items.size() == 1);
  CHECK(p.short_items[0].qty == 1);
  CHECK(p.short_items[0].designators == std::vector<std::string>{"R1.3"});
  CHECK(p.short_items[0].roles == std::vector<std::string>{"R1"});
  // Held by this design: its held pieces (line 2) come before the free one on line 1.
  p = make_pick_list(ce_stage(), 3, shelf, {{2, 4}});
  CHECK(p.complete());
  CHECK(line_of(p, 2)->qty == 3);
  CHECK(line_of(p, 2)->from_reserved == 3);
  CHECK(line_of(p, 1) == nullptr);
}

TEST_CASE("short items: what no line can give, merged per value, with the places left empty") {
  auto shelf = ce_shelf();
  shelf[2].qty = 3;  // line 3 (10k): R2 and R3 need 2 per copy
  shelf.erase(shelf.begin() + 11);  // no SQ-420 in D9; D11 holds one
  const PickList p = make_pick_list(ce_stage(), 2, shelf);
  REQUIRE(p.short_items.size() == 2);
  const auto& r = p.short_items[0];
  CHECK(r.kind == store::PartKind::resistor);
  CHECK(r.value == doctest::Approx(10e3));
  CHECK(r.qty == 1);
  CHECK(r.needed == 2);
  CHECK(r.designators == std::vector<std::string>{"R3.2"});
  CHECK(r.roles == std::vector<std::string>{"RC"});
  CHECK(r.rating == doctest::Approx(0.25));
  const auto& q = p.short_items[1];
  CHECK(q.kind == store::PartKind::npn);
  CHECK(q.device == "SQ-420");
  CHECK(q.qty == 1);
  CHECK(q.designators == std::vector<std::string>{"Q1.2"});
  CHECK(report::short_summary(p) == "RC 10k 5% (1 short), Q1 SQ-420 (1 short)");
  // A line that is gone gives nothing; R2 and R3 are one item to buy.
  shelf.erase(shelf.begin() + 2);
  const auto gone = make_pick_list(ce_stage(), 1, shelf).short_items.at(0);
  CHECK(gone.qty == 2);
  CHECK(gone.roles == std::vector<std::string>{"R2", "RC"});
}

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

TEST_CASE("make_pick_list refuses zero copies") {
  CHECK_THROWS_AS((void)make_pick_list(ce_stage(), 0, ce_shelf()), InputError);
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
