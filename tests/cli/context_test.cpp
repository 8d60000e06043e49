// Tests of where the commands find the database: --db, then $SHELFSTAGE_DB, then the XDG folder.
#include <doctest/doctest.h>

#include <cstdlib>
#include <optional>
#include <sstream>

#include "commands.hpp"
#include "shelfstage/error.hpp"
#include "env_var.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;
using namespace shelfstage::cli;
using shelfstage::test::EnvVar;

TEST_CASE("the database path: --db wins over $SHELFSTAGE_DB, which wins over the XDG data folder") {
  std::ostringstream out, err;
  std::istringstream in;
  Context ctx(out, err, in);
  EnvVar xdg("XDG_DATA_HOME", "/xdg");
  {
    EnvVar env("SHELFSTAGE_DB", nullptr);
    // XDG Base Directory Specification: data files under $XDG_DATA_HOME.
    CHECK(ctx.database_path() == std::filesystem::path("/xdg/shelfstage/stock.db"));
  }
  EnvVar env("SHELFSTAGE_DB", "/from/env.db");
  CHECK(ctx.database_path() == std::filesystem::path("/from/env.db"));
  ctx.global.db = "/from/option.db";
  CHECK(ctx.database_path() == std::filesystem::path("/from/option.db"));
}

TEST_CASE("opening a database that is not there names it and suggests init") {
  test::TempDir dir;
  std::ostringstream out, err;
  std::istringstream in;
  Context ctx(out, err, in);
  ctx.global.db = (dir / "missing.db").string();
  try {
    (void)ctx.open_database();
    FAIL("no error for a missing database");
  } catch (const InputError& e) {
    const std::string what = e.what();
    CHECK(what.find(ctx.global.db) != std::string::npos);
    CHECK(what.find("init") != std::string::npos);
  }
  CHECK_FALSE(std::filesystem::exists(ctx.global.db));  // opening never creates the file
}
