// Tests of `shelfstage demo`: the shelf, a design made from it, and its pick list; one JSON
// document with --json.
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <fstream>
#include <string>
#include <vector>

#include "cli_runner.hpp"
#include "env_var.hpp"
#include "temp_dir.hpp"

using shelfstage::test::run_cli;

TEST_CASE("demo: the shelf, the design request, the ranked table and the pick list of #1") {
  const auto r = run_cli({"demo"});
  REQUIRE(r.status == 0);
  CHECK(r.out.find("Demo shelf: ") == 0);
  CHECK(r.out.find("Resistors (") != std::string::npos);
  CHECK(r.out.find("`shelfstage design --gain 10 --load 10k --supply 12 --zin 100k --source-z 1k --band 20..20k "
                   "--swing 2`") != std::string::npos);
  const auto pick_at = r.out.find("The pick list of #1 (`shelfstage pick s");
  REQUIRE(pick_at != std::string::npos);
  CHECK(r.out.find("Pick list for s", pick_at) != std::string::npos);
  CHECK(r.out.find("Nothing is short.", pick_at) != std::string::npos);
}

TEST_CASE("demo --json: one document with the stock, the design and its pick list") {
  shelfstage::test::TempDir dir;
  const auto db = (dir / "demo.db").string();
  const auto r = run_cli({"demo", "--json", "--db", db});
  REQUIRE(r.status == 0);
  const auto j = nlohmann::json::parse(r.out);  // throws on anything but one document
  CHECK(j["schema"] == 1);
  CHECK(j["stock"].size() == 153);  // data-demo/stock.csv
  REQUIRE_FALSE(j["design"]["candidates"].empty());
  CHECK(j["design"]["schema"] == 1);
  CHECK(j["pick"]["schema"] == 1);
  CHECK(j["pick"]["design"] == j["design"]["candidates"][0]["id"]);
  CHECK(j["pick"]["short"].empty());
  int pieces = 0;
  for (const auto& l : j["pick"]["lines"]) pieces += l["qty"].get<int>();
  CHECK(pieces == j["design"]["candidates"][0]["pieces"].get<int>());
  // The design was kept in the demo database: pick reads it back the same.
  const auto again = run_cli({"--db", db, "pick", j["pick"]["design"].get<std::string>(), "--json"});
  REQUIRE(again.status == 0);
  CHECK(nlohmann::json::parse(again.out)["lines"] == j["pick"]["lines"]);
}

TEST_CASE("demo without a temporary folder: answered plainly, nothing left behind") {
  shelfstage::test::TempDir dir;
  for (const std::string& tmp : std::vector<std::string>{"/nonexistent", (dir / "a-file").string()}) {
    CAPTURE(tmp);
    if (tmp != "/nonexistent") std::ofstream(tmp) << "not a folder";
    const shelfstage::test::EnvVar env("TMPDIR", tmp.c_str());
    const auto r = run_cli({"demo"});
    CHECK(r.status == 1);
    CHECK(r.err == "error: TMPDIR '" + tmp +
                       "' is not a folder, and the demo needs one for its temporary database: set TMPDIR to a "
                       "folder, or give --db FILE for a demo database to keep\n");
    CHECK(r.out.empty());
  }
}
