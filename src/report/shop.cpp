// Shopping lists as JSON and as text: the short items, the smaller purchase and the
// purchases that would make the kept design more exact.
#include "shelfstage/report/shop.hpp"

#include <nlohmann/json.hpp>
#include <fmt/format.h>

#include <cmath>

#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/picklist.hpp"

namespace shelfstage::report {

namespace {

Json items_json(const std::vector<build::ShortItem>& items) {
  Json out = Json::array();
  for (const auto& s : items) out.push_back(short_item_json(s));
  return out;
}

Json option_json(const build::ShopOption& opt) {
  Json parts = Json::array();
  for (const auto& rp : opt.candidate.parts)
    parts.push_back(
        {{"role", rp.role}, {"designator", rp.designator}, {"value", rp.combo.nominal}, {"recipe", rp.recipe}});
  return {{"topology", opt.candidate.topology_name()},
          {"device", opt.candidate.device.name},
          {"error_worst", opt.candidate.error_worst},
          {"error_nominal", opt.candidate.error_nominal},
          {"score", opt.candidate.score},
          {"pieces_to_buy", opt.pieces()},
          {"buy", items_json(opt.buy)},
          {"parts", parts}};
}

std::string percent(double fraction) { return fmt::format("{:.2f}%", 100.0 * fraction); }

/// The smaller purchase for the same request, for people.
std::string smaller_text(const synth::Purchase& p, int short_pieces) {
  const auto& c = p.design;
  return fmt::format(
             "\nA smaller purchase for the same request: {} piece{} instead of {}, for {} with {} (worst-case gain "
             "error {}):\n   {}\n",
             p.pieces, p.pieces == 1 ? "" : "s", short_pieces, c.topology_name(), c.device.name, percent(c.error_worst),
             recipe_line(c)) +
         shopping_text(build::purchase_items(p));
}

}  // namespace

Json shop_json(const std::string& design_id, const build::Shopping& s) {
  Json better = Json::array();
  for (const auto& opt : s.options) better.push_back(option_json(opt));
  Json smallest = nullptr;
  if (s.smaller)
    smallest = {{"design", candidate_json(s.smaller->design)},
                {"pieces_to_buy", s.smaller->pieces},
                {"buy", items_json(build::purchase_items(*s.smaller))}};
  return {
      {"schema", 1},
      {"design", design_id},
      {"copies", s.plan.copies},
      {"short", items_json(s.plan.short_items)},
      {"smallest_purchase", smallest},
      {"kept", {{"error_worst", s.kept.error_worst}, {"error_nominal", s.kept.error_nominal}, {"score", s.kept.score}}},
      {"improvements", better}};
}

std::string shop_text(const std::string& design_id, const build::Shopping& s) {
  const int copies = s.plan.copies;
  const std::string copies_text = fmt::format("{} cop{}", copies, copies == 1 ? "y" : "ies");
  std::string out;
  if (s.plan.short_items.empty()) {
    out += fmt::format("Nothing to buy for {} of {}: the shelf holds every piece.\n", copies_text, design_id);
  } else {
    out += fmt::format("To build {} of {}, buy:\n", copies_text, design_id);
    out += shopping_text(s.plan.short_items);
  }
  if (s.smaller) out += smaller_text(*s.smaller, s.short_pieces);
  out += fmt::format("\nWorst-case gain error of {}: {} (nominal {}).\n", design_id, percent(s.kept.error_worst),
                     percent(std::abs(s.kept.error_nominal)));
  if (s.options.empty())
    return out + fmt::format("No purchase of E24 resistors or E6 capacitors would lower it by {} points or more.\n",
                             fmt::format("{:.1f}", 100 * build::kShopImprovement));
  out += "Purchases that would most improve it:\n";
  int n = 0;
  for (const auto& opt : s.options) {
    const auto& c = opt.candidate;
    out += fmt::format("\n{}. {} with {}: worst-case gain error {} (nominal {}), {} pieces to buy\n", ++n,
                       c.topology_name(), c.device.name, percent(c.error_worst), percent(std::abs(c.error_nominal)),
                       opt.pieces());
    out += "   " + recipe_line(c) + "\n";
    out += shopping_text(opt.buy);
  }
  return out + "\nAfter adding the purchases to the stock, run `shelfstage design` again to keep the new design.\n";
}

}  // namespace shelfstage::report
