// Tests of `shelfstage builds list|undo`: the JSON of docs/interface.md, states, and refusals.
#include <doctest/doctest.h>

#include "shelf_fixture.hpp"

using shelfstage::test::DemoShelf;

TEST_CASE("builds list --json: id, design, copies, state, when; undone after undo") {
  DemoShelf shelf(3);  // designed for three copies: the shelf holds them
  CHECK(shelf.json({"builds", "list"})["builds"].empty());
  CHECK(shelf.run({"builds", "list"}).out.rfind("No builds yet.", 0) == 0);
  REQUIRE(shelf.run({"build", shelf.design, "--copies", "1"}).status == 0);
  REQUIRE(shelf.run({"build", shelf.design, "--copies", "2"}).status == 0);
  auto j = shelf.json({"builds", "list"});
  CHECK(j["schema"] == 1);
  REQUIRE(j["builds"].size() == 2);
  for (const auto& b : j["builds"]) {
    for (const char* key : {"id", "design", "copies", "state", "when"}) CHECK(b.contains(key));
    CHECK(b["design"] == shelf.design);
    CHECK(b["state"] == "built");
    CHECK(b["when"].get<std::string>().size() == 20);  // 2026-12-01T21:53:00Z
  }
  CHECK(j["builds"][1]["copies"] == 2);
  CHECK(j["builds"][1]["pieces"].get<int>() == 2 * j["builds"][0]["pieces"].get<int>());
  const auto first = j["builds"][0]["id"].get<long>();
  REQUIRE(shelf.run({"builds", "undo", std::to_string(first)}).status == 0);
  j = shelf.json({"builds", "list"});
  CHECK(j["builds"][0]["state"] == "undone");
  CHECK(j["builds"][0]["undone"].is_string());
  CHECK(j["builds"][1]["state"] == "built");
  const auto table = shelf.run({"builds", "list"});
  CHECK(table.out.find("undone") != std::string::npos);
}

TEST_CASE("builds undo: twice is refused (exit 1) and changes nothing; bad numbers are named") {
  DemoShelf shelf;
  REQUIRE(shelf.run({"build", shelf.design}).status == 0);
  REQUIRE(shelf.run({"builds", "undo", "#1"}).status == 0);
  const auto before = shelf.run({"stock", "export"}).out;
  auto r = shelf.run({"builds", "undo", "1"});
  CHECK(r.status == 1);
  CHECK(r.err.rfind("error: build 1 of " + shelf.design + " was already undone at ", 0) == 0);
  CHECK(shelf.run({"stock", "export"}).out == before);
  r = shelf.run({"builds", "undo", "7"});
  CHECK(r.status == 1);
  CHECK(r.err == "error: build 7 is not in this database (see `shelfstage builds list`)\n");
  r = shelf.run({"builds", "undo", "seven"});
  CHECK(r.status == 1);
  CHECK(r.err == "error: build 'seven' is not a build number (see `shelfstage builds list`)\n");
  CHECK(shelf.run({"builds"}).status == 1);
}
