// Tests of shopping lists: what a plan on purchasable lines says to buy, and the options kept
// (none beaten on both pieces to buy and worst-case error, most exact first). The whole
// search on a shelf: tests/cli/cmd_shop_test.cpp.
#include "shelfstage/build/shop.hpp"

#include <doctest/doctest.h>

using namespace shelfstage;

namespace {

build::ShopOption option(double error_worst, int pieces) {
  build::ShopOption o;
  o.candidate.error_worst = error_worst;
  o.buy.push_back(build::short_item({}, pieces, pieces, {}));
  return o;
}

}  // namespace

TEST_CASE("purchases_of: the pieces from purchasable lines and what is still short") {
  build::Plan plan;
  build::PickLine shelf_line;
  shelf_line.part_id = 7;
  shelf_line.qty = 2;
  build::PickLine bought;
  bought.part_id = -3;
  bought.value = 4.7e3;
  bought.qty = 3;
  bought.designators = {"R1.1", "R1.2", "R1.3"};
  plan.lines = {shelf_line, bought};
  plan.short_items = {build::short_item({}, 1, 1, {"RC.1"}, {"RC"})};
  const auto buy = build::purchases_of(plan);
  REQUIRE(buy.size() == 2);
  CHECK(buy[0].roles == std::vector<std::string>{"RC"});
  CHECK(buy[1].value == doctest::Approx(4.7e3));
  CHECK(buy[1].qty == 3);
  CHECK(buy[1].needed == 3);
  CHECK(buy[1].designators == bought.designators);
}

TEST_CASE("best_options: the options no other beats on both counts, most exact first") {
  const std::vector<build::ShopOption> all{option(0.02, 4), option(0.01, 6), option(0.03, 5), option(0.01, 8),
                                           option(0.005, 9)};
  const auto best = build::best_options(all);
  REQUIRE(best.size() == 3);
  CHECK(best[0].candidate.error_worst == doctest::Approx(0.005));
  CHECK(best[1].candidate.error_worst == doctest::Approx(0.01));
  CHECK(best[1].pieces() == 6);
  CHECK(best[2].candidate.error_worst == doctest::Approx(0.02));
  CHECK(build::best_options(all, 1).size() == 1);
}
