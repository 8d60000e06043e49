// `shelfstage init`: creates an empty stock database.
#include <fmt/format.h>

#include <memory>

#include "commands.hpp"

namespace shelfstage::cli {

namespace {

struct InitOptions {};

void run_init(const InitOptions& /*options*/, Context& ctx) {
  const std::filesystem::path path = ctx.database_path();
  const auto db = ctx.create_database(path);
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"database", path.string()}, {"created", true}});
    return;
  }
  ctx.out << fmt::format("Created an empty stock database: {}\n", path.string());
  ctx.out << "Next: add device types, transistors and op-amps (`shelfstage devices import FILE.csv`), and parts\n"
             "(`shelfstage stock import FILE.csv` or `shelfstage stock add`).\n";
}

}  // namespace

void setup_init(CLI::App& parent, Context& ctx) {
  auto options = std::make_shared<InitOptions>();
  CLI::App* cmd = parent.add_subcommand("init", "Create an empty stock database");
  cmd->footer(
      "Creates the file named by --db, else $SHELFSTAGE_DB, else the standard location\n"
      "($XDG_DATA_HOME/shelfstage/stock.db or ~/.local/share/shelfstage/stock.db).\n"
      "An existing file is never overwritten: init stops with exit status 1 instead.");
  cmd->callback([options, &ctx] { run_init(*options, ctx); });
}

}  // namespace shelfstage::cli
