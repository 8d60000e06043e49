// Tests of how builds look: the JSON keys of docs/interface.md, designators split, tables.
#include "builds_view.hpp"

#include <doctest/doctest.h>

using namespace shelfstage;

TEST_CASE("build_json: the documented keys first, designators as a list") {
  store::BuildRecord b;
  b.id = 7;
  b.design_id = "s1c4356ca";
  b.copies = 2;
  b.state = "built";
  b.created = "2026-12-01T21:53:00Z";
  b.lines = {{12, 4, "R1.1,R1.2,R3.1,R3.2", "R 10k 5% bin A7"}, {40, 2, "Q1.1,Q1.2", "NPN SQ-410 bin D10"}};
  const auto j = cli::build_json(b);
  std::vector<std::string> keys;
  for (const auto& [k, v] : j.items()) keys.push_back(k);
  CHECK(std::vector<std::string>(keys.begin(), keys.begin() + 5) ==
        std::vector<std::string>{"id", "design", "copies", "state", "when"});
  CHECK(j["when"] == "2026-12-01T21:53:00Z");
  CHECK(j["undone"].is_null());
  CHECK(j["pieces"] == 6);
  CHECK(j["lines"][0]["designators"] == nlohmann::ordered_json::array({"R1.1", "R1.2", "R3.1", "R3.2"}));
  const auto table = cli::build_lines_table(b);
  CHECK(table.find("R1.1 R1.2 R3.1 R3.2") != std::string::npos);
  CHECK(cli::builds_table({b}).find("s1c4356ca") != std::string::npos);
  CHECK(cli::builds_table({}).rfind("No builds yet.", 0) == 0);
}
