// The search on a purchase-augmented shelf: purchasable values as extra stock lines.
#include "shelfstage/synth/purchases.hpp"

#include <algorithm>
#include <fmt/format.h>
#include <map>
#include <set>

#include "detail.hpp"
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

namespace {

// What a design on a shelf with purchases needs to buy for every copy: each stock group it
// uses more pieces of than the shelf holds (all of them for a purchasable value).
std::vector<PurchaseLine> purchase_lines(const Candidate& c, const Shelf& shelf, int copies) {
  std::map<std::uint32_t, std::pair<int, std::vector<std::string>>> need;  // group -> pieces, roles
  for (const auto& rp : c.parts)
    for (std::size_t k = 0; k < rp.combo.count; ++k) {
      auto& [n, roles] = need[rp.combo.group[k]];
      n += copies;
      if (std::find(roles.begin(), roles.end(), rp.role) == roles.end()) roles.push_back(rp.role);
    }
  std::vector<PurchaseLine> out;
  for (const auto& [gi, nr] : need) {
    const StockGroup& g = shelf.groups()[gi];
    const int held = g.purchase ? 0 : g.available;
    if (nr.first <= held) continue;
    PurchaseLine l;
    l.kind = g.kind;
    l.value = g.value;
    l.tol = g.tol;
    l.rating = g.rating;
    l.dielectric = g.dielectric;
    l.qty = nr.first - held;
    l.held = held;
    l.roles = nr.second;
    out.push_back(std::move(l));
  }
  std::sort(out.begin(), out.end(), [](const PurchaseLine& a, const PurchaseLine& b) {
    return std::make_tuple(a.kind, a.value) < std::make_tuple(b.kind, b.value);
  });
  return out;
}

}  // namespace

std::optional<Purchase> smallest_purchase(const Spec& spec, const Inventory& inventory) {
  const std::vector<detail::Job> jobs = detail::make_jobs(spec, inventory);
  if (jobs.empty()) return std::nullopt;
  Shelf::Options o;
  o.combine = spec.combine;
  o.add_purchases = true;
  o.purchase_volts = purchase_volts(spec);
  const Shelf market(inventory.parts, o);
  // A piece to buy outweighs any difference in accuracy, so the search keeps the designs
  // that buy least; the ranking below settles pieces, then distinct values, then the score.
  Spec ms = spec;
  ms.purchase_points = 1000.0;
  ms.mc_samples = 0;
  // The drafts by what they buy (pieces, then lines; known before any corner pass), and
  // within each such group in rank order: the first that holds at its corners and finishes
  // is the one a sort of every assessed candidate by (pieces, lines, score) would give, but
  // only the groups up to it are assessed, and those only as far as their rank order goes.
  detail::RankedSearch search(ms, market, jobs);
  search.choose_all();
  using Key = std::pair<int, std::size_t>;  // pieces to buy, lines to buy
  std::vector<Key> key_of(search.chosen());
  std::set<Key> keys;
  for (std::size_t id = 0; id < key_of.size(); ++id) {
    int pieces = 0;
    const auto lines = purchase_lines(search.shell(id), market, spec.copies);
    for (const auto& l : lines) pieces += l.qty;
    key_of[id] = {pieces, lines.size()};
    keys.insert(key_of[id]);
  }
  for (const Key& key : keys) {
    const std::string name = fmt::format("buy {} pieces on {} lines", key.first, key.second);
    const auto member = [&](std::size_t id) { return key_of[id] == key; };
    for (std::size_t k = 0;; ++k) {
      const auto id = search.at_among(k, name, member);
      if (!id) break;
      Candidate c = search.candidate(*id);
      auto buy = purchase_lines(c, market, spec.copies);
      detail::finalize(c, market);
      // Finished as a listed design is (the full worst case and the exact solver's DC): a
      // purchase is suggested only for a design that holds.
      if (!detail::finish_stage(c, ms).empty()) continue;
      c.purchases = key.first;
      c.id = candidate_id(c, spec.copies);
      Purchase p;
      p.buy = std::move(buy);
      p.design = std::move(c);
      p.pieces = key.first;
      return p;
    }
  }
  return std::nullopt;
}

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
    c.yield.reset();                             // no Monte Carlo was run
  }
  r.spec = spec;
  return r;
}

}  // namespace shelfstage::synth
