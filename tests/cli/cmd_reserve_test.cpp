// Tests of `shelfstage reserve`: pieces held through the reservations table, all or nothing.
#include <doctest/doctest.h>

#include "shelf_fixture.hpp"

using shelfstage::test::DemoShelf;

TEST_CASE("reserve: holds the pieces of two copies on the lines the pick list names") {
  DemoShelf shelf(2);  // designed for two copies: the shelf holds them
  const auto pick = shelf.json({"pick", shelf.design, "--copies", "2"});
  const auto r = shelf.json({"reserve", shelf.design, "--copies", "2"});
  CHECK(r["schema"] == 1);
  CHECK(r["copies"] == 2);
  CHECK(r["released"] == 0);
  int picked = 0;
  for (const auto& l : pick["lines"]) picked += l["qty"].get<int>();
  CHECK(r["pieces"] == picked);
  // stock list shows the held pieces on exactly those lines.
  const auto stock = shelf.json({"stock", "list"});
  for (const auto& l : pick["lines"]) {
    bool seen = false;
    for (const auto& p : stock["parts"])
      if (p["id"] == l["part_id"]) {
        CHECK(p["reserved"] == l["qty"]);
        seen = true;
      }
    CHECK(seen);
  }
  // Reserving again replaces the hold.
  const auto again = shelf.json({"reserve", shelf.design, "--copies", "1"});
  CHECK(again["released"] == picked);
  CHECK(again["pieces"].get<int>() * 2 == picked);
  CHECK(shelf.run({"check"}).status == 0);
}

TEST_CASE("reserve: short stock holds nothing, exits 2, and keeps an earlier hold") {
  DemoShelf shelf;
  REQUIRE(shelf.run({"reserve", shelf.design}).status == 0);
  const auto before = shelf.json({"stock", "list"});
  const auto r = shelf.run({"reserve", shelf.design, "--copies", "60"});
  CHECK(r.status == 2);
  CHECK(r.err.rfind("error: not enough stock for 60 copies of " + shelf.design, 0) == 0);
  CHECK(shelf.json({"stock", "list"}) == before);
}

TEST_CASE("reserve: the text says what was held and how to let it go") {
  DemoShelf shelf;
  const auto r = shelf.run({"reserve", shelf.design});
  REQUIRE(r.status == 0);
  CHECK(r.out.rfind("Reserved ", 0) == 0);
  CHECK(r.out.find("shelfstage release " + shelf.design) != std::string::npos);
  CHECK(shelf.run({"reserve", "nosuchdesign"}).status == 1);
}
