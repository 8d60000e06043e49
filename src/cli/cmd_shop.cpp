// `shelfstage shop ID`: what to buy to build N copies of a kept design, and which purchases
// would most improve its worst-case gain error.
#include <memory>

#include "commands.hpp"
#include "design_run.hpp"
#include "kept_design.hpp"
#include "shelfstage/build/shop.hpp"
#include "shelfstage/report/shop.hpp"

namespace shelfstage::cli {

namespace {

struct ShopOptions {
  std::string id;
  std::optional<int> copies;
};

void run_shop(const ShopOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const KeptDesign d = load_kept(db, o.id);
  const int copies = copies_of(d, o.copies);
  const build::Shopping s =
      build::plan_shopping(d.candidate, d.spec, copies, load_inventory(db), store::held_for(db, d.saved.id));
  if (ctx.global.json)
    print_json(ctx, report::shop_json(d.saved.id, s));
  else
    ctx.out << report::shop_text(d.saved.id, s);
}

}  // namespace

void setup_shop(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<ShopOptions>();
  CLI::App* cmd = parent.add_subcommand(
      "shop", "What to buy for N copies of a kept design, and purchases that would make it more exact");
  cmd->add_option("ID", o->id, "Design id from `shelfstage design` (or its first four or more characters)")
      ->type_name("")
      ->required();
  add_copies_option(*cmd, o->copies);
  cmd->footer(
      "First the pieces the shelf is short of for these copies (value, tolerance, rating,\n"
      "quantity). Then the request is designed again with E24 resistors (5%, 0.25 W) and E6\n"
      "capacitors one could buy added to the shelf; designs that would lower the worst-case\n"
      "gain error by half a point or more are listed with what to buy for them (those that\n"
      "no other option beats with fewer pieces to buy and a smaller error).");
  cmd->callback([o, &ctx] { run_shop(*o, ctx); });
}

}  // namespace shelfstage::cli
