// `shelfstage build ID`: take the pieces of a kept design out of stock, in one transaction.
#include <fmt/format.h>

#include <memory>

#include "builds_view.hpp"
#include "commands.hpp"
#include "kept_design.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::cli {

namespace {

struct BuildOptions {
  std::string id;
  std::optional<int> copies;
};

void run_build(const BuildOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const KeptDesign d = load_kept(db, o.id);
  const int copies = copies_of(d, o.copies);
  const auto build_id = store::record_build(db, d.saved.id, copies, pick_planner(d.candidate, copies));
  const auto b = store::find_build(db, build_id);
  if (!b) throw DatabaseError(fmt::format("build {} vanished after it was written", build_id));
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"build", build_json(*b)}});
    return;
  }
  ctx.out << fmt::format("Build {}: {} cop{} of {}, {} pieces taken from {} stock lines.\n", b->id, b->copies,
                         b->copies == 1 ? "y" : "ies", b->design_id, b->pieces(), b->lines.size());
  ctx.out << build_lines_table(*b);
  ctx.out << fmt::format("The ledger says \"build {} of {}\". `shelfstage builds undo {}` puts everything back.\n",
                         b->id, b->design_id, b->id);
}

}  // namespace

void setup_build(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<BuildOptions>();
  CLI::App* cmd = parent.add_subcommand("build", "Take the pieces of a kept design out of stock (one transaction)");
  cmd->add_option("ID", o->id, "Design id from `shelfstage design` (or its first four or more characters)")
      ->type_name("")
      ->required();
  add_copies_option(*cmd, o->copies);
  cmd->footer(
      "The pieces come from the bins `shelfstage pick ID` lists, pieces this design has\n"
      "reserved first (that hold is used up). Each stock line gets a ledger entry \"build N of\n"
      "ID\". When anything is short nothing is taken (exit 2) and the message says what.");
  cmd->callback([o, &ctx] { run_build(*o, ctx); });
}

}  // namespace shelfstage::cli
