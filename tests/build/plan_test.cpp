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
