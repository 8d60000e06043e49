// What the shelf can make: single parts and series or parallel combinations, with their
// worst-case bounds, ratings and recipes, sorted for nearest-value search.
#include "shelfstage/synth/shelf.hpp"

#include <algorithm>
#include <limits>
#include <cmath>
#include <fmt/format.h>
#include <map>
#include <atomic>
#include <cstring>
#include <memory>
#include <mutex>
#include <tuple>

#include "shelfstage/units/eseries.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::synth {

units::Tolerance default_tolerance(const store::Part& p) {
  if (p.tol) return *p.tol;
  if (p.kind == store::PartKind::resistor) return {0.05, 0.05};
  if (p.polarised()) return {0.20, 0.20};
  return {0.10, 0.10};
}

namespace {

bool same(double a, double b) { return std::abs(a - b) <= 1e-9 * std::max(std::abs(a), std::abs(b)); }

// Combination laws, monotonic in every part, so bounds combine from bounds.
double combine_values(store::PartKind kind, Join join, const double* v, int n) {
  const bool adds = (kind == store::PartKind::resistor) == (join == Join::series);
  if (n == 1) return v[0];
  if (adds) {
    double s = 0;
    for (int i = 0; i < n; ++i) s += v[i];
    return s;
  }
  double s = 0;
  for (int i = 0; i < n; ++i) s += 1.0 / v[i];
  return 1.0 / s;
}

// Rating of a combination. Resistors in series share the current: the first to reach its
// rating limits I^2; in parallel they share the voltage. Capacitors in parallel share the
// voltage (the lowest rating holds); in series the voltage divides inversely to C.
double combine_rating(store::PartKind kind, Join join, const double* v, const double* r, int n, double total) {
  for (int i = 0; i < n; ++i)
    if (r[i] <= 0) return 0.0;  // unknown
  if (n == 1) return r[0];
  double lim = 1e300;
  if (kind == store::PartKind::resistor) {
    if (join == Join::series) {
      for (int i = 0; i < n; ++i) lim = std::min(lim, r[i] / v[i]);  // I^2 max
      return lim * total;
    }
    for (int i = 0; i < n; ++i) lim = std::min(lim, r[i] * v[i]);  // V^2 max
    return lim / total;
  }
  if (join == Join::parallel) {
    for (int i = 0; i < n; ++i) lim = std::min(lim, r[i]);
    return lim;
  }
  // Series capacitors: part i holds V * total / C_i.
  for (int i = 0; i < n; ++i) lim = std::min(lim, r[i] * v[i] / total);
  return lim;
}

// Natural order of bin names: "A2" before "A10".
bool bin_less(const std::string& a, const std::string& b) {
  std::size_t i = 0, j = 0;
  while (i < a.size() && j < b.size()) {
    if (std::isdigit(static_cast<unsigned char>(a[i])) && std::isdigit(static_cast<unsigned char>(b[j]))) {
      std::size_t i2 = i, j2 = j;
      while (i2 < a.size() && std::isdigit(static_cast<unsigned char>(a[i2]))) ++i2;
      while (j2 < b.size() && std::isdigit(static_cast<unsigned char>(b[j2]))) ++j2;
      const auto na = std::stoull(a.substr(i, std::min<std::size_t>(i2 - i, 18)));
      const auto nb = std::stoull(b.substr(j, std::min<std::size_t>(j2 - j, 18)));
      if (na != nb) return na < nb;
      i = i2;
      j = j2;
    } else {
      if (a[i] != b[j]) return a[i] < b[j];
      ++i;
      ++j;
    }
  }
  return a.size() - i < b.size() - j;
}

// Serial numbers of shelves (Shelf::serial_).
std::atomic<std::uint64_t> next_shelf_serial{1};

// The n values of a sorted list nearest to target (by ratio), nearest first.
void nearest_in(const std::vector<double>& values, double target, std::size_t n, std::vector<double>& out) {
  const auto it = std::lower_bound(values.begin(), values.end(), target);
  auto hi = static_cast<std::ptrdiff_t>(it - values.begin());
  auto lo = hi - 1;
  const auto size = static_cast<std::ptrdiff_t>(values.size());
  for (std::size_t k = 0; k < n && (lo >= 0 || hi < size); ++k) {
    const double dl = lo >= 0 ? std::log(target / values[static_cast<std::size_t>(lo)]) : 1e300;
    const double dh = hi < size ? std::log(values[static_cast<std::size_t>(hi)] / target) : 1e300;
    out.push_back(dl <= dh ? values[static_cast<std::size_t>(lo--)] : values[static_cast<std::size_t>(hi++)]);
  }
}

// Stock lines grouped by what the part is (bins only matter for picking): one group per
// kind, value, tolerance, rating and dielectric (values equal to 12 digits), in bin order.
std::vector<StockGroup> group_stock(const std::vector<store::Part>& parts) {
  std::vector<const store::Part*> sorted;
  for (const auto& p : parts)
    if (store::is_passive(p.kind) && p.available() > 0 && p.value > 0) sorted.push_back(&p);
  std::sort(sorted.begin(), sorted.end(),
            [](const store::Part* a, const store::Part* b) { return bin_less(a->bin, b->bin); });
  std::vector<StockGroup> groups;
  std::unordered_map<std::string, std::size_t> index;
  for (const store::Part* p : sorted) {
    const units::Tolerance tol = default_tolerance(*p);
    const double rating = p->kind == store::PartKind::resistor ? p->power_w.value_or(0.0) : p->volts.value_or(0.0);
    const std::string key = fmt::format("{}|{:.12g}|{:.12g}|{:.12g}|{:.12g}|{}", static_cast<int>(p->kind), p->value,
                                        tol.minus, tol.plus, rating, p->dielectric);
    auto [slot, added] = index.emplace(key, groups.size());
    if (added) {
      StockGroup g;
      g.kind = p->kind;
      g.value = p->value;
      g.tol = tol;
      g.rating = rating;
      g.dielectric = p->dielectric;
      g.polarised = p->polarised();
      groups.push_back(g);
    }
    const auto it = groups.begin() + static_cast<std::ptrdiff_t>(slot->second);
    it->available += p->available();
    it->lines.push_back(p->id);
    it->line_available.push_back(p->available());
  }
  return groups;
}

// A shelf with purchases: more of what is stocked can be bought, and so can the values one
// could order: E24 resistors (5 %, 0.25 W) over 10 ohm..10M, E6 film capacitors 1n..1u
// (63 V) and E6 electrolytics 1u..1000u at the purchase rating.
void add_purchasable(std::vector<StockGroup>& groups, double purchase_volts) {
  for (auto& g : groups) g.buyable = true;
  auto add = [&](store::PartKind kind, double value, units::Tolerance tol, double rating, const char* diel, bool pol) {
    StockGroup g;
    g.kind = kind;
    g.value = value;
    g.tol = tol;
    g.rating = rating;
    g.dielectric = diel;
    g.polarised = pol;
    g.available = 1000000;
    g.purchase = true;
    g.buyable = true;
    groups.push_back(g);
  };
  for (double dec = 10; dec <= 1e6 * 1.001; dec *= 10)
    for (double m : units::eseries(24)) add(store::PartKind::resistor, m * dec, {0.05, 0.05}, 0.25, "", false);
  add(store::PartKind::resistor, 10e6, {0.05, 0.05}, 0.25, "", false);
  for (double dec = 1e-9; dec <= 1e-7 * 1.001; dec *= 10)
    for (double m : units::eseries(6)) add(store::PartKind::capacitor, m * dec, {0.05, 0.05}, 63, "film", false);
  for (double dec = 1e-6; dec <= 1e-4 * 1.001; dec *= 10)
    for (double m : units::eseries(6))
      add(store::PartKind::capacitor, m * dec, {0.20, 0.20}, purchase_volts, "electrolytic", true);
  add(store::PartKind::capacitor, 1e-3, {0.20, 0.20}, purchase_volts, "electrolytic", true);
}

}  // namespace

Shelf::Shelf(const std::vector<store::Part>& parts, Options options) {
  groups_ = group_stock(parts);
  market_ = options.add_purchases;
  if (options.add_purchases) add_purchasable(groups_, options.purchase_volts);
  serial_ = next_shelf_serial++;
  answers_ = std::make_unique<Answers>();
  combine_ = options.combine;
  build(c_, store::PartKind::capacitor, 1, options.combine);
  build(r1_, store::PartKind::resistor, 1, 1);
  if (options.combine >= 3) build(r3_, store::PartKind::resistor, 3, 3);
  // The value indexes. Singles are sorted stocked-first and tightest-first within a value:
  // the first of each value is its best group.
  for (const Combo& c : r1_) {
    if (r_index_.value.empty() || !same(r_index_.value.back(), c.nominal)) {
      r_index_.value.push_back(c.nominal);
      r_index_.group.push_back(c.group[0]);
    }
    if (c.purchase) continue;
    if (r_singles_.empty() || !same(r_singles_.back(), c.nominal)) r_singles_.push_back(c.nominal);
    if (market_ && (r_stock_index_.value.empty() || !same(r_stock_index_.value.back(), c.nominal))) {
      r_stock_index_.value.push_back(c.nominal);
      r_stock_index_.group.push_back(c.group[0]);
    }
  }
  for (const Combo& c : r3_) {
    if (r3_values_.empty() || !same(r3_values_.back(), c.nominal)) r3_values_.push_back(c.nominal);
    if (market_ && !c.purchase && (r3_stock_values_.empty() || !same(r3_stock_values_.back(), c.nominal)))
      r3_stock_values_.push_back(c.nominal);
  }
}

Combo Shelf::make_combo(store::PartKind kind, Join join, std::initializer_list<std::uint32_t> gs) const {
  Combo c;
  c.join = join;
  c.count = static_cast<std::uint8_t>(gs.size());
  double nom[3] = {}, lo[3] = {}, hi[3] = {}, rat[3] = {};
  int n = 0;
  for (auto g : gs) {
    const StockGroup& s = groups_[g];
    c.group[static_cast<std::size_t>(n)] = g;
    nom[n] = s.value;
    lo[n] = s.tol.low(s.value);
    hi[n] = s.tol.high(s.value);
    rat[n] = s.rating;
    c.polarised = c.polarised || s.polarised;
    c.purchase = c.purchase || s.purchase;
    ++n;
  }
  c.nominal = combine_values(kind, join, nom, n);
  c.lo = combine_values(kind, join, lo, n);
  c.hi = combine_values(kind, join, hi, n);
  c.rating = combine_rating(kind, join, nom, rat, n, c.nominal);
  return c;
}

bool Shelf::pair_ok(store::PartKind kind, Join join, std::uint32_t a, std::uint32_t b) const {
  const StockGroup &ga = groups_[a], &gb = groups_[b];
  const StockGroup& small = ga.value <= gb.value ? ga : gb;
  const StockGroup& large = ga.value <= gb.value ? gb : ga;
  if (large.value > 100.0 * small.value) return false;  // moves by under 1 %: no tolerance is that tight
  if (a == b && ga.available < 2) return false;
  if (join == Join::series && kind == store::PartKind::capacitor && (ga.polarised || gb.polarised)) return false;
  // A combination must buy accuracy (NOTES 1): in series the smallest adds least, set by the
  // largest; in parallel the largest takes least, the smallest sets it.
  const bool adds = (kind == store::PartKind::resistor) == (join == Join::series);
  const StockGroup& main = adds ? large : small;
  const double widest = std::max(main.tol.minus, main.tol.plus);
  return adds ? small.value / large.value > widest : small.value / (small.value + large.value) > widest;
}

namespace {
/// Singles scanned per range when pairs are found on the fly (NOTES 3 in shelf.hpp).
constexpr std::size_t kPairScan = 64;

// Calls visit(i, ideal partner, join) for the singles v[i] that can pair toward target: in
// series a in [target / 101, target), in parallel a in (target, 101 target] (a pair within a
// factor of 100). At most `limit` of each range, spread evenly over it (0: every one).
template <class Visit>
void pair_anchors(const std::vector<double>& v, double target, std::size_t limit, Visit&& visit) {
  auto scan = [&](std::size_t first, std::size_t last, Join join) {
    if (last <= first) return;
    const std::size_t stride = limit == 0 ? 1 : (last - first + limit - 1) / limit;
    for (std::size_t i = first; i < last; i += stride)
      visit(i, join == Join::series ? target - v[i] : v[i] * target / (v[i] - target), join);
  };
  const auto below = [&](double x) {
    return static_cast<std::size_t>(std::lower_bound(v.begin(), v.end(), x) - v.begin());
  };
  const auto above = [&](double x) {
    return static_cast<std::size_t>(std::upper_bound(v.begin(), v.end(), x) - v.begin());
  };
  scan(below(target / 101.0), below(target), Join::series);
  scan(above(target), above(101.0 * target), Join::parallel);
}
}  // namespace

template <class F, class B>
void Shelf::pairs_near(const ValueIndex& idx, double target, std::size_t n, F&& f, B&& bound) const {
  const auto& v = idx.value;
  const auto size = static_cast<std::ptrdiff_t>(v.size());
  // The anchors come in order of value within each join, and the ideal partner falls as the
  // anchor grows (target - a in series, a target / (a - target) in parallel): each search
  // for it starts from the last one found, galloping down to bracket it.
  std::ptrdiff_t last_j0 = size;
  double last_ideal = std::numeric_limits<double>::infinity();
  Join last_join = Join::single;
  auto first_at_least = [&](double ideal, Join join) {
    // Every j from hi on has v[j] >= ideal: from the last search's answer when its ideal was
    // at least this one.
    std::ptrdiff_t hi = size;
    if (join == last_join && ideal <= last_ideal) hi = last_j0;
    std::ptrdiff_t lo = 0;
    for (std::ptrdiff_t step = 1;; step *= 2) {
      lo = hi - step;
      if (lo <= 0) {
        lo = 0;
        break;
      }
      if (v[static_cast<std::size_t>(lo)] < ideal) break;  // the answer lies in (lo, hi]
      hi = lo;
    }
    const auto j0 = static_cast<std::ptrdiff_t>(std::lower_bound(v.begin() + lo, v.begin() + hi, ideal) - v.begin());
    last_j0 = j0;
    last_ideal = ideal;
    last_join = join;
    return j0;
  };
  auto partners = [&](std::size_t i, double ideal, Join join) {
    const auto j0 = first_at_least(ideal, join);
    const auto from = std::max<std::ptrdiff_t>(0, j0 - static_cast<std::ptrdiff_t>(n));
    const auto to = std::min(size, j0 + static_cast<std::ptrdiff_t>(n));
    // One partner: false once the pair is as far from target as bound() (every later one on
    // this side is further: the pair grows with its partner in series and in parallel alike).
    auto one = [&](std::ptrdiff_t j) {
      const auto ju = static_cast<std::size_t>(j);
      const double value = join == Join::series ? v[i] + v[ju] : v[i] * v[ju] / (v[i] + v[ju]);
      // (The bound allows for rounding: the pair's value is monotonic in its partner only to
      // the last bit.)
      if ((value > target ? value / target : target / value) > bound()) return false;
      if (!pair_ok(store::PartKind::resistor, join, idx.group[i], idx.group[ju])) return true;
      // The smaller value first, as the tables list a pair's pieces.
      const auto [ga, gb] =
          v[i] <= v[ju] ? std::pair(idx.group[i], idx.group[ju]) : std::pair(idx.group[ju], idx.group[i]);
      f(value, ga, gb, join);
      return true;
    };
    for (auto j = j0; j < to && one(j); ++j) {
    }
    for (auto j = j0 - 1; j >= from && one(j); --j) {
    }
  };
  // A stock dense enough to hold more than kPairScan singles in a range has pairs within a
  // fraction of its spacing of the target from those already (NOTES 3).
  pair_anchors(v, target, kPairScan, partners);
}

void Shelf::nearest_from(const ValueIndex& idx, const std::vector<double>& triples, double target, std::size_t n,
                         std::vector<double>& out) const {
  struct Found {
    double distance;  // as a ratio >= 1
    double value;
    std::uint32_t a = 0, b = 0;  // a pair's groups
    Join join = Join::single;
    bool operator<(const Found& o) const { return distance < o.distance; }
  };
  // Every offer as near as the n-th nearest distinct value, with every recipe of the values
  // kept: `best` holds the distances of the n nearest distinct values so far (a heap, the
  // furthest on top), and an offer further than those is not taken; those taken before the
  // bound fell below them leave at the end. (A value may come from a dozen recipes: counted
  // by recipe, the nearest few offers could all be one value. A value's recipes lie within
  // rounding of one distance: the bound allows for it. Kept per thread: a miss of
  // nearest()'s memo comes here.)
  constexpr double kRounding = 1e-9;
  if (n == 0) return;
  thread_local std::vector<Found> found;
  thread_local std::vector<double> best;
  found.clear();
  best.clear();
  auto bound = [&] {
    return best.size() < n ? std::numeric_limits<double>::infinity() : best.front() * (1 + kRounding);
  };
  auto consider = [&](double value, std::uint32_t a, std::uint32_t b, Join join) {
    const double distance = value > target ? value / target : target / value;
    if (distance > bound()) return;
    const bool known = std::any_of(found.begin(), found.end(), [&](const Found& f) { return same(f.value, value); });
    found.push_back({distance, value, a, b, join});
    if (known) return;
    best.push_back(distance);
    std::push_heap(best.begin(), best.end());
    if (best.size() > n) {
      std::pop_heap(best.begin(), best.end());
      best.pop_back();
    }
  };
  thread_local std::vector<double> near;
  near.clear();
  nearest_in(idx.value, target, n, near);
  nearest_in(triples, target, n, near);
  for (double value : near) consider(value, 0, 0, Join::single);
  if (combine_ >= 2) pairs_near(idx, target, n, consider, bound);
  const double furthest = bound();
  std::erase_if(found, [&](const Found& f) { return f.distance > furthest; });
  if (found.empty()) return;
  // Where two recipes make one value, the better first (as resistors() sorts them: stocked,
  // fewest pieces, tightest), so that it is the one remembered.
  thread_local std::vector<std::pair<Found, Combo>> window;
  window.clear();
  for (const Found& f : found) {
    if (f.join != Join::single) {
      window.emplace_back(f, make_combo(store::PartKind::resistor, f.join, {f.a, f.b}));
      continue;
    }
    // A single or a triple: the first of its value in its table.
    auto first_of = [&](const std::vector<Combo>& table) -> const Combo* {
      const auto it = std::lower_bound(table.begin(), table.end(), f.value * (1 - 1e-9),
                                       [](const Combo& c, double t) { return c.nominal < t; });
      return it != table.end() && same(it->nominal, f.value) ? &*it : nullptr;
    };
    const Combo* c = first_of(r1_);
    if (!c) c = first_of(r3_);
    window.emplace_back(f, c ? *c : Combo{});
  }
  // (Then by value and recipe: recipes that tie on all of that come in the same order whatever
  // order the scan offered them in.)
  std::sort(window.begin(), window.end(), [](const auto& x, const auto& y) {
    if (x.first.distance != y.first.distance) return x.first.distance < y.first.distance;
    return std::make_tuple(x.second.purchase, x.second.count, x.second.hi - x.second.lo, x.first.value, x.first.a,
                           x.first.b, x.first.join) < std::make_tuple(y.second.purchase, y.second.count,
                                                                      y.second.hi - y.second.lo, y.first.value,
                                                                      y.first.a, y.first.b, y.first.join);
  });
  std::size_t taken = 0;
  double last = -1;
  for (const auto& [f, combo] : window) {
    if (taken >= n) break;
    if (same(f.value, last)) continue;
    out.push_back(f.value);
    last = f.value;
    ++taken;
    // A pair's recipe, remembered for resistor().
    if (f.join != Join::single) remember(f.value, combo);
  }
}

void Shelf::remember(double nominal, const Combo& c) const {
  std::uint64_t key = 0;
  std::memcpy(&key, &nominal, sizeof key);
  {
    std::shared_lock lock(recipes_mutex_);
    if (recipes_.count(key)) return;
  }
  std::unique_lock lock(recipes_mutex_);
  recipes_.emplace(key, c);
}

std::vector<Combo> Shelf::resistors() const {
  std::vector<Combo> out;
  build(out, store::PartKind::resistor, 1, combine_);
  return out;
}

void Shelf::build(std::vector<Combo>& out, store::PartKind kind, int min_count, int max_count) const {
  std::vector<std::uint32_t> idx;
  for (std::uint32_t i = 0; i < groups_.size(); ++i)
    if (groups_[i].kind == kind) idx.push_back(i);
  std::sort(idx.begin(), idx.end(), [&](auto a, auto b) { return groups_[a].value < groups_[b].value; });
  // Pieces needed of one group within a combination must be on the shelf.
  auto enough = [&](std::initializer_list<std::uint32_t> gs) {
    for (auto g : gs) {
      int need = 0;
      for (auto h : gs) need += (h == g);
      if (groups_[g].available < need) return false;
    }
    return true;
  };
  if (min_count <= 1)
    for (auto i : idx) out.push_back(make_combo(kind, Join::single, {i}));
  if (min_count <= 2 && max_count >= 2) {
    for (std::size_t a = 0; a < idx.size(); ++a)
      for (std::size_t b = a; b < idx.size(); ++b) {
        if (groups_[idx[b]].value > 100.0 * groups_[idx[a]].value) break;
        for (Join join : {Join::series, Join::parallel})
          if (pair_ok(kind, join, idx[a], idx[b])) out.push_back(make_combo(kind, join, {idx[a], idx[b]}));
      }
  }
  auto widest = [&](std::uint32_t g) { return std::max(groups_[g].tol.minus, groups_[g].tol.plus); };
  auto worth = [&](Join join, std::initializer_list<std::uint32_t> gs) {
    // gs in ascending value: in series the smallest adds least to the rest; in parallel the
    // largest takes least from the rest.
    const std::vector<std::uint32_t> v(gs);
    const bool adds = (kind == store::PartKind::resistor) == (join == Join::series);
    double rest = 0, least = 0;
    if (adds) {
      least = groups_[v.front()].value;
      for (std::size_t i = 1; i < v.size(); ++i) rest += groups_[v[i]].value;
      return least / rest > widest(v.back());
    }
    double inv = 0;
    for (std::size_t i = 0; i + 1 < v.size(); ++i) inv += 1.0 / groups_[v[i]].value;
    rest = 1.0 / inv;
    least = groups_[v.back()].value;
    return rest / (rest + least) > widest(v.front());
  };
  if (max_count >= 3) {
    // Triples of one join, among the 120 best-stocked values of the kind (a bound on the
    // n^3 growth; documented in the README).
    std::vector<std::uint32_t> top = idx;
    if (top.size() > 120) {
      std::sort(top.begin(), top.end(), [&](auto a, auto b) { return groups_[a].available > groups_[b].available; });
      top.resize(120);
      std::sort(top.begin(), top.end(), [&](auto a, auto b) { return groups_[a].value < groups_[b].value; });
    }
    for (std::size_t a = 0; a < top.size(); ++a)
      for (std::size_t b = a; b < top.size(); ++b) {
        if (groups_[top[b]].value > 100.0 * groups_[top[a]].value) break;
        for (std::size_t c = b; c < top.size(); ++c) {
          if (groups_[top[c]].value > 100.0 * groups_[top[a]].value) break;
          if (!enough({top[a], top[b], top[c]})) continue;
          const bool pol = groups_[top[a]].polarised || groups_[top[b]].polarised || groups_[top[c]].polarised;
          if ((kind == store::PartKind::resistor || !pol) && worth(Join::series, {top[a], top[b], top[c]}))
            out.push_back(make_combo(kind, Join::series, {top[a], top[b], top[c]}));
          if (worth(Join::parallel, {top[a], top[b], top[c]}))
            out.push_back(make_combo(kind, Join::parallel, {top[a], top[b], top[c]}));
        }
      }
  }
  // Sort small keys, then gather: moving 16-byte keys beats moving the combos themselves.
  std::vector<std::pair<double, std::uint32_t>> keys(out.size());
  for (std::uint32_t i = 0; i < out.size(); ++i) keys[i] = {out[i].nominal, i};
  std::sort(keys.begin(), keys.end(), [&](const auto& x, const auto& y) {
    if (x.first != y.first) return x.first < y.first;
    const Combo &a = out[x.second], &b = out[y.second];
    return std::make_tuple(a.purchase, a.count, a.hi - a.lo) < std::make_tuple(b.purchase, b.count, b.hi - b.lo);
  });
  std::vector<Combo> sorted;
  sorted.reserve(out.size());
  for (const auto& k : keys) sorted.push_back(out[k.second]);
  out = std::move(sorted);
}

namespace {

// The answers nearest() and spread() have given, by question: the design equations ask for
// the same targets again and again (the same bias point across proposals, the same leg
// totals across splits), from every thread. Sharded, each shard behind its own lock (a
// lookup holds it for a hash probe and a copy of a few values); a shard keeps at most
// kAnswersPerShard answers, then answers the rest afresh. An answer depends on the question
// alone, so which thread put it there does not matter.
constexpr std::size_t kAnswerShards = 64, kAnswersPerShard = 4096;
struct Question {
  std::uint64_t a = 0, b = 0;  // nearest(): the target's bits; spread(): both ends' bits
  std::uint64_t n = 0;         // how many; spread()'s with its top bit set
  bool operator==(const Question&) const = default;
};
struct QuestionHash {
  std::size_t operator()(const Question& q) const {
    std::uint64_t h = (q.a ^ (q.a >> 29)) * 0x9E3779B97F4A7C15ULL;
    h = (h ^ q.b ^ (q.b >> 31)) * 0xC2B2AE3D27D4EB4FULL;
    h ^= q.n * 0xFF51AFD7ED558CCDULL;
    return static_cast<std::size_t>(h ^ (h >> 32));
  }
};

}  // namespace

struct Shelf::Answers {
  struct Shard {
    std::mutex mutex;
    std::unordered_map<Question, std::vector<double>, QuestionHash> answers;
  };
  std::array<Shard, kAnswerShards> shards;
  Shard& of(const Question& q) { return shards[QuestionHash{}(q) % kAnswerShards]; }
  /// Appends the answer to out; false when there is none yet.
  bool find(const Question& q, std::vector<double>& out) {
    Shard& s = of(q);
    std::lock_guard lock(s.mutex);
    const auto it = s.answers.find(q);
    if (it == s.answers.end()) return false;
    out.insert(out.end(), it->second.begin(), it->second.end());
    return true;
  }
  void keep(const Question& q, std::span<const double> values) {
    Shard& s = of(q);
    std::lock_guard lock(s.mutex);
    if (s.answers.size() < kAnswersPerShard) s.answers.try_emplace(q, values.begin(), values.end());
  }
};

Shelf::~Shelf() = default;

namespace {

// A value offered twice (the nearest single part is often among the nearest values already;
// on a shelf with purchases the stock's nearest are often the market's) is kept once, where
// it first came: every design step would only propose the same values again. Only what this
// call appended, from `start`, and only values equal to the bit (the proposals' dedup is by
// bits: the search drafts exactly what it did before).
void drop_repeats(std::vector<double>& out, std::size_t start) {
  auto end = out.begin() + static_cast<std::ptrdiff_t>(start);
  for (auto it = end; it != out.end(); ++it)
    if (std::find(out.begin() + static_cast<std::ptrdiff_t>(start), end, *it) == end) *end++ = *it;
  out.erase(end, out.end());
}

}  // namespace

void Shelf::nearest(double target, std::size_t n, std::vector<double>& out) const {
  if (r_index_.value.empty() || !(target > 0)) return;
  std::uint64_t bits = 0;
  std::memcpy(&bits, &target, sizeof bits);
  const Question q{bits, 0, n};
  if (answers_->find(q, out)) return;
  const std::size_t start = out.size();
  nearest_from(r_index_, r3_values_, target, n, out);
  // On a shelf with purchases, the nearest values that buy nothing too.
  if (market_) nearest_from(r_stock_index_, r3_stock_values_, target, n, out);
  // Always offer the nearest single parts on either side as well: one piece beats two
  // when the difference hides in the tolerance.
  const auto s1 = std::lower_bound(r_singles_.begin(), r_singles_.end(), target);
  if (s1 != r_singles_.end()) out.push_back(*s1);
  if (s1 != r_singles_.begin()) out.push_back(*(s1 - 1));
  drop_repeats(out, start);
  answers_->keep(q, std::span<const double>(out).subspan(start));
}

void Shelf::spread(double lo, double hi, std::size_t max_n, std::vector<double>& out) const {
  if (r_index_.value.empty() || !(lo > 0) || !(hi >= lo) || max_n == 0) return;
  if (max_n == 1) {
    nearest(std::sqrt(lo * hi), 1, out);
    return;
  }
  std::uint64_t lo_bits = 0, hi_bits = 0;
  std::memcpy(&lo_bits, &lo, sizeof lo_bits);
  std::memcpy(&hi_bits, &hi, sizeof hi_bits);
  const Question q{lo_bits, hi_bits, max_n | (1ULL << 63)};
  if (answers_->find(q, out)) return;
  const std::size_t start = out.size();
  auto spread_from = [&](const ValueIndex& idx, const std::vector<double>& triples) {
    double last = -1;
    for (std::size_t k = 0; k < max_n; ++k) {
      const double target = lo * std::pow(hi / lo, static_cast<double>(k) / static_cast<double>(max_n - 1));
      std::vector<double> one;
      nearest_from(idx, triples, target, 1, one);
      if (one.empty() || one[0] < lo * 0.999 || one[0] > hi * 1.001 || same(one[0], last)) continue;
      out.push_back(one[0]);
      last = one[0];
    }
  };
  spread_from(r_index_, r3_values_);
  if (market_) spread_from(r_stock_index_, r3_stock_values_);
  drop_repeats(out, start);
  answers_->keep(q, std::span<const double>(out).subspan(start));
}

std::optional<Combo> Shelf::find_recipe(double nominal) const {
  // Pairs: fewest pieces first, then the tightest; the best group of each value (NOTES 3).
  std::optional<Combo> best;
  auto offer = [&](const Combo& c) {
    if (!same(c.nominal, nominal)) return;
    if (!best || std::make_tuple(c.purchase, c.count, c.hi - c.lo) <
                     std::make_tuple(best->purchase, best->count, best->hi - best->lo))
      best = c;
  };
  const auto& v = r_index_.value;
  if (combine_ >= 2) {
    auto partner = [&](std::size_t i, double ideal, Join join) {
      const auto j = std::lower_bound(v.begin(), v.end(), ideal * (1 - 1e-9));
      for (auto k = j; k != v.end() && *k <= ideal * (1 + 1e-9); ++k) {
        const auto ku = static_cast<std::size_t>(k - v.begin());
        if (pair_ok(store::PartKind::resistor, join, r_index_.group[i], r_index_.group[ku]))
          offer(v[i] <= v[ku] ? make_combo(store::PartKind::resistor, join, {r_index_.group[i], r_index_.group[ku]})
                              : make_combo(store::PartKind::resistor, join, {r_index_.group[ku], r_index_.group[i]}));
      }
    };
    pair_anchors(v, nominal, 0, partner);
  }
  if (best) return best;
  const auto it = std::lower_bound(r3_.begin(), r3_.end(), nominal * (1 - 1e-9),
                                   [](const Combo& c, double t) { return c.nominal < t; });
  if (it != r3_.end() && same(it->nominal, nominal)) return *it;
  return std::nullopt;
}

namespace {
// resistor()'s answers per thread, in front of the shared map and its lock: the drafts ask
// for the same values over and over. Direct-mapped, keyed by the shelf's serial number and
// the value's bits.
struct ResistorMemo {
  struct Entry {
    std::uint64_t shelf = 0, key = 0;
    const Combo* combo = nullptr;
  };
  std::array<Entry, 2048> entries;
};
thread_local std::unique_ptr<ResistorMemo> resistor_memo;
}  // namespace

const Combo* Shelf::resistor(double nominal) const {
  const auto it = std::lower_bound(r1_.begin(), r1_.end(), nominal * (1 - 1e-9),
                                   [](const Combo& c, double t) { return c.nominal < t; });
  if (it != r1_.end() && same(it->nominal, nominal)) return &*it;
  std::uint64_t key = 0;
  std::memcpy(&key, &nominal, sizeof key);
  if (!resistor_memo) resistor_memo = std::make_unique<ResistorMemo>();
  auto& e = resistor_memo->entries[(key ^ (key >> 29) ^ serial_) % resistor_memo->entries.size()];
  if (e.shelf == serial_ && e.key == key) return e.combo;
  e.shelf = serial_;
  e.key = key;
  e.combo = recipe_for(key, nominal);
  return e.combo;
}

const Combo* Shelf::recipe_for(std::uint64_t key, double nominal) const {
  {
    std::shared_lock lock(recipes_mutex_);
    const auto hit = recipes_.find(key);
    if (hit != recipes_.end()) return hit->second ? &*hit->second : nullptr;
  }
  std::optional<Combo> found = find_recipe(nominal);
  std::unique_lock lock(recipes_mutex_);
  const auto& slot = recipes_.emplace(key, std::move(found)).first->second;  // nodes never move
  return slot ? &*slot : nullptr;
}

const Combo* Shelf::capacitor_at_least(double min_f, double dc_v, bool allow_polarised) const {
  auto ok = [&](const Combo& c, bool purchases) {
    if (c.lo < min_f) return false;
    if (c.purchase && !purchases) return false;
    if (c.polarised && !allow_polarised) return false;
    if (c.rating > 0 && c.rating < 1.25 * dc_v) return false;
    return true;
  };
  auto find = [&](bool purchases) {
    const Combo* best = nullptr;
    auto it = std::lower_bound(c_.begin(), c_.end(), min_f, [](const Combo& c, double t) { return c.nominal < t; });
    for (; it != c_.end(); ++it) {
      if (!ok(*it, purchases)) continue;
      if (!best) {
        best = &*it;
        continue;
      }
      if (it->nominal > 3.0 * best->nominal) break;
      // Within a factor of three, fewer pieces and a stated rating win.
      if (std::make_tuple(it->purchase, it->count, it->rating <= 0) <
          std::make_tuple(best->purchase, best->count, best->rating <= 0))
        best = &*it;
    }
    return best;
  };
  // On a shelf with purchases, a stocked capacitor of any larger value before one to buy.
  if (market_)
    if (const Combo* stocked = find(false)) return stocked;
  return find(true);
}

std::string compact_value(double value, bool resistor) {
  // The IEC 60062 code as bench notes write it: 2k2, 10k, 150, 4R7, 100n, 2u2.
  std::string s = units::format_code(value, resistor ? units::Unit::ohm : units::Unit::farad);
  if (!resistor) return s;
  for (char& ch : s)
    if (ch == 'K') ch = 'k';
  if (s.size() > 2 && s.back() == 'R') s.pop_back();  // "150R" -> "150"; "1R0" and "R47" stay
  return s;
}

std::string Shelf::recipe(const Combo& c) const {
  const bool resistor = groups_[c.group[0]].kind == store::PartKind::resistor;
  std::string s;
  for (std::size_t i = 0; i < c.count; ++i) {
    if (i) s += c.join == Join::series ? "+" : "||";
    s += compact_value(groups_[c.group[i]].value, resistor);
  }
  return s;
}

}  // namespace shelfstage::synth
