// Tests of the program as a process: standard output closed, on a full disk, standard input closed.
#include <doctest/doctest.h>
#include <sys/wait.h>

#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "temp_dir.hpp"

namespace {

struct Run {
  int status = -1;
  std::string err;
};

/// A command, where its standard output goes, and the reason its write fails.
struct Case {
  const char* args;
  const char* redirect;
  const char* reason;
};

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) q += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return q + "'";
}

/// Runs `shelfstage --db DB ARGS REDIRECTIONS` through /bin/sh (POSIX redirections such as
/// `>&-` close a descriptor); standard error is kept.
Run run(const shelfstage::test::TempDir& dir, const std::string& args, const std::string& redirections) {
  const auto err = dir / "stderr.txt";
  const std::string cmd = quote(SHELFSTAGE_BINARY) + " --db " + quote((dir / "stock.db").string()) + " " + args + " " +
                          redirections + " 2>" + quote(err.string());
  const int status = std::system(cmd.c_str());
  Run r;
  r.status = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  std::ifstream f(err);
  std::ostringstream s;
  s << f.rdbuf();
  r.err = s.str();
  return r;
}

}  // namespace

TEST_CASE("standard output closed or full: a reading command exits 1 and says why") {
  shelfstage::test::TempDir dir;
  REQUIRE(run(dir, "init", ">/dev/null").status == 0);
  REQUIRE(run(dir, "stock add R 4k7 10 --bin A1", ">/dev/null").status == 0);
  // POSIX: a write to a closed descriptor fails with EBADF; /dev/full (Linux null(4)) with ENOSPC.
  for (const auto& [args, redirect, reason] :
       std::vector<Case>{{"stock export", ">&-", "Bad file descriptor"},
                         {"stock export", ">/dev/full", "No space left on device"},
                         {"--json stock list", ">/dev/full", "No space left on device"},
                         {"ledger", ">&-", "Bad file descriptor"},
                         {"--help", ">/dev/full", "No space left on device"}}) {
    CAPTURE(args);
    CAPTURE(redirect);
    const Run r = run(dir, args, redirect);
    CHECK(r.status == 1);
    CHECK(r.err == std::string("error: writing standard output: ") + reason + "\n");
  }
}

TEST_CASE("standard output closed after a change: exit 0, a warning, the change made once; the file is safe") {
  shelfstage::test::TempDir dir;
  // With standard output closed, descriptor 1 is free: the database must not get it (or the
  // program's output would be written into it).
  REQUIRE(run(dir, "init", ">&-").status == 0);
  const Run add = run(dir, "stock add R 4k7 10 --bin A1", ">&-");
  CHECK(add.status == 0);
  CHECK(add.err ==
        "warning: the change was saved in the database, but its report was lost: writing standard output: Bad file "
        "descriptor\n");
  const Run adjust = run(dir, "--json stock adjust R:4k7 -3 --reason used", ">/dev/full");
  CHECK(adjust.status == 0);
  CHECK(adjust.err.starts_with("warning: the change was saved in the database"));
  const auto list = dir / "list.json";
  REQUIRE(run(dir, "--json stock list", ">" + quote(list.string())).status == 0);
  std::ifstream f(list);
  std::ostringstream s;
  s << f.rdbuf();
  CHECK(s.str().find("\"qty\": 7") != std::string::npos);  // 10 added once, 3 taken once
  CHECK(run(dir, "check", ">/dev/null").status == 0);
}

TEST_CASE("standard input closed: an import from it reads nothing and imports nothing") {
  shelfstage::test::TempDir dir;
  REQUIRE(run(dir, "init", ">/dev/null").status == 0);
  const Run r = run(dir, "stock import -", "<&- >/dev/null");
  CHECK(r.status == 1);
  CHECK(r.err.starts_with("error: stdin: "));
}
