// `shelfstage pick ID`: the pick list of a kept design, bin by bin, for N copies.
#include <fmt/format.h>

#include <memory>

#include "commands.hpp"
#include "kept_design.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/picklist.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::cli {

namespace {

struct PickOptions {
  std::string id;
  std::optional<int> copies;
  bool csv = false;
};

void run_pick(const PickOptions& o, Context& ctx) {
  if (o.csv && ctx.global.json) throw InputError("--csv and --json: choose one");
  auto db = ctx.open_database();
  const KeptDesign d = load_kept(db, o.id);
  const int copies = copies_of(d, o.copies);
  auto pick = report::make_pick_list(d.candidate, copies, db.parts(), store::held_for(db, d.saved.id));
  pick.rail = report::rail_words(d.spec);
  if (ctx.global.json)
    print_json(ctx, report::pick_json(pick));
  else if (o.csv)
    ctx.out << report::pick_csv(pick);
  else
    ctx.out << report::pick_text(pick);
}

}  // namespace

void setup_pick(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<PickOptions>();
  CLI::App* cmd = parent.add_subcommand("pick", "The pick list of a kept design: which pieces to take from which bins");
  cmd->add_option("ID", o->id, "Design id from `shelfstage design` (or its first four or more characters)")
      ->type_name("")
      ->required();
  add_copies_option(*cmd, o->copies);
  cmd->add_flag("--csv", o->csv, "Print CSV (status, bin, kind, value, qty, designators, ...) instead of a table");
  cmd->footer(
      "Bins are listed in the order a person walks the shelf (A2 before A10). Each piece draws\n"
      "on the stock lines the design was made from, pieces this design has reserved first.\n"
      "Designators: R4a and R4b are the two pieces of R4; with several copies R3.2 is R3 of\n"
      "copy 2. Nothing is taken out of stock: `shelfstage build ID` does that.");
  cmd->callback([o, &ctx] { run_pick(*o, ctx); });
}

}  // namespace shelfstage::cli
