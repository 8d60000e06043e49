// Shopping lists: the kept design's shortfall, the smallest purchase for its request, and the
// redesigns with purchasable values that make it more exact.
#include "shelfstage/build/shop.hpp"

#include <algorithm>

namespace shelfstage::build {

int ShopOption::pieces() const {
  int n = 0;
  for (const auto& s : buy) n += s.qty;
  return n;
}

std::vector<ShortItem> purchases_of(const Plan& plan) {
  std::vector<ShortItem> out = plan.short_items;
  for (const auto& l : plan.lines) {
    if (synth::is_purchase_line(l.part_id)) out.push_back(short_item(l, l.qty, l.qty, l.designators));
  }
  return out;
}

std::vector<ShopOption> best_options(const std::vector<ShopOption>& options, std::size_t keep) {
  std::vector<ShopOption> front;
  for (const auto& a : options) {
    const bool beaten = std::any_of(options.begin(), options.end(), [&](const ShopOption& b) {
      return &a != &b && b.pieces() <= a.pieces() && b.candidate.error_worst <= a.candidate.error_worst &&
             (b.pieces() < a.pieces() || b.candidate.error_worst < a.candidate.error_worst);
    });
    if (!beaten) front.push_back(a);
  }
  std::stable_sort(front.begin(), front.end(), [](const ShopOption& a, const ShopOption& b) {
    return a.candidate.error_worst < b.candidate.error_worst;
  });
  if (front.size() > keep) front.resize(keep);
  return front;
}

Shopping plan_shopping(const synth::Candidate& kept, const synth::Spec& spec, int copies,
                       const synth::Inventory& inventory, const std::map<std::int64_t, int>& held) {
  Shopping out;
  out.plan = plan_build(kept, copies, inventory.parts, held);
  for (const auto& s : out.plan.short_items) out.short_pieces += s.qty;

  // The kept design's figures afresh, then the search with purchasable values on the shelf.
  synth::Spec request = spec;
  request.copies = copies;
  out.kept = kept;
  synth::evaluate_candidate(out.kept, request);
  const synth::DesignResult market = synth::design_with_purchases(request, inventory);
  // When the kept design is short, the smallest purchase that makes the request buildable
  // may be another design: offer it when it buys fewer pieces.
  if (out.short_pieces > 0)
    if (auto p = synth::smallest_purchase(request, inventory); p && p->pieces < out.short_pieces)
      out.smaller = std::move(p);
  std::vector<store::Part> augmented = inventory.parts;
  const auto extra = synth::purchasable_parts(synth::purchase_volts(request));
  augmented.insert(augmented.end(), extra.begin(), extra.end());
  std::vector<ShopOption> options;
  for (const auto& c : market.candidates) {
    if (!(c.error_worst < out.kept.error_worst - kShopImprovement)) continue;
    auto buy = purchases_of(plan_build(c, copies, augmented, held));
    if (buy.empty()) continue;  // the shelf alone makes it: `design` lists it already
    options.push_back({c, std::move(buy)});
  }
  out.options = best_options(options);
  return out;
}

}  // namespace shelfstage::build
