// The search on a purchase-augmented shelf: purchasable values as extra stock lines.
#include "shelfstage/synth/purchases.hpp"

#include <algorithm>

#include "shelfstage/synth/shelf.hpp"

namespace shelfstage::synth {

std::vector<store::Part> purchasable_parts(double capacitor_volts) {
  Shelf::Options o;
  o.combine = 1;
  o.add_purchases = true;
  o.purchase_volts = capacitor_volts;
  const Shelf market({}, o);
  std::vector<store::Part> out;
  std::int64_t next = -1;
  for (const auto& g : market.groups()) {
    if (!g.purchase) continue;
    store::Part p;
    p.id = next--;
    p.kind = g.kind;
    p.value = g.value;
    p.tol = g.tol;
    if (g.kind == store::PartKind::resistor)
      p.power_w = g.rating;
    else
      p.volts = g.rating;
    p.dielectric = g.dielectric;
    p.qty = 1000000;
    p.bin = kPurchaseBin;
    p.note = "to buy";
    out.push_back(std::move(p));
  }
  return out;
}

double purchase_volts(const Spec& spec) { return std::max(50.0, 2.0 * spec.supply_hi_v); }

DesignResult design_with_purchases(const Spec& spec, const Inventory& inventory, int top) {
  Inventory market = inventory;
  const auto extra = purchasable_parts(purchase_volts(spec));
  market.parts.insert(market.parts.end(), extra.begin(), extra.end());
  Spec s = spec;
  s.top = std::max(1, top);
  s.mc_samples = 0;
  DesignResult r = design(s, market);
  // Stock lines first, purchases after; count the pieces only a purchase supplies.
  auto settle = [](Candidate& c) {
    c.purchases = 0;
    for (auto& rp : c.parts) {
      for (auto& lines : rp.lines) {
        std::stable_partition(lines.begin(), lines.end(), [](std::int64_t id) { return !is_purchase_line(id); });
        if (!lines.empty() && std::all_of(lines.begin(), lines.end(), is_purchase_line)) ++c.purchases;
      }
    }
  };
  for (auto& c : r.candidates) {
    settle(c);
    for (auto& stage : c.stages) settle(stage);  // a chain's pick list reads its stages' parts
    c.yield.reset();  // no Monte Carlo was run
  }
  r.spec = spec;
  return r;
}

}  // namespace shelfstage::synth
