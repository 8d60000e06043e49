// Fault injection through whole commands: every database write failing in turn, and standard output failing at every
// byte.
//
// The promise checked: the exit status tells the truth about the database. A command that
// exits 0 made its whole change; one that exits 1, 2 or 3 left the stock exactly as it was.
// And once a change is committed, a failure to print it is a warning with exit 0, never an
// error that would make a script do it again.
#include <doctest/doctest.h>
#include <sqlite3.h>

#include <algorithm>
#include <cerrno>
#include <filesystem>
#include <ostream>
#include <string>
#include <vector>

#include "cli_runner.hpp"
#include "faulty_vfs.hpp"
#include "output.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;
namespace fs = std::filesystem;

namespace {

using Args = std::vector<std::string>;

/// Standard output on a disk that fills after `room` bytes: the rest fails with ENOSPC.
class FullAfter : public std::streambuf, public cli::WriteErrorSource {
 public:
  explicit FullAfter(std::size_t room) : room_(room) {}
  int write_error() const override { return error_; }
  const std::string& written() const { return written_; }

 protected:
  int_type overflow(int_type ch) override {
    if (traits_type::eq_int_type(ch, traits_type::eof())) return traits_type::not_eof(ch);
    const char c = traits_type::to_char_type(ch);
    return xsputn(&c, 1) == 1 ? ch : traits_type::eof();
  }
  std::streamsize xsputn(const char* s, std::streamsize n) override {
    const auto want = static_cast<std::size_t>(n);
    const std::size_t take = std::min(want, room_ - std::min(room_, written_.size()));
    written_.append(s, take);
    if (take < want) {
      error_ = ENOSPC;
      return static_cast<std::streamsize>(take);
    }
    return n;
  }

 private:
  std::size_t room_;
  std::string written_;
  int error_ = 0;
};

constexpr const char* kDevices =
    "name,kind,idss_min,idss_max,vp_min,vp_max,lambda,cgs,cgd,hfe_min,hfe_max,is,vaf,cje,cjc\n"
    "SJ-101,NJFET,1m,5m,-0.5,-3,0.005,4.5p,1.5p,,,,,,\n"
    "SQ-410,NPN,,,,,,,,110,450,1e-14,80,6p,3p\n";
constexpr const char* kStock =
    "kind,value,qty,tol,power,volts,dielectric,bin,note\n"
    "R,1k,20,5%,0.25,,,A1,\n"
    "R,4k7,12,5%,0.25,,,A2,\n"
    "R,10k,30,1%,0.25,,,A3,metal film\n"
    "C,100n,25,10%,,50,X7R,B1,\n"
    "C,10u,8,20%,,25,electrolytic,B2,\n"
    "NJFET,SJ-101,6,,,,,T1,\n"
    "NPN,SQ-410,9,,,,,T2,\n";

/// What a command can change, read back through the program: the stock as exported, the
/// number of ledger entries, the builds and the devices.
std::string state(const std::string& db) {
  std::string s;
  for (const Args& a : {Args{"stock", "export"}, Args{"--json", "builds", "list"}, Args{"--json", "devices", "list"}}) {
    Args args = {"--db", db};
    args.insert(args.end(), a.begin(), a.end());
    const auto r = test::run_cli(args);
    REQUIRE(r.status == 0);
    s += r.out;
  }
  const auto ledger = test::run_cli({"--db", db, "--json", "ledger"});
  REQUIRE(ledger.status == 0);
  std::size_t entries = 0;
  for (std::size_t at = 0; (at = ledger.out.find("\"delta\"", at)) != std::string::npos; ++at) ++entries;
  return s + "ledger entries: " + std::to_string(entries) + "\n";
}

/// A database with devices and stock, closed (its log merged), to copy before each run.
struct Pristine {
  test::TempDir dir;
  std::string path = (dir / "pristine.db").string();
  std::string work = (dir / "work.db").string();
  Pristine() {
    REQUIRE(test::run_cli({"--db", path, "init"}).status == 0);
    REQUIRE(test::run_cli({"--db", path, "devices", "import", "-"}, kDevices).status == 0);
    REQUIRE(test::run_cli({"--db", path, "stock", "import", "-"}, kStock).status == 0);
  }
  /// A fresh copy of the pristine file as work.db.
  void copy() const {
    for (const char* suffix : {"", "-wal", "-shm"}) fs::remove(work + suffix);
    fs::copy_file(path, work);
  }
};

/// Runs `args` against a copy of the pristine database with every write failing from the nth
/// on, for n = 1, 2, ... until a run meets no fault. Each run must exit 0 with the state of a
/// run without faults, or exit non-zero with the pristine state and one `error:` line.
/// Returns the number of runs that failed.
int fail_every_write(const Pristine& base, const Args& command, const std::string& input = "") {
  Args args = {"--db", base.work};
  args.insert(args.end(), command.begin(), command.end());
  base.copy();
  const std::string before = state(base.work);
  REQUIRE(test::run_cli(args, input).status == 0);
  const std::string after = state(base.work);
  REQUIRE(before != after);

  int failed = 0;
  test::FaultyVfs vfs;
  for (long n = 1; n < 1000; ++n) {
    base.copy();
    vfs.arm(n);
    const auto r = test::run_cli(args, input);
    const long writes = vfs.writes();
    vfs.disarm();
    CAPTURE(n);
    CAPTURE(r.err);
    const std::string now = state(base.work);
    if (r.status == 0) {
      CHECK(now == after);  // committed whole (a fault after the commit may only cost the log merge)
    } else {
      ++failed;
      CHECK(r.status == 3);
      CHECK(r.err.starts_with("error: "));
      CHECK(std::count(r.err.begin(), r.err.end(), '\n') == 1);
      // SQLITE_FULL from a write; an fsync that fails is an I/O error (errno may be lost on the way).
      CHECK((r.err.find("the disk is full (no space left on device)") != std::string::npos ||
             r.err.find("input/output error") != std::string::npos));
      CHECK(now == before);  // nothing of it is in the stock
    }
    const auto check = test::run_cli({"--db", base.work, "check"});
    CHECK(check.status == 0);
    if (writes < n) break;  // the fault was never reached: every write has had its turn
  }
  return failed;
}

/// Runs a command whose output is `expected` with standard output full after 0, 1, 2, ...
/// bytes; returns the statuses and standard errors seen.
std::vector<test::CliResult> fail_every_byte(const Pristine& base, const Args& command, std::size_t length) {
  std::vector<test::CliResult> out;
  Args args = {"--db", base.work};
  args.insert(args.end(), command.begin(), command.end());
  for (std::size_t room = 0; room < length; room += std::max<std::size_t>(1, length / 40)) {
    base.copy();
    FullAfter buffer(room);
    std::ostream stream(&buffer);
    out.push_back(test::run_cli_to(stream, args));
    out.back().out = state(base.work);
  }
  return out;
}

}  // namespace

TEST_CASE("every write of a stock import failing in turn: imported whole, or not at all with exit 3") {
  const Pristine base;
  const std::string more = "kind,value,qty,bin\nR,1k,5,A1\nR,22k,7,A4\nC,1n,100,B3\nNPN,SQ-410,1,T2\n";
  CHECK(fail_every_write(base, {"stock", "import", "-"}, more) > 3);
}

TEST_CASE("every write of an adjustment, a removal and a device removal failing in turn") {
  const Pristine base;
  CHECK(fail_every_write(base, {"stock", "adjust", "R:4k7", "-2", "--reason", "used"}) > 2);
  CHECK(fail_every_write(base, {"stock", "remove", "C:10u"}) > 2);
  CHECK(fail_every_write(base, {"devices", "remove", "SJ-101", "--cascade"}) > 2);
  CHECK(fail_every_write(base,
                         {"devices", "add", "SJ-102", "--kind", "NJFET", "--idss", "1m..5m", "--vp", "-0.5..-3"}) > 2);
}

TEST_CASE("standard output full at any byte after a committed change: exit 0, a warning, the change made once") {
  const Pristine base;
  base.copy();
  const std::string before = state(base.work);
  const auto reference =
      test::run_cli({"--db", base.work, "--json", "stock", "adjust", "R:10k", "-3", "--reason", "x"});
  REQUIRE(reference.status == 0);
  const std::string after = state(base.work);
  const auto runs =
      fail_every_byte(base, {"--json", "stock", "adjust", "R:10k", "-3", "--reason", "x"}, reference.out.size());
  REQUIRE(runs.size() > 10);
  for (const auto& r : runs) {
    CAPTURE(r.err);
    CHECK(r.status == 0);
    CHECK(r.err ==
          "warning: the change was saved in the database, but its report was lost: writing standard output: No space "
          "left on device\n");
    CHECK(r.out == after);  // taken once, not twice, and not zero times
  }
  CHECK(before != after);
}

TEST_CASE("standard output full while only reading: exit 1 and the reason, the stock untouched") {
  const Pristine base;
  base.copy();
  const std::string before = state(base.work);
  for (const Args& command : {Args{"stock", "export"}, Args{"--json", "stock", "list"}, Args{"stock", "list"},
                              Args{"--json", "devices", "list"}, Args{"--json", "ledger"}}) {
    CAPTURE(command[command.size() - 1]);
    Args whole = {"--db", base.work};
    whole.insert(whole.end(), command.begin(), command.end());
    const auto full = test::run_cli(whole);
    REQUIRE(full.status == 0);
    for (const auto& r : fail_every_byte(base, command, full.out.size())) {
      CHECK(r.status == 1);
      CHECK(r.err == "error: writing standard output: No space left on device\n");
      CHECK(r.out == before);
    }
  }
}

TEST_CASE("a failure after the commit that is not in the output is reported as a warning too") {
  // `init` makes the file and then prints; the file is the change.
  test::TempDir dir;
  const auto db = (dir / "new.db").string();
  FullAfter buffer(0);
  std::ostream stream(&buffer);
  const auto r = test::run_cli_to(stream, {"--db", db, "init"});
  CHECK(r.status == 0);
  CHECK(r.err.starts_with("warning: the change was saved in the database"));
  CHECK(fs::exists(db));
  CHECK(test::run_cli({"--db", db, "init"}).status == 1);  // a retry is refused: it is there
}
