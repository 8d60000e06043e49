// What the shelf can make: single parts and series or parallel combinations, with their
// worst-case bounds, ratings and recipes, sorted for nearest-value search.
#include "shelfstage/synth/shelf.hpp"

#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <map>
#include <thread>
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

}  // namespace

Shelf::Shelf(const std::vector<store::Part>& parts, Options options) {
  // Group stock lines by what the part is; bins only matter for picking.
  std::vector<const store::Part*> sorted;
  for (const auto& p : parts)
    if (store::is_passive(p.kind) && p.available() > 0 && p.value > 0) sorted.push_back(&p);
  std::sort(sorted.begin(), sorted.end(), [](const store::Part* a, const store::Part* b) { return bin_less(a->bin, b->bin); });
  for (const store::Part* p : sorted) {
    const units::Tolerance tol = default_tolerance(*p);
    const double rating = p->kind == store::PartKind::resistor ? p->power_w.value_or(0.0) : p->volts.value_or(0.0);
    auto it = std::find_if(groups_.begin(), groups_.end(), [&](const StockGroup& g) {
      return g.kind == p->kind && same(g.value, p->value) && g.tol == tol && same(g.rating, rating) &&
             g.dielectric == p->dielectric;
    });
    if (it == groups_.end()) {
      StockGroup g;
      g.kind = p->kind;
      g.value = p->value;
      g.tol = tol;
      g.rating = rating;
      g.dielectric = p->dielectric;
      g.polarised = p->polarised();
      groups_.push_back(g);
      it = groups_.end() - 1;
    }
    it->available += p->available();
    it->lines.push_back(p->id);
    it->line_available.push_back(p->available());
  }
  market_ = options.add_purchases;
  if (options.add_purchases) {
    for (auto& g : groups_) g.buyable = true;  // more of what is stocked can be bought
    // Values one could order: E24 resistors (5 %, 0.25 W) over 10 ohm..10M, E6 film
    // capacitors 1n..1u (63 V) and E6 electrolytics 1u..1000u at the purchase rating.
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
      groups_.push_back(g);
    };
    for (double dec = 10; dec <= 1e6 * 1.001; dec *= 10)
      for (double m : units::eseries(24)) add(store::PartKind::resistor, m * dec, {0.05, 0.05}, 0.25, "", false);
    add(store::PartKind::resistor, 10e6, {0.05, 0.05}, 0.25, "", false);
    for (double dec = 1e-9; dec <= 1e-7 * 1.001; dec *= 10)
      for (double m : units::eseries(6)) add(store::PartKind::capacitor, m * dec, {0.05, 0.05}, 63, "film", false);
    for (double dec = 1e-6; dec <= 1e-4 * 1.001; dec *= 10)
      for (double m : units::eseries(6))
        add(store::PartKind::capacitor, m * dec, {0.20, 0.20}, options.purchase_volts, "electrolytic", true);
    add(store::PartKind::capacitor, 1e-3, {0.20, 0.20}, options.purchase_volts, "electrolytic", true);
  }
  // Resistors and capacitors are independent: build them on two threads.
  std::thread caps([&] { build(c_, store::PartKind::capacitor, options.combine); });
  build(r_, store::PartKind::resistor, options.combine);
  caps.join();
  for (const Combo& c : r_) {
    if (r_values_.empty() || !same(r_values_.back(), c.nominal)) r_values_.push_back(c.nominal);
    if (c.count == 1 && !c.purchase && (r_singles_.empty() || !same(r_singles_.back(), c.nominal)))
      r_singles_.push_back(c.nominal);
    if (market_ && !c.purchase && (r_stocked_.empty() || !same(r_stocked_.back(), c.nominal)))
      r_stocked_.push_back(c.nominal);
  }
}

void Shelf::build(std::vector<Combo>& out, store::PartKind kind, int combine) {
  std::vector<std::uint32_t> idx;
  for (std::uint32_t i = 0; i < groups_.size(); ++i)
    if (groups_[i].kind == kind) idx.push_back(i);
  std::sort(idx.begin(), idx.end(), [&](auto a, auto b) { return groups_[a].value < groups_[b].value; });
  auto make = [&](Join join, std::initializer_list<std::uint32_t> gs) {
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
    out.push_back(c);
  };
  // Pieces needed of one group within a combination must be on the shelf.
  auto enough = [&](std::initializer_list<std::uint32_t> gs) {
    for (auto g : gs) {
      int need = 0;
      for (auto h : gs) need += (h == g);
      if (groups_[g].available < need) return false;
    }
    return true;
  };
  for (auto i : idx) make(Join::single, {i});
  // A combination must buy accuracy (NOTES in shelf.hpp): the piece that moves the value
  // least must move it by more than the tolerance of the piece that sets it.
  auto widest = [&](std::uint32_t g) { return std::max(groups_[g].tol.minus, groups_[g].tol.plus); };
  auto worth = [&](Join join, std::initializer_list<std::uint32_t> gs) {
    // gs in ascending value: in series the smallest adds least to the rest; in parallel the
    // largest takes least from the rest.
    const std::vector<std::uint32_t> v(gs);
    const bool adds = (kind == store::PartKind::resistor) == (join == Join::series);
    double rest = 0, least = 0;
    std::uint32_t main = v.back();
    if (adds) {
      least = groups_[v.front()].value;
      for (std::size_t i = 1; i < v.size(); ++i) rest += groups_[v[i]].value;
      return least / rest > widest(main);
    }
    main = v.front();
    double inv = 0;
    for (std::size_t i = 0; i + 1 < v.size(); ++i) inv += 1.0 / groups_[v[i]].value;
    rest = 1.0 / inv;
    least = groups_[v.back()].value;
    return rest / (rest + least) > widest(main);
  };
  if (combine >= 2) {
    for (std::size_t a = 0; a < idx.size(); ++a) {
      for (std::size_t b = a; b < idx.size(); ++b) {
        const StockGroup &ga = groups_[idx[a]], &gb = groups_[idx[b]];
        if (gb.value > 100.0 * ga.value) break;  // moves by under 1 %: no tolerance is that tight
        if (!enough({idx[a], idx[b]})) continue;
        const bool series_ok = kind == store::PartKind::resistor || (!ga.polarised && !gb.polarised);
        if (series_ok && worth(Join::series, {idx[a], idx[b]})) make(Join::series, {idx[a], idx[b]});
        if (worth(Join::parallel, {idx[a], idx[b]})) make(Join::parallel, {idx[a], idx[b]});
      }
    }
  }
  if (combine >= 3) {
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
            make(Join::series, {top[a], top[b], top[c]});
          if (worth(Join::parallel, {top[a], top[b], top[c]})) make(Join::parallel, {top[a], top[b], top[c]});
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

}  // namespace

void Shelf::nearest(double target, std::size_t n, std::vector<double>& out) const {
  if (r_values_.empty() || !(target > 0)) return;
  nearest_in(r_values_, target, n, out);
  // On a shelf with purchases, the nearest values that buy nothing too.
  if (market_) nearest_in(r_stocked_, target, n, out);
  // Always offer the nearest single parts on either side as well: one piece beats two
  // when the difference hides in the tolerance.
  const auto s1 = std::lower_bound(r_singles_.begin(), r_singles_.end(), target);
  if (s1 != r_singles_.end()) out.push_back(*s1);
  if (s1 != r_singles_.begin()) out.push_back(*(s1 - 1));
}

namespace {

// Up to max_n values of a sorted list spaced evenly (by ratio) over [lo, hi].
void spread_in(const std::vector<double>& values, double lo, double hi, std::size_t max_n, std::vector<double>& out) {
  double last = -1;
  for (std::size_t k = 0; k < max_n; ++k) {
    const double target = lo * std::pow(hi / lo, static_cast<double>(k) / static_cast<double>(max_n - 1));
    std::vector<double> one;
    nearest_in(values, target, 1, one);
    if (one.empty() || one[0] < lo * 0.999 || one[0] > hi * 1.001 || same(one[0], last)) continue;
    out.push_back(one[0]);
    last = one[0];
  }
}

}  // namespace

void Shelf::spread(double lo, double hi, std::size_t max_n, std::vector<double>& out) const {
  if (r_values_.empty() || !(lo > 0) || !(hi >= lo) || max_n == 0) return;
  if (max_n == 1) {
    nearest(std::sqrt(lo * hi), 1, out);
    return;
  }
  spread_in(r_values_, lo, hi, max_n, out);
  if (market_) spread_in(r_stocked_, lo, hi, max_n, out);
}

const Combo* Shelf::resistor(double nominal) const {
  const auto it = std::lower_bound(r_.begin(), r_.end(), nominal * (1 - 1e-9),
                                   [](const Combo& c, double t) { return c.nominal < t; });
  if (it == r_.end() || !same(it->nominal, nominal)) return nullptr;
  return &*it;
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
