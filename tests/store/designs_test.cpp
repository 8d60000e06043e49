// Tests of src/store/designs.cpp: designs kept in the database, saved with their texts, read
// back whole, found by id or an unambiguous prefix, and read by SQLite itself as stored.
#include "shelfstage/store/designs.hpp"

#include <doctest/doctest.h>

#include <chrono>
#include <ctime>
#include <regex>

#include "shelfstage/error.hpp"
#include "store/fixture.hpp"

using namespace shelfstage;
using namespace shelfstage::store;
using shelfstage::store::testing::RawDb;
using shelfstage::store::testing::TempDir;

namespace {

/// The message an InputError carries, or "" when nothing was thrown.
std::string refusal(const Database& db, std::string_view id) {
  try {
    load_design(db, id);
  } catch (const InputError& e) {
    return e.what();
  }
  return {};
}

}  // namespace

TEST_CASE("designs: saved texts read back byte for byte, in order of id, and as SQLite holds them") {
  TempDir dir;
  auto db = Database::create(dir.file("shelf.db"));
  // Texts with what a JSON writer may emit: quotes, backslashes, non-ASCII (UTF-8) and a
  // newline; SQLite stores TEXT as given (sqlite.org, "Datatypes In SQLite").
  const std::string spec = "{\"gain\":10,\"note\":\"4k7 \\\"Ω\\\" µ\\n\"}";
  save_designs(db, {{"s2222bbbb", "2025-03-01T10:00:00Z", spec, "{\"b\":2}"},
                    {"s1111aaaa", "2025-02-01T09:30:00Z", "{}", "{\"a\":1}"}});
  const auto all = all_designs(db);
  REQUIRE(all.size() == 2);
  CHECK(all[0].id == "s1111aaaa");
  CHECK(all[1].id == "s2222bbbb");
  CHECK(all[1].spec_json == spec);
  CHECK(all[1].candidate_json == "{\"b\":2}");
  CHECK(all[0].created == "2025-02-01T09:30:00Z");
  const SavedDesign d = load_design(db, "s2222bbbb");
  CHECK(d.spec_json == spec);
  // What another SQLite client reads from the file is the same text.
  RawDb raw(dir.file("shelf.db"));
  CHECK(raw.text("SELECT spec_json FROM designs WHERE id = 's2222bbbb'") == spec);
  CHECK(raw.text("SELECT count(*) FROM designs") == "2");
}

TEST_CASE("designs: the creation time is ISO 8601 UTC, now, and kept when a design is saved again") {
  TempDir dir;
  auto db = Database::create(dir.file("shelf.db"));
  const std::time_t before = std::time(nullptr);
  save_designs(db, {{"s3333cccc", {}, "{\"v\":1}", "{}"}});
  const std::time_t after = std::time(nullptr);
  const std::string created = load_design(db, "s3333cccc").created;
  // ISO 8601 basic calendar date and time of day in UTC: YYYY-MM-DDThh:mm:ssZ.
  REQUIRE(std::regex_match(created, std::regex(R"(\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z)")));
  // SQLite reads the same instant back as Unix time (its date functions take ISO 8601).
  RawDb raw(dir.file("shelf.db"));
  const long unix_time = std::stol(raw.text("SELECT strftime('%s', created) FROM designs"));
  CHECK(unix_time >= before - 1);
  CHECK(unix_time <= after + 1);
  // Saved again (the same id: the same stage and parts): new texts, the first creation time.
  save_designs(db, {{"s3333cccc", "2030-01-01T00:00:00Z", "{\"v\":2}", "{\"c\":3}"}});
  const SavedDesign again = load_design(db, "s3333cccc");
  CHECK(again.created == created);
  CHECK(again.spec_json == "{\"v\":2}");
  CHECK(again.candidate_json == "{\"c\":3}");
  CHECK(all_designs(db).size() == 1);
}

TEST_CASE("designs: found by id or a prefix of four or more characters; unknown, short or ambiguous refused") {
  TempDir dir;
  auto db = Database::create(dir.file("shelf.db"));
  save_designs(db, {{"s4444dddd", {}, "{}", "{}"},
                    {"s4444deee", {}, "{}", "{}"},
                    {"s4444", {}, "{}", "{}"},
                    {"s5555eeee", {}, "{}", "{}"}});
  CHECK(load_design(db, "s5555eeee").id == "s5555eeee");
  CHECK(load_design(db, "s555").id == "s5555eeee");
  CHECK(load_design(db, "s5555e").id == "s5555eeee");
  // An id that is also the prefix of others is that design.
  CHECK(load_design(db, "s4444").id == "s4444");
  CHECK(load_design(db, "s4444dd").id == "s4444dddd");
  CHECK(refusal(db, "s4444d") == "design 's4444d' is ambiguous: it starts s4444dddd and s4444deee");
  // Three characters are too few to name a design by (the one design they start is not found).
  CHECK(refusal(db, "s55") == "design 's55' is not in this database (run `shelfstage design` first)");
  CHECK(refusal(db, "s6666") == "design 's6666' is not in this database (run `shelfstage design` first)");
  CHECK(refusal(db, "") == "design id is empty");
  // Matching is exact: no case folding, and SQL wildcards are plain characters.
  CHECK(refusal(db, "S5555EEEE").find("is not in this database") != std::string::npos);
  CHECK(refusal(db, "s5%").find("is not in this database") != std::string::npos);
  CHECK(refusal(db, "s5__eeee").find("is not in this database") != std::string::npos);
}

TEST_CASE("designs: an id that is not clean text is named escaped in the message") {
  TempDir dir;
  auto db = Database::create(dir.file("shelf.db"));
  // A control character would garble a terminal: the message shows it escaped.
  const std::string m = refusal(db, std::string("s\x1b[31mred"));
  CHECK(m.find('\x1b') == std::string::npos);
  CHECK(m.find("is not in this database") != std::string::npos);
}
