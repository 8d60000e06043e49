// Tests of `shelfstage release`: every hold of a design let go, and nothing else.
#include <doctest/doctest.h>

#include "shelf_fixture.hpp"

using shelfstage::test::DemoShelf;

TEST_CASE("release: lets go of the design's pieces; a second release has nothing to do") {
  DemoShelf shelf(2);
  const auto before = shelf.json({"stock", "list"});
  const auto held = shelf.json({"reserve", shelf.design, "--copies", "2"});
  const auto r = shelf.json({"release", shelf.design});
  CHECK(r["schema"] == 1);
  CHECK(r["design"] == shelf.design);
  CHECK(r["released"] == held["pieces"]);
  CHECK(shelf.json({"stock", "list"}) == before);
  const auto again = shelf.run({"release", shelf.design});
  CHECK(again.status == 0);
  CHECK(again.out == "Nothing was held for " + shelf.design + ".\n");
}

TEST_CASE("release: an unknown design is bad input") {
  DemoShelf shelf;
  const auto r = shelf.run({"release", "snothere"});
  CHECK(r.status == 1);
  CHECK(r.err.find("design 'snothere' is not in this database") != std::string::npos);
}
