// libFuzzer target: any command line through the program in process, against a small scratch stock.
// One argument per line of the input. Whatever is typed, the program must answer as its README
// says: exit 0, 1, 2 or 3; a failure is one `error:` line (a CSV adds one line per bad row),
// never an internal error; everything on standard error is clean text of bounded length; and
// with --json a success prints one JSON document. Anything else aborts (a find).
#include <fcntl.h>
#include <unistd.h>

#include <nlohmann/json.hpp>

#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "cli_runner.hpp"
#include "shelfstage/units/text.hpp"

using namespace shelfstage;
namespace fs = std::filesystem;

namespace {

[[noreturn]] void bug() { std::abort(); }

constexpr const char* kDevices =
    "name,kind,idss_min,idss_max,vp_min,vp_max,hfe_min,hfe_max\n"
    "SJ-101,NJFET,1m,5m,-0.5,-3,,\n"
    "SQ-410,NPN,,,,,110,450\n";
constexpr const char* kStock =
    "kind,value,qty,tol,power,volts,dielectric,bin,note\n"
    "R,1k,20,5%,0.25,,,A1,\n"
    "R,4k7,12,5%,0.25,,,A2,\n"
    "C,100n,25,10%,,50,X7R,B1,\n"
    "NJFET,SJ-101,6,,,,,T1,\n"
    "NPN,SQ-410,9,,,,,T2,\n";

/// Commands that search or load the demo shelf take seconds; they are fuzzed elsewhere.
bool too_slow(const std::vector<std::string>& args) {
  for (const auto& a : args)
    if (a == "design" || a == "demo" || a.starts_with("test-")) return true;
  return false;
}

/// Everything stays in the scratch folder: no path may lead out of it.
bool leaves_scratch(const std::vector<std::string>& args) {
  for (const auto& a : args)
    if (a.find('/') != std::string::npos || a.find("..") != std::string::npos) return true;
  return false;
}

std::string g_dir;  // the scratch folder

/// Runs the program in the scratch folder, so that any file it makes (a database under a new
/// name, a SPICE file, a report) lands there, and removes such files again. The fuzzer's own
/// folder is the current one between runs (its corpus and artifact paths may be relative).
test::CliResult run_in_scratch(const std::vector<std::string>& args) {
  const int here = ::open(".", O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (here < 0 || ::chdir(g_dir.c_str()) != 0) bug();
  auto r = test::run_cli(args);
  std::error_code ec;
  for (const auto& e : fs::directory_iterator(".", ec)) {
    const auto name = e.path().filename().string();
    if (!name.starts_with("stock.db")) fs::remove_all(e.path(), ec);
  }
  if (::fchdir(here) != 0) bug();
  ::close(here);
  return r;
}

}  // namespace

extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  const char* tmp = std::getenv("TMPDIR");
  std::string dir = std::string(tmp != nullptr && *tmp != '\0' ? tmp : "/tmp") + "/shelfstage-cli-fuzz-XXXXXX";
  if (::mkdtemp(dir.data()) == nullptr) bug();
  g_dir = dir;
  ::setenv("HOME", dir.c_str(), 1);
  ::unsetenv("SHELFSTAGE_DB");
  ::setenv("XDG_DATA_HOME", dir.c_str(), 1);
  const std::string db = dir + "/stock.db";
  if (test::run_cli({"--db", db, "init"}).status != 0) bug();
  if (test::run_cli({"--db", db, "devices", "import", "-"}, kDevices).status != 0) bug();
  if (test::run_cli({"--db", db, "stock", "import", "-"}, kStock).status != 0) bug();
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  std::vector<std::string> args;
  std::string_view rest(reinterpret_cast<const char*>(data), size);
  while (!rest.empty() && args.size() < 24) {
    const auto nl = rest.find('\n');
    args.emplace_back(rest.substr(0, nl));
    rest = nl == std::string_view::npos ? std::string_view() : rest.substr(nl + 1);
  }
  if (too_slow(args) || leaves_scratch(args)) return 0;
  bool json = false, help = false;
  for (const auto& a : args) {
    json = json || a == "--json";
    help = help || a == "--help" || a == "-h" || a == "--version" || a == "--help-all";
  }
  // Most runs use the scratch stock (a given --db may come later and win).
  std::vector<std::string> full = {"--db", "stock.db"};
  full.insert(full.end(), args.begin(), args.end());
  const auto r = run_in_scratch(full);

  if (r.status < 0 || r.status > 3) bug();
  if (r.status != 0 && !r.err.starts_with("error: ")) bug();
  if (r.err.starts_with("error: internal: ")) bug();  // (a typed "error: internal" echoed later is no find)
  // Standard error: clean text, lines of bounded length (values in messages are cut).
  std::string_view err = r.err;
  while (!err.empty()) {
    const auto nl = err.find('\n');
    const auto line = err.substr(0, nl);
    if (units::find_text_fault(line) || line.size() > 2500) bug();
    err = nl == std::string_view::npos ? std::string_view() : err.substr(nl + 1);
  }
  if (r.status == 0 && json && !help && !r.out.empty() && !nlohmann::json::accept(r.out)) bug();
  return 0;
}
