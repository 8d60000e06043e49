// Tests of kept designs read back: the request and candidate round trip, copies, and the
// build plan as a withdrawal plan.
#include "kept_design.hpp"

#include <doctest/doctest.h>

#include <algorithm>

#include "build/plan_fixture.hpp"
#include "shelf_fixture.hpp"

using namespace shelfstage;
using shelfstage::test::DemoShelf;

TEST_CASE("load_kept: the design as `design --json` printed it, copies from the request") {
  DemoShelf shelf(2);
  auto db = store::Database::open(shelf.db);
  const auto d = cli::load_kept(db, shelf.design);
  CHECK(d.saved.id == shelf.design);
  CHECK(d.candidate.id == shelf.design);
  CHECK(d.spec.gain == doctest::Approx(10));
  CHECK(d.spec.load_ohm == doctest::Approx(10e3));
  CHECK(d.spec.copies == 2);
  CHECK(cli::copies_of(d, std::nullopt) == 2);
  CHECK(cli::copies_of(d, 5) == 5);
  CHECK_THROWS_AS(cli::copies_of(d, 0), InputError);
  CHECK_FALSE(d.candidate.parts.empty());
  for (const auto& rp : d.candidate.parts) CHECK(rp.lines.size() == rp.values.size());
  // By a prefix, too.
  CHECK(cli::load_kept(db, shelf.design.substr(0, 5)).saved.id == shelf.design);
}

TEST_CASE("pick_planner: the build plan's lines as withdrawals, or the shortfall as text") {
  DemoShelf shelf;
  auto db = store::Database::open(shelf.db);
  const auto d = cli::load_kept(db, shelf.design);
  const auto stock = db.parts();
  const auto plan = cli::pick_planner(d.candidate, 1)(stock, {});
  CHECK(plan.short_text.empty());
  const auto pick = build::plan_build(d.candidate, 1, stock);
  REQUIRE(plan.take.size() == pick.lines.size());
  for (std::size_t i = 0; i < plan.take.size(); ++i) {
    CHECK(plan.take[i].part_id == pick.lines[i].part_id);
    CHECK(plan.take[i].qty == pick.lines[i].qty);
  }
  const auto none = cli::pick_planner(d.candidate, 1)({}, {});
  CHECK(none.short_text.rfind("not enough stock for 1 copy of " + shelf.design + ": ", 0) == 0);
}

TEST_CASE("pick_planner: an op-amp line is taken in whole packages, not one per place") {
  // Counting rules of the bench (common practice, build/plan.hpp): three copies of a stage
  // with a quad op-amp take one package (channels A, B, C) from its line; a transistor line
  // gives a piece per copy.
  auto stock = test::ce_shelf();
  stock.push_back(test::opamp_line(30, "SA-4", 2, "D3"));
  const auto plan = cli::pick_planner(test::opamp_stage(4), 3)(stock, {});
  CHECK(plan.short_text.empty());
  const auto u = std::find_if(plan.take.begin(), plan.take.end(), [](const auto& w) { return w.part_id == 30; });
  REQUIRE(u != plan.take.end());
  CHECK(u->qty == 1);
  CHECK(u->designators == "U1.1,U1.2,U1.3");
  const auto q = cli::pick_planner(test::ce_stage(), 3)(test::ce_shelf(), {});
  const auto t = std::find_if(q.take.begin(), q.take.end(), [](const auto& w) { return w.part_id == 21; });
  REQUIRE(t != q.take.end());
  CHECK(t->qty == 3);
  // Short in packages: one dual package for three copies.
  stock.back().device = "SA-2";
  stock.back().qty = 1;
  const auto short_plan = cli::pick_planner(test::opamp_stage(2), 3)(stock, {});
  CHECK(short_plan.take.empty());
  CHECK(short_plan.short_text == "not enough stock for 3 copies of s0000opamp: U1 SA-2 (1 package short)");
}
