// Tests of `shelfstage check`: a sound database passes, a count changed behind the ledger's
// back is found and reported with exit status 3 (docs/interface.md: 3 is a database problem).
#include <doctest/doctest.h>
#include <sqlite3.h>

#include "cli_runner.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;

TEST_CASE("check: ok on a fresh demo shelf, exit 3 when a count disagrees with its ledger") {
  test::TempDir dir;
  const auto db = (dir / "stock.db").string();
  REQUIRE(test::run_cli({"demo", "--db", db, "--json"}).status == 0);

  const auto good = test::run_cli({"check", "--db", db});
  CHECK(good.status == 0);
  CHECK(good.err.empty());
  CHECK(good.out.find("ledger         ok") != std::string::npos);

  // Change a count without a ledger entry, as a hand edit or a half-restored backup would.
  sqlite3* raw = nullptr;
  REQUIRE(sqlite3_open(db.c_str(), &raw) == SQLITE_OK);
  REQUIRE(sqlite3_exec(raw, "UPDATE parts SET qty = qty + 5 WHERE id = 1", nullptr, nullptr, nullptr) == SQLITE_OK);
  sqlite3_close(raw);

  const auto bad = test::run_cli({"check", "--db", db});
  CHECK(bad.status == 3);
  CHECK(bad.out.find("ledger         1 problem") != std::string::npos);
  CHECK(bad.err.starts_with("error: check found 1 problem in "));

  const auto json = test::run_cli({"check", "--db", db, "--json"});
  CHECK(json.status == 3);
  const auto doc = nlohmann::json::parse(json.out);  // one JSON document on stdout, nothing else
  CHECK(doc["schema"] == 1);
  CHECK(doc["ok"] == false);
  CHECK(doc["ledger"].size() == 1);
}
