// libFuzzer target: any bytes as text a stock holds (bin, note, device name, ledger reason), through --json and CSV
// output and back. The input's four NUL-separated fields are written into a scratch database twice over: through the
// program (`stock add --bin ... --note ...`, which must take clean text and refuse any other with exit 1, naming the
// option) and straight into the file, as a database written before text was checked may hold them. Every listing must
// then succeed: its JSON must parse and give back each text escaped (units::escape_text, the text itself when clean),
// and the CSV export must import again. Anything else aborts (a find).
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
#include "shelfstage/store/csv.hpp"
#include "shelfstage/store/detail/sqlite.hpp"
#include "shelfstage/units/text.hpp"

using namespace shelfstage;
namespace fs = std::filesystem;

namespace {

[[noreturn]] void bug() { std::abort(); }

std::string g_dir;       // the scratch folder (absolute: the fuzzer's own paths stay as given)
std::string g_template;  // an empty stock with one device, copied for each run

nlohmann::json listing(const std::vector<std::string>& args) {
  const auto r = test::run_cli(args);
  if (r.status != 0 || !nlohmann::json::accept(r.out)) bug();
  return nlohmann::json::parse(r.out);
}

/// The text as the store keeps it: trimmed of white space at both ends (as Database does).
std::string trimmed(std::string_view s) {
  const auto space = [](char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\f' || c == '\v'; };
  while (!s.empty() && space(s.front())) s.remove_prefix(1);
  while (!s.empty() && space(s.back())) s.remove_suffix(1);
  return std::string(s);
}

}  // namespace

extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  const char* tmp = std::getenv("TMPDIR");
  std::string dir = std::string(tmp != nullptr && *tmp != '\0' ? tmp : "/tmp") + "/shelfstage-json-fuzz-XXXXXX";
  if (::mkdtemp(dir.data()) == nullptr) bug();
  g_dir = dir;
  g_template = dir + "/template.db";
  if (test::run_cli({"--db", g_template, "init"}).status != 0) bug();
  if (test::run_cli({"--db", g_template, "devices", "add", "SQ-410", "--kind", "NPN", "--hfe", "110..450"}).status != 0)
    bug();
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  std::vector<std::string> f;
  std::string_view rest(reinterpret_cast<const char*>(data), size);
  for (int i = 0; i < 4; ++i) {
    const auto nul = rest.find('\0');
    f.emplace_back(rest.substr(0, nul));
    rest = nul == std::string_view::npos ? std::string_view() : rest.substr(nul + 1);
  }
  const std::string& bin = f[0];
  const std::string& note = f[1];
  const std::string& device = f[2];
  const std::string& reason = f[3];
  const std::string db = g_dir + "/work.db";
  std::error_code ec;
  for (const char* suffix : {"", "-wal", "-shm"}) fs::remove(db + suffix, ec);
  fs::copy_file(g_template, db, ec);
  if (ec) bug();

  // Through the door: clean text is kept as given (trimmed), anything else refused with exit 1.
  // `--bin=TEXT` keeps a bin that starts with '-' a value; an empty one is left out (the
  // program refuses `--bin=` with nothing after it).
  const std::string why = reason.empty() ? "x" : reason;
  std::vector<std::string> args = {"--db", db, "--json", "stock", "add", "R", "1k", "3", "--reason=" + why};
  if (!bin.empty()) args.push_back("--bin=" + bin);
  if (!note.empty()) args.push_back("--note=" + note);
  const auto add = test::run_cli(args);
  const bool clean = !units::find_text_fault(bin) && !units::find_text_fault(note) && !units::find_text_fault(why);
  if (clean && !trimmed(why).empty()) {
    if (add.status != 0) bug();
    const auto doc = nlohmann::json::parse(add.out);
    if (doc["part"]["bin"] != trimmed(bin) || doc["part"]["note"] != trimmed(note)) bug();
  } else if (!clean) {
    if (add.status != 1 || !add.err.starts_with("error: --")) bug();
  }

  // Straight into the file, as an old database may hold it.
  {
    auto raw = store::Database::open(db);
    auto& impl = raw.impl();
    impl.conn
        .prepare(
            "INSERT OR IGNORE INTO devices (name, kind, hfe_min, hfe_max, is_a, vaf, cje, cjc, vce_sat) "
            "VALUES (?, 'NPN', 100, 300, 1e-14, 80, 0, 0, 0.2)")
        .bind(1, device)
        .run();
    impl.conn.prepare("INSERT INTO parts (kind, value, bin, note) VALUES ('R', 2200, ?, ?)").bind_all(bin, note).run();
    const auto id = impl.conn.last_insert_rowid();
    impl.conn
        .prepare(
            "INSERT INTO ledger (at, part_id, part_desc, delta, reason) VALUES ('2026-01-01T00:00:00Z', ?, ?, 4, ?)")
        .bind_all(id, "R 2.2k bin " + bin, reason)
        .run();
  }
  const auto stock = listing({"--db", db, "--json", "stock", "list"});
  bool found = false;
  for (const auto& p : stock["parts"])
    found =
        found || (p["value"] == 2200.0 && p["bin"] == units::escape_text(bin) && p["note"] == units::escape_text(note));
  if (!found) bug();
  const auto ledger = listing({"--db", db, "--json", "ledger"});
  if (ledger["entries"].back()["reason"] != units::escape_text(reason)) bug();
  const auto devices = listing({"--db", db, "--json", "devices", "list"});
  (void)devices;
  // The tables for people: every line clean text (nothing that could drive a terminal).
  for (const auto& table :
       {std::vector<std::string>{"--db", db, "stock", "list"}, std::vector<std::string>{"--db", db, "ledger"},
        std::vector<std::string>{"--db", db, "devices", "list"}}) {
    const auto r = test::run_cli(table);
    if (r.status != 0) bug();
    std::string_view out = r.out;
    while (!out.empty()) {
      const auto nl = out.find('\n');
      if (units::find_text_fault(out.substr(0, nl))) bug();
      out = nl == std::string_view::npos ? std::string_view() : out.substr(nl + 1);
    }
  }

  // The export reads back, every text as listed.
  const auto exported = test::run_cli({"--db", db, "stock", "export"});
  if (exported.status != 0) bug();
  try {
    const auto parts = store::parse_stock_csv(exported.out, "export.csv", std::vector<std::string>{});
    bool back = false;
    for (const auto& p : parts) back = back || (p.value == 2200.0 && p.bin == trimmed(units::escape_text(bin)));
    if (!back) bug();
  } catch (const Error&) {
    bug();
  }
  return 0;
}
