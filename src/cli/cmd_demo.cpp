// `shelfstage demo`: loads the demo shelf into a fresh database and shows what the program does.
#include <fmt/format.h>

#include <cstdlib>
#include <filesystem>
#include <memory>
#include <random>
#include <sstream>

#include "commands.hpp"
#include "demo_data.hpp"
#include "design_run.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/picklist.hpp"
#include "shelfstage/store/csv.hpp"
#include "stock_view.hpp"

namespace shelfstage::cli {

namespace {

struct DemoOptions {};

/// $TMPDIR when set (POSIX), else /tmp; InputError when it is not a folder.
std::filesystem::path temporary_folder() {
  const char* env = std::getenv("TMPDIR");
  const std::filesystem::path folder = env != nullptr && *env != '\0' ? env : "/tmp";
  std::error_code ec;
  if (!std::filesystem::is_directory(folder, ec))
    throw InputError(
        fmt::format("TMPDIR '{}' is not a folder, and the demo needs one for its temporary database: "
                    "set TMPDIR to a folder, or give --db FILE for a demo database to keep",
                    folder.string()));
  return folder;
}

/// Removes a temporary database (and SQLite's side files) when the demo ends, however it ends.
class TemporaryFile {
 public:
  TemporaryFile() {
    std::random_device rd;
    path_ = temporary_folder() / fmt::format("shelfstage-demo-{:08x}{:08x}.db", rd(), rd());
  }
  TemporaryFile(const TemporaryFile&) = delete;
  TemporaryFile& operator=(const TemporaryFile&) = delete;
  ~TemporaryFile() {
    std::error_code ec;
    for (const char* suffix : {"", "-wal", "-shm", "-journal"}) std::filesystem::remove(path_.string() + suffix, ec);
  }
  const std::filesystem::path& path() const { return path_; }

 private:
  std::filesystem::path path_;
};

struct Loaded {
  std::size_t transistors = 0, opamps = 0, lines = 0, pieces = 0;
};

/// Loads the compiled-in demo CSVs: device types first (stock lines refer to them), then the
/// stock, then the measured pieces.
Loaded load_demo_shelf(store::Database& db) {
  Loaded n;
  const auto records = store::parse_devices_csv(kDemoDevicesCsv, "demo devices.csv");
  db.put_devices(records);
  for (const auto& d : records) ++(devices::is_opamp(d.kind) ? n.opamps : n.transistors);
  std::vector<std::string> names;
  for (const auto& d : records) names.push_back(d.name);
  const auto parts = store::parse_stock_csv(kDemoStockCsv, "demo stock.csv", names);
  db.add_parts(parts, "demo shelf");
  n.lines = parts.size();
  const auto pieces = store::parse_pieces_csv(kDemoPiecesCsv, "demo pieces.csv", records);
  db.add_pieces(pieces);
  n.pieces = pieces.size();
  return n;
}

/// The request the demo designs for: a gain-of-ten stage for a line-level source.
synth::Spec demo_spec() {
  DesignOptions o;
  o.gain = "10";
  o.load = "10k";
  o.supply = "12";
  o.zin = "100k";
  o.source_z = "1k";
  o.band = "20..20k";
  o.swing = "2";
  return spec_from_options(o);
}

inline constexpr const char* kDemoRequest =
    "design --gain 10 --load 10k --supply 12 --zin 100k --source-z 1k --band 20..20k --swing 2";

/// What the demo shows once the shelf is loaded: the shelf, a design made from it, and the
/// pick list of the best candidate.
void show_demo(store::Database& db, Context& ctx) {
  const auto parts = db.parts();
  const synth::Spec spec = demo_spec();
  if (ctx.global.json) {
    // run_design_on prints its own JSON document: catch it and put it inside the demo's.
    std::ostringstream design_out;
    Context inner(design_out, ctx.err, ctx.in);
    inner.global = ctx.global;
    const auto r = run_design_on(db, spec, true, inner);
    const auto& best = r.candidates.front();
    auto pick = report::make_pick_list(best, spec.copies, db.parts());
    pick.rail = report::rail_words(spec);
    nlohmann::ordered_json doc;
    doc["schema"] = 1;
    doc["stock"] = stock_json(parts)["parts"];
    doc["request"] = std::string("shelfstage ") + kDemoRequest;
    doc["design"] = nlohmann::ordered_json::parse(design_out.str());
    doc["pick"] = report::pick_json(pick);
    print_json(ctx, doc);
    return;
  }
  ctx.out << stock_table(parts);
  ctx.out << fmt::format("\nA stage from this shelf: `shelfstage {}`\n\n", kDemoRequest);
  const auto r = run_design_on(db, spec, true, ctx);
  const auto& best = r.candidates.front();
  auto pick = report::make_pick_list(best, spec.copies, db.parts());
  pick.rail = report::rail_words(spec);
  ctx.out << fmt::format("\nThe pick list of #1 (`shelfstage pick {}`):\n\n", best.id);
  ctx.out << report::pick_text(pick);
}

void run_demo(const DemoOptions& /*o*/, Context& ctx) {
  // The demo never touches $SHELFSTAGE_DB or the standard database: only a file named with
  // --db (which must not exist yet) or a temporary one.
  std::unique_ptr<TemporaryFile> temporary;
  std::filesystem::path path;
  if (!ctx.global.db.empty()) {
    path = ctx.global.db;
    std::error_code ec;
    if (std::filesystem::exists(path, ec)) {
      throw InputError(fmt::format("{} already exists; the demo loads into a new file only", path.string()));
    }
  } else {
    temporary = std::make_unique<TemporaryFile>();
    path = temporary->path();
  }
  // A demo database the user keeps is a change the command made; a temporary one is not.
  auto db = temporary ? store::Database::create(path) : ctx.create_database(path);
  const Loaded n = load_demo_shelf(db);
  if (!ctx.global.json) {
    ctx.out << fmt::format(
        "Demo shelf: an invented workshop's parts drawer with {} stock lines, {} transistor and\n"
        "{} op-amp types and {} measured pieces, loaded into {}.\n\n",
        n.lines, n.transistors, n.opamps, n.pieces,
        temporary ? "a temporary database that is deleted when the demo ends" : path.string());
  }
  show_demo(db, ctx);
}

}  // namespace

void setup_demo(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<DemoOptions>();
  CLI::App* cmd = parent.add_subcommand("demo", "Try shelfstage on an invented workshop's parts drawer");
  cmd->footer(
      "Loads the demo shelf (built into the program: a mixed E12 resistor drawer, ceramics,\n"
      "film caps, electrolytics of several voltage ratings, a few JFET and BJT types) into a\n"
      "temporary database, shows it, designs a gain-of-ten stage from it, prints the pick\n"
      "list of the best design, and deletes the database. Your own stock is never touched.\n"
      "With --db FILE the demo database is kept in FILE, which must not exist yet.");
  cmd->callback([o, &ctx] { run_demo(*o, ctx); });
}

}  // namespace shelfstage::cli
