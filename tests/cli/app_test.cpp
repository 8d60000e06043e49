// Tests of the root command: exit statuses, the `error:` line, help and version, global options.
#include <doctest/doctest.h>
#include <sqlite3.h>

#include <filesystem>
#include <sstream>
#include <stdexcept>
#include <vector>

#include "cli_runner.hpp"
#include "env_var.hpp"
#include "commands.hpp"
#include "shelfstage/error.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;
using namespace shelfstage::cli;

namespace {

using Result = test::CliResult;

Result run(std::vector<std::string> args, const std::string& input = "") {
  return test::run_cli(std::move(args), input);
}

int line_count(const std::string& text) {
  int n = 0;
  for (char c : text) n += c == '\n';
  return n;
}

}  // namespace

TEST_CASE("--version and --help print on stdout and exit 0") {
  const auto v = run({"--version"});
  CHECK(v.status == 0);
  CHECK(v.out == "shelfstage test\n");
  const auto h = run({"--help"});
  CHECK(h.status == 0);
  CHECK(h.out.find("stock") != std::string::npos);
  CHECK(h.err.empty());
  const auto sub = run({"stock", "add", "--help"});
  CHECK(sub.status == 0);
  CHECK(sub.out.find("--tol") != std::string::npos);
}

TEST_CASE("--version and --help take no value: `--version=1` under --json is an error, not text") {
  // A fuzz find: CLI11 reads `--help=yes` (and `-h=1`, `-hx`, `-h1`) as the flag and printed
  // plain text where --json promised a JSON document.
  for (const auto& args : std::vector<std::vector<std::string>>{{"--json", "--version=1"},
                                                                {"--version=true"},
                                                                {"--json", "--help=yes"},
                                                                {"stock", "list", "--help=1"},
                                                                {"--json", "-h=1"},
                                                                {"--json", "-hx"},
                                                                {"stock", "list", "-h1"}}) {
    const auto r = run(args);
    CHECK(r.status == 1);
    CHECK(r.out.empty());
    CHECK(r.err.starts_with("error: -"));
    CHECK(r.err.find("takes no value") != std::string::npos);
  }
  // -h alone still prints the help.
  const auto h = run({"-h"});
  CHECK(h.status == 0);
  CHECK(h.out.find("Usage") != std::string::npos);
}

TEST_CASE("past `--` a word is a positional, whatever it starts with") {
  // The pre-scan for `-hx` and `--db=` stops at `--`, as CLI11's parse does: a file named
  // `-hum.csv` is looked for, not refused as a misspelt -h.
  const auto r = run({"stock", "import", "--", "-hum.csv"});
  CHECK(r.status == 1);
  CHECK(r.out.empty());
  CHECK(r.err.find("cannot read '-hum.csv'") != std::string::npos);
  CHECK(r.err.find("takes no value") == std::string::npos);
  // Before `--` it is still the error it was.
  CHECK(run({"stock", "import", "-hum.csv"}).err.find("takes no value") != std::string::npos);
}

TEST_CASE("usage errors: exit 1 and one `error:` line on stderr (docs/interface.md)") {
  for (const auto& args : std::vector<std::vector<std::string>>{
           {}, {"frobnicate"}, {"stock"}, {"stock", "add", "R", "4k7"}, {"stock", "list", "--colour"}}) {
    const auto r = run(args);
    CHECK(r.status == 1);
    CHECK(r.out.empty());
    CHECK(r.err.starts_with("error: "));
    CHECK(line_count(r.err) == 1);
  }
}

TEST_CASE("a misspelt option or command is named, with the one meant when it is a slip") {
  const auto r = run({"design", "--gain", "5", "--load", "10k", "--supply", "9", "--zin", "100k", "--source", "600"});
  CHECK(r.status == 1);
  CHECK(r.out.empty());
  CHECK(r.err == "error: unknown option '--source' (did you mean --source-z?) (see `shelfstage design --help`)\n");
  CHECK(run({"stock", "list", "--jsno"}).err.starts_with("error: unknown option '--jsno' (did you mean --json?)"));
  CHECK(run({"stock", "lst"}).err.starts_with("error: unknown command 'lst' (did you mean list?)"));
  // Nothing near: named alone; a stray word that is no option: named as such.
  CHECK(run({"stock", "list", "--frobnicate"}).err.starts_with("error: unknown option '--frobnicate' (see"));
  const auto stray = run({"design", "--gain", "5", "--load", "10k", "--supply", "9", "--zin", "100k", "600"});
  CHECK(stray.status == 1);
  CHECK(stray.err.starts_with("error: unexpected argument '600' (see"));
  // Past `--` an option's name is a word like any other.
  const auto past = run({"design", "--gain", "5", "--load", "10k", "--supply", "9", "--zin", "100k", "--", "--swing"});
  CHECK(past.status == 1);
  CHECK(past.err.starts_with("error: unexpected argument '--swing' (see"));
}

TEST_CASE("`stock add` given a line's name (KIND:VALUE) says to write the kind and the value apart") {
  // The other stock commands name a line R:4k7@A6; `add` takes KIND VALUE QTY. CLI11 alone
  // said "QTY is required".
  const auto r = run({"stock", "add", "R:4k7@A6", "10"});
  CHECK(r.status == 1);
  CHECK(r.out.empty());
  CHECK(r.err ==
        "error: KIND: 'R:4k7@A6': give the kind and the value as two words, then the count (`shelfstage stock add R "
        "4k7 QTY --bin A6`) (see `shelfstage stock add --help`)\n");
  CHECK(run({"stock", "add", "NPN:SQ-410"}).err.starts_with("error: KIND: 'NPN:SQ-410': give the kind and the value"));
  // With all three words the kind is refused, with the same hint.
  CHECK(run({"stock", "add", "R:4k7", "10", "3"}).err.starts_with("error: KIND: 'R:4k7': give the kind and the value"));
  // A kind without a colon keeps CLI11's word for the missing count.
  CHECK(run({"stock", "add", "R", "4k7"}).err.starts_with("error: QTY is required"));
}

TEST_CASE("an error line stays short however many bytes it echoes escaped (a fuzz find)") {
  // A stray quote in the word pairs the message's quotes wrongly, so a long stretch of it
  // was no quoted value to clip; each of its non-UTF-8 bytes is four bytes escaped.
  const std::string word = "a'" + std::string(1500, '\xA3') + "'b" + std::string(1500, '\xB4');
  const auto r = run({word});
  CHECK(r.status == 1);
  CHECK(r.err.starts_with("error: unknown command"));
  CHECK(line_count(r.err) == 1);
  CHECK(r.err.size() <= 2100);
}

TEST_CASE("library errors keep their exit status: input 1, infeasible 2, database 3") {
  test::TempDir dir;
  const auto missing = (dir / "none.db").string();
  const auto r1 = run({"stock", "list", "--db", missing});
  CHECK(r1.status == 1);
  CHECK(r1.err.starts_with("error: "));
  CHECK(r1.err.find(missing) != std::string::npos);
  const auto r2 = run({"test-infeasible"});
  CHECK(r2.status == 2);
  CHECK(r2.err == "error: not enough 4.7k in stock\n");
}

TEST_CASE("a design that fits nothing says why in one whole line, its stop counts to the end") {
  // Over 500 characters on the demo shelf: a 600 ohm load at 1.5 Vpp from a 7..9.6 V battery
  // in 5 mA, single stages and chains alike.
  test::TempDir dir;
  const auto db = (dir / "stock.db").string();
  REQUIRE(run({"--db", db, "demo"}).status == 0);
  const auto r = run({"--db", db, "design", "--gain", "3", "--load", "600", "--supply", "7..9.6", "--zin", "20k",
                      "--swing", "1.5", "--max-current", "5m", "--samples", "0"});
  CHECK(r.status == 2);
  CHECK(line_count(r.err) == 1);
  CHECK(r.err.size() > 500);
  CHECK(r.err.find("stopped at nominal:") != std::string::npos);
  CHECK(r.err.ends_with(")\n"));
  CHECK(r.err.find("...") == std::string::npos);
}

TEST_CASE("a database from a newer shelfstage is refused with exit 3 and left alone") {
  test::TempDir dir;
  const auto path = (dir / "stock.db").string();
  REQUIRE(run({"--db", path, "init"}).status == 0);
  // Pretend a newer program wrote the file: SQLite's user_version holds the schema version.
  sqlite3* raw = nullptr;
  REQUIRE(sqlite3_open(path.c_str(), &raw) == SQLITE_OK);
  const std::string bump = "PRAGMA user_version = " + std::to_string(store::kSchemaVersion + 1);
  REQUIRE(sqlite3_exec(raw, bump.c_str(), nullptr, nullptr, nullptr) == SQLITE_OK);
  sqlite3_close(raw);
  for (const auto& args :
       std::vector<std::vector<std::string>>{{"stock", "list"}, {"stock", "add", "R", "4k7", "5"}, {"check"}}) {
    auto with_db = args;
    with_db.insert(with_db.end(), {"--db", path});
    const auto r = run(with_db);
    CHECK(r.status == 3);
    CHECK(r.err.starts_with("error: "));
    CHECK(r.err.find("newer") != std::string::npos);
  }
  // Still the newer version: nothing migrated it down or rewrote it.
  REQUIRE(sqlite3_open(path.c_str(), &raw) == SQLITE_OK);
  sqlite3_stmt* stmt = nullptr;
  REQUIRE(sqlite3_prepare_v2(raw, "PRAGMA user_version", -1, &stmt, nullptr) == SQLITE_OK);
  REQUIRE(sqlite3_step(stmt) == SQLITE_ROW);
  CHECK(sqlite3_column_int(stmt, 0) == store::kSchemaVersion + 1);
  sqlite3_finalize(stmt);
  sqlite3_close(raw);
}

TEST_CASE("a CSV with bad rows: the summary line, then one line per bad row, exit 1") {
  test::TempDir dir;
  const auto db = (dir / "stock.db").string();
  REQUIRE(run({"--db", db, "init"}).status == 0);
  const auto r = run({"--db", db, "stock", "import", "-"}, "kind,value,qty\nR,4k7,ten\nR,1k,5\nX,1k,2\n");
  CHECK(r.status == 1);
  CHECK(r.err.starts_with("error: "));
  CHECK(line_count(r.err) == 3);  // the summary, then lines 2 and 4
  CHECK(r.err.find("stdin:2:") != std::string::npos);
  CHECK(r.err.find("stdin:4:") != std::string::npos);
  const auto list = run({"--db", db, "stock", "list", "--json"});
  CHECK(list.status == 0);
  CHECK(list.out.find("\"parts\": []") != std::string::npos);  // all or nothing
}

TEST_CASE("an unexpected exception is reported as internal, exit 1") {
  const auto r = run({"test-bug"});
  CHECK(r.status == 1);
  CHECK(r.err == "error: internal: index out of range (please report this)\n");
}

TEST_CASE("global options work before and after the subcommand") {
  test::TempDir dir;
  const auto db = (dir / "stock.db").string();
  REQUIRE(run({"init", "--db", db}).status == 0);
  REQUIRE(run({"--db", db, "stock", "add", "R", "4k7", "5"}).status == 0);
  const auto before = run({"--json", "--db", db, "stock", "list"});
  const auto after = run({"stock", "list", "--json", "--db", db});
  CHECK(before.status == 0);
  CHECK(before.out.starts_with("{"));
  CHECK(before.out == after.out);
}

TEST_CASE("an empty --db is refused, not taken for the default database") {
  test::TempDir dir;
  const test::EnvVar home("HOME", dir.path().c_str());
  const test::EnvVar env("SHELFSTAGE_DB", nullptr);
  const test::EnvVar xdg("XDG_DATA_HOME", nullptr);
  for (const auto& args : std::vector<std::vector<std::string>>{
           {"--db", "", "init"}, {"--db", "", "stock", "list"}, {"stock", "list", "--db", ""}, {"--db=", "init"}}) {
    const auto r = run(args);
    CHECK(r.status == 1);
    CHECK(r.err.starts_with("error: --db: "));
    CHECK(line_count(r.err) == 1);
  }
  CHECK_FALSE(std::filesystem::exists(dir / ".local"));  // the default database was not made
}

TEST_CASE("a value of 100 KB is cut in the message; bytes that are not text are escaped") {
  test::TempDir dir;
  const auto db = (dir / "stock.db").string();
  REQUIRE(run({"--db", db, "init"}).status == 0);
  const std::string huge(100000, 'x');
  for (const auto& args :
       std::vector<std::vector<std::string>>{{"--db", db, "show", huge},
                                             {"--db", db, "stock", "adjust", huge, "+1", "--reason", "r"},
                                             {"--db", db, "stock", "add", "R", huge, "1"},
                                             {"--db", db, "builds", "undo", huge},
                                             {"--db", db, "stock", "list", "--kind", huge},
                                             {"--db", db, "stock", "import", huge}}) {
    CAPTURE(args[3]);
    const auto r = run(args);
    CHECK(r.status == 1);
    CHECK(r.err.size() < 400);
    CHECK(line_count(r.err) == 1);
  }
  const auto r = run({"--db", db, "stock", "adjust", "R:1k@\xFF\x1B[2J", "+1", "--reason", "r"});
  CHECK(r.status == 1);
  CHECK(r.err.find("R:1k@\\xFF\\x1B[2J") != std::string::npos);
}

TEST_CASE("options whose text the stock keeps must be clean text, named when they are not") {
  test::TempDir dir;
  const auto db = (dir / "stock.db").string();
  REQUIRE(run({"--db", db, "init"}).status == 0);
  for (const auto& [option, value] : std::vector<std::pair<std::string, std::string>>{{"--bin", "Fach \xE4"},
                                                                                      {"--note",
                                                                                       "a\x7F"
                                                                                       "b"},
                                                                                      {"--package", "TO\t92"},
                                                                                      {"--dielectric", "X7R\n"},
                                                                                      {"--reason", "\x1B[31mred"}}) {
    CAPTURE(option);
    const auto r = run({"--db", db, "stock", "add", "R", "1k", "5", option, value});
    CHECK(r.status == 1);
    CHECK(r.err.starts_with("error: " + option + ": '"));
  }
  CHECK(run({"--db", db, "devices", "add", "SJ-\xFF", "--kind", "NJFET", "--idss", "1m..5m", "--vp", "-1..-3"})
            .err.starts_with("error: NAME: 'SJ-\\xFF': byte 4 is not UTF-8 (0xFF)"));
  CHECK(run({"--db", db, "stock", "list", "--json"}).out.find("\"parts\": []") != std::string::npos);
}

TEST_CASE("--json report -o - is refused: the report is HTML, not one JSON document") {
  const auto r = run({"--json", "report", "anything", "-o", "-"});
  CHECK(r.status == 1);
  CHECK(r.err.find("--json with -o -") != std::string::npos);
}
