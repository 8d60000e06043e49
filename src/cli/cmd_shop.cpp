// `shelfstage shop ID`: what to buy to build N copies of a kept design, and which purchases
// would most improve its worst-case gain error.
#include <fmt/format.h>

#include <algorithm>
#include <memory>

#include "commands.hpp"
#include "design_run.hpp"
#include "kept_design.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/picklist.hpp"
#include "shelfstage/synth/purchases.hpp"

namespace shelfstage::cli {

namespace {

/// A redesign must beat the kept design's worst-case gain error by this much (half a
/// percentage point) to be worth a purchase.
constexpr double kImprovement = 0.005;
/// How many purchase options to list.
constexpr std::size_t kOptions = 3;

struct ShopOptions {
  std::string id;
  std::optional<int> copies;
};

struct Option {
  synth::Candidate candidate;
  std::vector<build::ShortItem> buy;
};

/// What a pick list on the purchase-augmented stock says to buy: pieces from purchasable
/// lines, and whatever is still short.
std::vector<build::ShortItem> purchases_of(const report::PickList& pick) {
  std::vector<build::ShortItem> out = pick.short_items;
  for (const auto& l : pick.lines) {
    if (!synth::is_purchase_line(l.part_id)) continue;
    build::ShortItem s;
    s.kind = l.kind;
    s.value = l.value;
    s.device = l.device;
    s.tol = l.tol;
    s.rating = l.rating;
    s.dielectric = l.dielectric;
    s.qty = s.needed = l.qty;
    s.designators = l.designators;
    out.push_back(std::move(s));
  }
  return out;
}

std::string percent(double fraction) { return fmt::format("{:.2f}%", 100.0 * fraction); }

void run_shop(const ShopOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const KeptDesign d = load_kept(db, o.id);
  const int copies = copies_of(d, o.copies);
  const auto stock = db.parts();
  const auto held = store::held_for(db, d.saved.id);
  const auto pick = report::make_pick_list(d.candidate, copies, stock, held);

  // The kept design's figures afresh, then the search with purchasable values on the shelf.
  synth::Spec spec = d.spec;
  spec.copies = copies;
  synth::Candidate kept = d.candidate;
  synth::evaluate_candidate(kept, spec);
  const synth::Inventory inventory = load_inventory(db);
  const synth::DesignResult market = synth::design_with_purchases(spec, inventory);
  // When the kept design is short, the smallest purchase that makes the request buildable
  // may be another design: offer it when it buys fewer pieces.
  int short_pieces = 0;
  for (const auto& s : pick.short_items) short_pieces += s.qty;
  std::optional<synth::Purchase> smaller;
  if (short_pieces > 0)
    if (auto p = synth::smallest_purchase(spec, inventory); p && p->pieces < short_pieces) smaller = std::move(p);
  std::vector<store::Part> augmented = stock;
  const auto extra = synth::purchasable_parts(synth::purchase_volts(spec));
  augmented.insert(augmented.end(), extra.begin(), extra.end());
  std::vector<Option> options;
  for (const auto& c : market.candidates) {
    if (!(c.error_worst < kept.error_worst - kImprovement)) continue;
    auto buy = purchases_of(report::make_pick_list(c, copies, augmented, held));
    if (buy.empty()) continue;  // the shelf alone makes it: `design` lists it already
    options.push_back({c, std::move(buy)});
  }
  // Keep the options no other beats on both counts (fewer or as many pieces to buy and a
  // smaller or equal worst-case error), most exact first.
  auto pieces = [](const Option& opt) {
    int n = 0;
    for (const auto& s : opt.buy) n += s.qty;
    return n;
  };
  std::vector<Option> front;
  for (const auto& a : options) {
    const bool beaten = std::any_of(options.begin(), options.end(), [&](const Option& b) {
      return &a != &b && pieces(b) <= pieces(a) && b.candidate.error_worst <= a.candidate.error_worst &&
             (pieces(b) < pieces(a) || b.candidate.error_worst < a.candidate.error_worst);
    });
    if (!beaten) front.push_back(a);
  }
  options = std::move(front);
  std::stable_sort(options.begin(), options.end(), [](const Option& a, const Option& b) {
    return a.candidate.error_worst < b.candidate.error_worst;
  });
  if (options.size() > kOptions) options.resize(kOptions);

  if (ctx.global.json) {
    report::Json shorts = report::Json::array();
    for (const auto& s : pick.short_items) shorts.push_back(report::short_item_json(s));
    report::Json better = report::Json::array();
    for (const auto& opt : options) {
      report::Json buy = report::Json::array();
      for (const auto& s : opt.buy) buy.push_back(report::short_item_json(s));
      report::Json parts = report::Json::array();
      for (const auto& rp : opt.candidate.parts)
        parts.push_back({{"role", rp.role}, {"designator", rp.designator}, {"value", rp.combo.nominal}, {"recipe", rp.recipe}});
      better.push_back({{"topology", std::string(opt.candidate.topology->name())},
                        {"device", opt.candidate.device.name},
                        {"error_worst", opt.candidate.error_worst},
                        {"error_nominal", opt.candidate.error_nominal},
                        {"score", opt.candidate.score},
                        {"pieces_to_buy", pieces(opt)},
                        {"buy", buy},
                        {"parts", parts}});
    }
    report::Json smallest = nullptr;
    if (smaller) {
      report::Json buy = report::Json::array();
      for (const auto& s : build::purchase_items(*smaller)) buy.push_back(report::short_item_json(s));
      smallest = {{"design", report::candidate_json(smaller->design)}, {"pieces_to_buy", smaller->pieces}, {"buy", buy}};
    }
    print_json(ctx, {{"schema", 1},
                     {"design", d.saved.id},
                     {"copies", copies},
                     {"short", shorts},
                     {"smallest_purchase", smallest},
                     {"kept", {{"error_worst", kept.error_worst}, {"error_nominal", kept.error_nominal}, {"score", kept.score}}},
                     {"improvements", better}});
    return;
  }
  const std::string copies_text = fmt::format("{} cop{}", copies, copies == 1 ? "y" : "ies");
  if (pick.short_items.empty()) {
    ctx.out << fmt::format("Nothing to buy for {} of {}: the shelf holds every piece.\n", copies_text, d.saved.id);
  } else {
    ctx.out << fmt::format("To build {} of {}, buy:\n", copies_text, d.saved.id);
    ctx.out << report::shopping_text(pick.short_items);
  }
  if (smaller) {
    const auto& c = smaller->design;
    ctx.out << fmt::format(
        "\nA smaller purchase for the same request: {} piece{} instead of {}, for {} with {} (worst-case gain "
        "error {}):\n   {}\n",
        smaller->pieces, smaller->pieces == 1 ? "" : "s", short_pieces, c.topology_name(), c.device.name,
        percent(c.error_worst), report::recipe_line(c));
    ctx.out << report::shopping_text(build::purchase_items(*smaller));
  }
  ctx.out << fmt::format("\nWorst-case gain error of {}: {} (nominal {}).\n", d.saved.id, percent(kept.error_worst),
                         percent(std::abs(kept.error_nominal)));
  if (options.empty()) {
    ctx.out << fmt::format(
        "No purchase of E24 resistors or E6 capacitors would lower it by {} points or more.\n",
        fmt::format("{:.1f}", 100 * kImprovement));
    return;
  }
  ctx.out << "Purchases that would most improve it:\n";
  int n = 0;
  for (const auto& opt : options) {
    const auto& c = opt.candidate;
    ctx.out << fmt::format("\n{}. {} with {}: worst-case gain error {} (nominal {}), {} pieces to buy\n", ++n,
                           c.topology->name(), c.device.name, percent(c.error_worst), percent(std::abs(c.error_nominal)),
                           pieces(opt));
    ctx.out << "   " << report::recipe_line(c) << "\n";
    ctx.out << report::shopping_text(opt.buy);
  }
  ctx.out << "\nAfter adding the purchases to the stock, run `shelfstage design` again to keep the new design.\n";
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
