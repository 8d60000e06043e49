// Tests of build plans: natural bin order, allocation in bin order with reserved pieces first,
// designators per piece and copy, short items.
#include "shelfstage/build/plan.hpp"

#include <doctest/doctest.h>

#include <algorithm>

#include "build/plan_fixture.hpp"
#include "shelfstage/error.hpp"

using namespace shelfstage;
using namespace shelfstage::test;
using build::Plan;
using build::plan_build;

namespace {

const build::PickLine* line_of(const Plan& p, std::int64_t id) {
  const auto it = std::find_if(p.lines.begin(), p.lines.end(), [&](const auto& l) { return l.part_id == id; });
  return it == p.lines.end() ? nullptr : &*it;
}

}  // namespace

TEST_CASE("bin_less: natural order as a person walks a shelf (common practice: numbers as numbers)") {
  using build::bin_less;
  CHECK(bin_less("A2", "A10"));
  CHECK_FALSE(bin_less("A10", "A2"));
  CHECK(bin_less("A9", "B1"));
  CHECK(bin_less("a2", "A10"));  // letters without regard to case
  CHECK(bin_less("A10", "A10b"));
  CHECK(bin_less("Z99", ""));  // no bin comes last
  CHECK_FALSE(bin_less("", "A1"));
  CHECK(bin_less("drawer 2", "drawer 12"));
  CHECK_FALSE(bin_less("A2", "A2"));
  // A strict weak order on a shuffled list gives one order.
  std::vector<std::string> bins{"A10", "", "B2", "A2", "A1", "B10", "a3"};
  std::sort(bins.begin(), bins.end(), [](const auto& a, const auto& b) { return bin_less(a, b); });
  CHECK(bins == std::vector<std::string>{"A1", "A2", "a3", "A10", "B2", "B10", ""});
}

TEST_CASE("one copy: every piece from its bin, lines in walking order, designators per piece") {
  const Plan p = plan_build(ce_stage(), 1, ce_shelf());
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
  const Plan p = plan_build(ce_stage(), 3, ce_shelf());
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
  Plan p = plan_build(ce_stage(), 3, shelf);
  REQUIRE(p.short_items.size() == 1);
  CHECK(p.short_items[0].qty == 1);
  CHECK(p.short_items[0].designators == std::vector<std::string>{"R1.3"});
  CHECK(p.short_items[0].roles == std::vector<std::string>{"R1"});
  // Held by this design: its held pieces (line 2) come before the free one on line 1.
  p = plan_build(ce_stage(), 3, shelf, {{2, 4}});
  CHECK(p.complete());
  CHECK(line_of(p, 2)->qty == 3);
  CHECK(line_of(p, 2)->from_reserved == 3);
  CHECK(line_of(p, 1) == nullptr);
}

TEST_CASE("short items: what no line can give, merged per value, with the places left empty") {
  auto shelf = ce_shelf();
  shelf[2].qty = 3;                 // line 3 (10k): R2 and R3 need 2 per copy
  shelf.erase(shelf.begin() + 11);  // no SQ-420 in D9; D11 holds one
  const Plan p = plan_build(ce_stage(), 2, shelf);
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
  CHECK(build::short_summary(p) == "RC 10k 5% (1 short), Q1 SQ-420 (1 short)");
  // A line that is gone gives nothing; R2 and R3 are one item to buy.
  shelf.erase(shelf.begin() + 2);
  const auto gone = plan_build(ce_stage(), 1, shelf).short_items.at(0);
  CHECK(gone.qty == 2);
  CHECK(gone.roles == std::vector<std::string>{"R2", "RC"});
}

TEST_CASE("plan_build refuses zero copies") {
  CHECK_THROWS_AS((void)plan_build(ce_stage(), 0, ce_shelf()), InputError);
}

TEST_CASE("short_item: the one way to make a short item; a transistor carries no tolerance") {
  build::Piece q;
  q.kind = store::PartKind::npn;
  q.device = "SQ-420";
  q.tol = units::Tolerance{0.05, 0.05};
  const auto s = build::short_item(q, 2, 3, {"Q1.2", "Q1.3"}, {"Q1"});
  CHECK(s.device == "SQ-420");
  CHECK_FALSE(s.tol);
  CHECK(s.qty == 2);
  CHECK(s.needed == 3);
  CHECK(s.designators == std::vector<std::string>{"Q1.2", "Q1.3"});
  CHECK(s.roles == std::vector<std::string>{"Q1"});
  build::Piece r;
  r.value = 10e3;
  r.tol = units::Tolerance{0.01, 0.01};
  CHECK(build::short_item(r, 1, 1, {"R1"}).tol == r.tol);
}

// Op-amps. Counting rules of the bench (common practice, plan.hpp): an op-amp stock line
// counts packages; each op-amp place (U1 of each stage and copy) takes one amplifier, a
// channel, of a package, and every place of one type in the build shares its packages.

namespace {

const build::PickLine* opamp_line_of(const Plan& p) {
  const auto it =
      std::find_if(p.lines.begin(), p.lines.end(), [](const auto& l) { return l.kind == store::PartKind::opamp; });
  return it == p.lines.end() ? nullptr : &*it;
}

}  // namespace

TEST_CASE("op-amp: one copy of a dual takes one package, one channel used and one spare") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-2", 4, "D3"));
  const Plan p = plan_build(opamp_stage(2), 1, shelf);
  CHECK(p.complete());
  const auto* u = line_of(p, 30);
  REQUIRE(u);
  CHECK(u->qty == 1);
  CHECK(u->channels == 2);
  CHECK(u->designators == std::vector<std::string>{"U1"});  // U, not Q: an integrated circuit
  REQUIRE(u->packages.size() == 1);
  CHECK(u->packages[0].number == 1);
  CHECK(u->packages[0].places == std::vector<std::string>{"U1"});
  CHECK(u->packages[0].spare() == 1);
  CHECK(p.pieces() == 3);  // R1, R2 and one package
  const auto counts = build::package_counts(p);
  REQUIRE(counts.size() == 1);
  CHECK(counts[0].packages == 1);
  CHECK(counts[0].used == 1);
  CHECK(counts[0].spare() == 1);
}

TEST_CASE("op-amp: three copies of a quad take one package, places on channels A, B, C") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-4", 2, "D3"));
  const Plan p = plan_build(opamp_stage(4), 3, shelf);
  CHECK(p.complete());
  const auto* u = line_of(p, 30);
  REQUIRE(u);
  CHECK(u->qty == 1);  // not 3: the copies share the package
  CHECK(u->designators == std::vector<std::string>{"U1.1", "U1.2", "U1.3"});
  REQUIRE(u->packages.size() == 1);
  CHECK(u->packages[0].places == std::vector<std::string>{"U1.1", "U1.2", "U1.3"});
  CHECK(u->packages[0].spare() == 1);
  CHECK(build::channel_letter(0) == 'A');
  CHECK(build::channel_letter(3) == 'D');
  // The resistors are still one piece per place and copy.
  CHECK(line_of(p, 3)->qty == 3);
  CHECK(p.pieces() == 3 + 3 + 1);
}

TEST_CASE("op-amp: five copies of a dual take three packages across lines in bin order, one channel spare") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(31, "SA-2", 5, "D10"));
  shelf.push_back(opamp_line(30, "sa-2", 2, "D4"));  // names compare without regard to case
  const Plan p = plan_build(opamp_stage(2), 5, shelf);
  CHECK(p.complete());
  // D4 before D10: its two packages first, each filled before the next is taken.
  const auto* first = line_of(p, 30);
  const auto* second = line_of(p, 31);
  REQUIRE(first);
  REQUIRE(second);
  CHECK(first->qty == 2);
  REQUIRE(first->packages.size() == 2);
  CHECK(first->packages[0].places == std::vector<std::string>{"U1.1", "U1.2"});
  CHECK(first->packages[1].number == 2);
  CHECK(first->packages[1].places == std::vector<std::string>{"U1.3", "U1.4"});
  CHECK(second->qty == 1);
  REQUIRE(second->packages.size() == 1);
  CHECK(second->packages[0].number == 3);
  CHECK(second->packages[0].places == std::vector<std::string>{"U1.5"});
  CHECK(second->packages[0].spare() == 1);
  const auto counts = build::package_counts(p);
  REQUIRE(counts.size() == 1);
  CHECK(counts[0].packages == 3);
  CHECK(counts[0].used == 5);
  CHECK(counts[0].spare() == 1);
  CHECK(counts[0].short_packages == 0);
}

TEST_CASE("op-amp: one dual package on the shelf for three copies is one package short") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-2", 1, "D3"));
  const Plan p = plan_build(opamp_stage(2), 3, shelf);
  CHECK_FALSE(p.complete());
  CHECK(line_of(p, 30)->qty == 1);
  CHECK(line_of(p, 30)->packages.at(0).places == std::vector<std::string>{"U1.1", "U1.2"});
  REQUIRE(p.short_items.size() == 1);
  const auto& s = p.short_items[0];
  CHECK(s.kind == store::PartKind::opamp);
  CHECK(s.device == "SA-2");
  CHECK(s.qty == 1);     // packages to buy, not places
  CHECK(s.needed == 2);  // packages the three copies take in all
  CHECK(s.channels == 2);
  CHECK(s.designators == std::vector<std::string>{"U1.3"});
  CHECK(s.roles == std::vector<std::string>{"U1"});
  CHECK_FALSE(s.tol);
  CHECK(build::short_summary(p) == "U1 SA-2 (1 package short)");
  // Five copies with the one package: three places left, two packages short.
  const Plan five = plan_build(opamp_stage(2), 5, shelf);
  REQUIRE(five.short_items.size() == 1);
  CHECK(five.short_items[0].qty == 2);
  CHECK(five.short_items[0].needed == 3);
  CHECK(five.short_items[0].designators == std::vector<std::string>{"U1.3", "U1.4", "U1.5"});
  const auto counts = build::package_counts(five);
  REQUIRE(counts.size() == 1);
  CHECK(counts[0].packages == 1);
  CHECK(counts[0].short_packages == 2);
  CHECK(counts[0].places_short == 3);
  // None at all: every package short.
  shelf.pop_back();
  const Plan none = plan_build(opamp_stage(4), 2, shelf);
  REQUIRE(none.short_items.size() == 1);
  CHECK(none.short_items[0].qty == 1);
  CHECK(none.short_items[0].channels == 4);
}

TEST_CASE("op-amp: a chain's two stages of one quad type, two copies, share one package") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-4", 3, "D3"));
  const Plan p = plan_build(chain_of({opamp_stage(4), opamp_stage(4)}), 2, shelf);
  CHECK(p.complete());
  const auto* u = line_of(p, 30);
  REQUIRE(u);
  CHECK(u->qty == 1);
  REQUIRE(u->packages.size() == 1);
  // Copy by copy, stage order within a copy: each copy's stages sit side by side.
  CHECK(u->packages[0].places == std::vector<std::string>{"U101.1", "U201.1", "U101.2", "U201.2"});
  CHECK(u->packages[0].spare() == 0);
  // Three copies: six channels, two packages, the second half used.
  const Plan three = plan_build(chain_of({opamp_stage(4), opamp_stage(4)}), 3, shelf);
  REQUIRE(line_of(three, 30));
  CHECK(line_of(three, 30)->qty == 2);
  CHECK(line_of(three, 30)->packages.at(1).places == std::vector<std::string>{"U101.3", "U201.3"});
  // Two types in one chain: each packed on its own.
  shelf.push_back(opamp_line(31, "SA-2", 3, "D4"));
  const Plan mixed = plan_build(chain_of({opamp_stage(4), opamp_stage(2)}), 2, shelf);
  CHECK(mixed.complete());
  CHECK(line_of(mixed, 30)->packages.at(0).places == std::vector<std::string>{"U101.1", "U101.2"});
  CHECK(line_of(mixed, 31)->packages.at(0).places == std::vector<std::string>{"U201.1", "U201.2"});
  CHECK(build::package_counts(mixed).size() == 2);
}

TEST_CASE("op-amp: the design's own held packages go first; other designs' holds are not available") {
  auto shelf = ce_shelf();
  shelf.push_back(opamp_line(30, "SA-4", 1, "D3"));
  shelf.push_back(opamp_line(31, "SA-4", 2, "D4", 1));
  // Held by this design on D4: that package first, then the free one in D3.
  const Plan p = plan_build(opamp_stage(4), 6, shelf, {{31, 1}});
  CHECK(p.complete());
  REQUIRE(line_of(p, 31));
  CHECK(line_of(p, 31)->qty == 1);
  CHECK(line_of(p, 31)->from_reserved == 1);
  CHECK(line_of(p, 31)->packages.at(0).from_reserved);
  CHECK(line_of(p, 31)->packages.at(0).number == 1);
  CHECK(line_of(p, 30)->packages.at(0).places == std::vector<std::string>{"U1.5", "U1.6"});
  CHECK_FALSE(line_of(p, 30)->packages.at(0).from_reserved);
  // Held by someone else: D3's package and D4's free one give 8 channels; 9 copies need a third.
  // (R1 and R2 run short too: nine copies are more than the CE shelf holds.)
  const Plan q = plan_build(opamp_stage(4), 9, shelf);
  const auto u = std::find_if(q.short_items.begin(), q.short_items.end(),
                              [](const auto& s) { return s.kind == store::PartKind::opamp; });
  REQUIRE(u != q.short_items.end());
  CHECK(u->qty == 1);
  CHECK(u->designators == std::vector<std::string>{"U1.9"});
  CHECK(build::short_summary(q).find("U1 SA-4 (1 package short)") != std::string::npos);
}

TEST_CASE("a transistor design counts as before: a piece per place and copy, no packages") {
  const Plan p = plan_build(ce_stage(), 3, ce_shelf());
  const auto* q = line_of(p, 21);
  REQUIRE(q);
  CHECK(q->qty == 3);
  CHECK(q->designators == std::vector<std::string>{"Q1.1", "Q1.2", "Q1.3"});
  CHECK(q->channels == 0);
  CHECK(q->packages.empty());
  CHECK(build::package_counts(p).empty());
  CHECK(opamp_line_of(p) == nullptr);
}
