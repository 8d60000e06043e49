// Tests of `shelfstage build`: all or nothing, build then undo restores the stock exactly,
// a newer schema is refused, and two processes racing for the last pieces (real binary).
#include <doctest/doctest.h>
#include <signal.h>
#include <spawn.h>
#include <sqlite3.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <fcntl.h>
#include <fstream>
#include <random>
#include <sstream>
#include <thread>

#include "shelf_fixture.hpp"
#include "shelfstage/store/builds.hpp"
#include "shelfstage/store/database.hpp"

using shelfstage::test::DemoShelf;
namespace store = shelfstage::store;

extern char** environ;

namespace {

/// Starts the real program with stdout and stderr into files; returns its pid.
pid_t spawn(const std::vector<std::string>& args, const std::string& out, const std::string& err) {
  posix_spawn_file_actions_t fa;
  posix_spawn_file_actions_init(&fa);
  posix_spawn_file_actions_addopen(&fa, 0, "/dev/null", O_RDONLY, 0);
  posix_spawn_file_actions_addopen(&fa, 1, out.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  posix_spawn_file_actions_addopen(&fa, 2, err.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
  std::vector<std::string> full{SHELFSTAGE_BINARY};
  full.insert(full.end(), args.begin(), args.end());
  std::vector<char*> argv;
  for (auto& a : full) argv.push_back(a.data());
  argv.push_back(nullptr);
  pid_t pid = -1;
  const int rc = posix_spawn(&pid, SHELFSTAGE_BINARY, &fa, nullptr, argv.data(), environ);
  posix_spawn_file_actions_destroy(&fa);
  REQUIRE(rc == 0);
  return pid;
}

int wait_exit(pid_t pid) {
  int status = 0;
  REQUIRE(waitpid(pid, &status, 0) == pid);
  REQUIRE(WIFEXITED(status));
  return WEXITSTATUS(status);
}

std::string slurp(const std::string& path) {
  std::ifstream in(path);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

/// Leaves exactly one copy's pieces available on every line the pick list of one copy names.
void exactly_one_copy(const DemoShelf& shelf) {
  const auto pick = shelf.json({"pick", shelf.design});
  auto db = store::Database::open(shelf.db);
  for (const auto& l : pick["lines"]) {
    const auto id = l["part_id"].get<std::int64_t>();
    const auto part = db.part(id);
    REQUIRE(part);
    db.adjust(id, l["qty"].get<int>() - part->qty, "race test: leave one copy");
  }
}

/// Every build whole (built: its lines gone from stock) or absent (undone: back).
void check_consistent(const std::string& path) {
  auto db = store::Database::open(path);
  CHECK(db.check().ok());
  std::map<std::pair<std::int64_t, std::int64_t>, int> sums;
  for (const auto& e : db.ledger())
    if (e.build_id) sums[{*e.build_id, e.part_id}] += e.delta;
  for (const auto& b : store::builds(db))
    for (const auto& l : b.lines) CHECK(sums[{b.id, l.part_id}] == (b.state == "built" ? -l.qty : 0));
}

}  // namespace

TEST_CASE("build then undo: the stock export is exactly as before, and the ledger shows both") {
  DemoShelf shelf(2);  // designed for two copies: the shelf holds them
  const auto before = shelf.run({"stock", "export"});
  REQUIRE(before.status == 0);
  const auto pick = shelf.json({"pick", shelf.design, "--copies", "2"});
  const auto built = shelf.json({"build", shelf.design, "--copies", "2"});
  const auto id = built["build"]["id"].get<std::int64_t>();
  CHECK(built["build"]["state"] == "built");
  CHECK(built["build"]["copies"] == 2);
  // The build took exactly what the pick list named.
  REQUIRE(built["build"]["lines"].size() == pick["lines"].size());
  auto db = store::Database::open(shelf.db);
  for (const auto& l : pick["lines"]) {
    bool found = false;
    for (const auto& bl : built["build"]["lines"])
      if (bl["part_id"] == l["part_id"]) {
        CHECK(bl["qty"] == l["qty"]);
        CHECK(bl["designators"] == l["designators"]);
        found = true;
      }
    CHECK(found);
  }
  CHECK(shelf.run({"stock", "export"}).out != before.out);

  const auto undo = shelf.run({"builds", "undo", std::to_string(id)});
  CHECK(undo.status == 0);
  CHECK(shelf.run({"stock", "export"}).out == before.out);

  const auto ledger = shelf.json({"ledger"});
  int taken = 0, back = 0;
  for (const auto& e : ledger["entries"]) {
    const std::string reason = e["reason"];
    if (reason == "build " + std::to_string(id) + " of " + shelf.design) taken -= e["delta"].get<int>();
    if (reason == "undo build " + std::to_string(id)) back += e["delta"].get<int>();
    if (reason.find("build") != std::string::npos) CHECK(e["build"] == id);
  }
  int pieces = 0;
  for (const auto& l : pick["lines"]) pieces += l["qty"].get<int>();
  CHECK(taken == pieces);
  CHECK(back == pieces);
  CHECK(shelf.run({"check"}).status == 0);
}

TEST_CASE("build: short stock changes nothing, exits 2 and names what is short") {
  DemoShelf shelf;
  const auto before = shelf.run({"stock", "export"}).out;
  const auto r = shelf.run({"build", shelf.design, "--copies", "60"});
  CHECK(r.status == 2);
  CHECK(r.err.rfind("error: not enough stock for 60 copies of " + shelf.design + ": ", 0) == 0);
  CHECK(r.err.find("Q1 ") != std::string::npos);
  CHECK(r.out.empty());
  CHECK(shelf.run({"stock", "export"}).out == before);
  CHECK(shelf.json({"builds", "list"})["builds"].empty());
}

TEST_CASE("build uses the design's reservation first and lets go of it") {
  DemoShelf shelf;
  exactly_one_copy(shelf);
  const auto reserved = shelf.json({"reserve", shelf.design});
  CHECK(reserved["design"] == shelf.design);
  // Every piece of the one copy there is is held now: nothing is available to anyone else.
  for (const auto& p : shelf.json({"stock", "list"})["parts"])
    if (p["reserved"].get<int>() > 0) CHECK(p["reserved"] == p["qty"]);
  const auto pick = shelf.json({"pick", shelf.design});
  CHECK(pick["short"].empty());
  for (const auto& l : pick["lines"]) CHECK(l["from_reserved"] == l["qty"]);
  // The build takes the held pieces; no hold is left behind.
  CHECK(shelf.run({"build", shelf.design}).status == 0);
  for (const auto& p : shelf.json({"stock", "list"})["parts"]) CHECK(p["reserved"] == 0);
  CHECK(shelf.json({"release", shelf.design})["released"] == 0);
  CHECK(shelf.run({"check"}).status == 0);
}

TEST_CASE("a database written by a newer shelfstage is refused with exit 3, untouched") {
  DemoShelf shelf;
  {
    sqlite3* raw = nullptr;
    REQUIRE(sqlite3_open(shelf.db.c_str(), &raw) == SQLITE_OK);
    REQUIRE(sqlite3_exec(raw, "PRAGMA user_version = 9", nullptr, nullptr, nullptr) == SQLITE_OK);
    sqlite3_close(raw);
  }
  for (const std::vector<std::string>& cmd : {std::vector<std::string>{"build", shelf.design},
                                              {"pick", shelf.design},
                                              {"reserve", shelf.design},
                                              {"release", shelf.design},
                                              {"builds", "list"},
                                              {"builds", "undo", "1"},
                                              {"ledger"},
                                              {"shop", shelf.design}}) {
    const auto r = shelf.run(cmd);
    CHECK_MESSAGE(r.status == 3, cmd[0]);
    CHECK(r.err.find("schema version 9 is newer than this shelfstage") != std::string::npos);
    CHECK(r.out.empty());
  }
}

// Two processes build from the last pieces at once (the real program, fork/exec): exactly
// one succeeds, the other exits 2, nothing is oversold. Many rounds, the stock refilled by
// undoing the winner's build.
TEST_CASE("race: two builds for the last pieces, exactly one wins, nothing oversold") {
  DemoShelf shelf;
  exactly_one_copy(shelf);
  const auto pick = shelf.json({"pick", shelf.design});
  const std::string out_a = (shelf.dir / "a.out").string(), err_a = (shelf.dir / "a.err").string();
  const std::string out_b = (shelf.dir / "b.out").string(), err_b = (shelf.dir / "b.err").string();
  constexpr int kRounds = 25;
  for (int round = 0; round < kRounds; ++round) {
    const pid_t a = spawn({"--db", shelf.db, "build", shelf.design}, out_a, err_a);
    const pid_t b = spawn({"--db", shelf.db, "build", shelf.design}, out_b, err_b);
    const int ra = wait_exit(a), rb = wait_exit(b);
    INFO("round " << round << ": " << slurp(err_a) << slurp(err_b));
    CHECK(((ra == 0 && rb == 2) || (ra == 2 && rb == 0)));
    const std::string loser_err = slurp(ra == 2 ? err_a : err_b);
    CHECK(loser_err.rfind("error: not enough stock", 0) == 0);
    auto db = store::Database::open(shelf.db);
    for (const auto& l : pick["lines"]) {
      const auto part = db.part(l["part_id"].get<std::int64_t>());
      CHECK(part->qty == 0);
    }
    CHECK(db.check().ok());
    const auto all = store::builds(db);
    REQUIRE(all.size() == static_cast<std::size_t>(round + 1));
    REQUIRE(all.back().state == "built");
    store::undo_build(db, all.back().id);
  }
}

// The real program killed at random moments while it builds: the file stays sound and every
// build is whole or absent.
TEST_CASE("crash: the program killed at random moments during builds leaves every build whole or absent") {
  DemoShelf shelf;
  std::mt19937 rng(7);
  std::uniform_int_distribution<int> delay_us(0, 60000);
  const std::string out = (shelf.dir / "k.out").string(), err = (shelf.dir / "k.err").string();
  constexpr int kKills = 30;
  for (int i = 0; i < kKills; ++i) {
    const pid_t pid = spawn({"--db", shelf.db, "build", shelf.design}, out, err);
    std::this_thread::sleep_for(std::chrono::microseconds(delay_us(rng)));
    ::kill(pid, SIGKILL);
    int status = 0;
    REQUIRE(waitpid(pid, &status, 0) == pid);
    check_consistent(shelf.db);
    auto db = store::Database::open(shelf.db);
    for (const auto& b : store::builds(db))
      if (b.state == "built") store::undo_build(db, b.id);
  }
}
