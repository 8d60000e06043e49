// Tests of `shelfstage ledger`: every change with its reason, filtered by date and part.
#include <doctest/doctest.h>

#include "shelf_fixture.hpp"

using shelfstage::test::DemoShelf;

TEST_CASE("ledger --json: the import, then a build and its undo, by value and by device") {
  DemoShelf shelf;
  auto j = shelf.json({"ledger"});
  CHECK(j["schema"] == 1);
  // One import entry per stock line with pieces (data-demo/stock.csv has 153 lines).
  const auto imported = j["entries"].size();
  CHECK(imported >= 140);
  for (const auto& e : j["entries"])
    for (const char* key : {"id", "when", "part_id", "part", "delta", "reason", "build"}) CHECK(e.contains(key));

  const auto pick = shelf.json({"pick", shelf.design});
  const auto b = shelf.json({"build", shelf.design})["build"]["id"].get<long>();
  REQUIRE(shelf.run({"builds", "undo", std::to_string(b)}).status == 0);
  j = shelf.json({"ledger"});
  CHECK(j["entries"].size() == imported + 2 * pick["lines"].size());

  // --part DEVICE: the transistor line's import, the build (-1) and the undo (+1).
  std::string device;
  for (const auto& l : pick["lines"])
    if (l["kind"] != "R" && l["kind"] != "C") device = l["value"];
  REQUIRE_FALSE(device.empty());
  j = shelf.json({"ledger", "--part", device});
  REQUIRE(j["entries"].size() == 3);
  CHECK(j["entries"][1]["delta"] == -1);
  CHECK(j["entries"][1]["reason"] == "build " + std::to_string(b) + " of " + shelf.design);
  CHECK(j["entries"][2]["delta"] == 1);
  CHECK(j["entries"][2]["reason"] == "undo build " + std::to_string(b));

  // --part VALUE in notation: every entry is of that value.
  j = shelf.json({"ledger", "--part", "4k7"});
  REQUIRE_FALSE(j["entries"].empty());
  for (const auto& e : j["entries"]) CHECK(e["part"].get<std::string>().find(" 4.7k ") != std::string::npos);
}

TEST_CASE("ledger --since: a future date gives nothing; bad dates and parts are named") {
  DemoShelf shelf;
  CHECK(shelf.json({"ledger", "--since", "2999-01-01"})["entries"].empty());
  CHECK(shelf.json({"ledger", "--since", "2000-01-01"})["entries"].size() == shelf.json({"ledger"})["entries"].size());
  auto r = shelf.run({"ledger", "--since", "yesterday"});
  CHECK(r.status == 1);
  CHECK(r.err.find("since 'yesterday'") != std::string::npos);
  r = shelf.run({"ledger", "--part", "ten k"});
  CHECK(r.status == 1);
  CHECK(r.err == "error: --part 'ten k' is neither a value (4k7, 100n) nor a transistor type in the device list\n");
  CHECK(shelf.run({"ledger", "--since", "2999-01-01"}).out == "No ledger entries match.\n");
}
