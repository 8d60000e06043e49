// `shelfstage ledger`: the history of quantities on hand, each change with its reason.
#include <fmt/format.h>

#include <memory>
#include <optional>

#include "args.hpp"
#include "commands.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/table.hpp"

namespace shelfstage::cli {

namespace {

struct LedgerOptions {
  std::optional<std::string> since;
  std::optional<std::string> part;
};

/// --part names a transistor type (when the device list has it) or a value in notation.
void filter_part(const std::string& text, const store::Database& db, store::LedgerFilter& f) {
  if (const auto dev = db.device(text)) {
    f.device = dev->name;
    return;
  }
  double v = 0;
  if (!units::try_parse_value(text, v) || !(v > 0))
    throw InputError(
        fmt::format("--part '{}' is neither a value (4k7, 100n) nor a transistor type in the device list", text));
  f.value = v;
}

void run_ledger(const LedgerOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  store::LedgerFilter f;
  f.since = o.since;
  if (o.part) filter_part(*o.part, db, f);
  const auto entries = db.ledger(f);
  if (ctx.global.json) {
    nlohmann::ordered_json rows = nlohmann::ordered_json::array();
    for (const auto& e : entries)
      rows.push_back({{"id", e.id},
                      {"when", e.when},
                      {"part_id", e.part_id},
                      {"part", e.part},
                      {"delta", e.delta},
                      {"reason", e.reason},
                      {"build", e.build_id ? nlohmann::ordered_json(*e.build_id) : nlohmann::ordered_json(nullptr)}});
    print_json(ctx, {{"schema", 1}, {"entries", rows}});
    return;
  }
  if (entries.empty()) {
    ctx.out << "No ledger entries" << (o.since || o.part ? " match." : " yet.") << "\n";
    return;
  }
  using report::Align;
  report::TextTable t(
      {{"#", Align::right}, {"WHEN"}, {"CHANGE", Align::right}, {"LINE", Align::right}, {"PART"}, {"REASON"}});
  for (const auto& e : entries)
    t.add_row(
        {std::to_string(e.id), e.when, fmt::format("{:+}", e.delta), std::to_string(e.part_id), e.part, e.reason});
  ctx.out << t.render();
}

}  // namespace

void setup_ledger(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<LedgerOptions>();
  CLI::App* cmd = parent.add_subcommand("ledger", "The history of quantities on hand: every change and its reason");
  cmd->add_option("--since", o->since, "Only entries at or after this UTC date or time (2026-12-01, 2026-12-01T21:53)")
      ->type_name("DATE");
  cmd->add_option("--part", o->part, "Only this value (10k, 100n) or transistor type (SQ-410)")->type_name("VALUE");
  cmd->footer(
      "Quantities change only through the ledger: imports, adjustments, removals, builds\n"
      "(\"build 7 of ID\") and their undoing (\"undo build 7\"). Entries are never changed.");
  cmd->callback([o, &ctx] { run_ledger(*o, ctx); });
}

}  // namespace shelfstage::cli
