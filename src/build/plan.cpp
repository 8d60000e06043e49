// Build plans: pieces allocated from the named stock lines in bin order, merged per stock
// line in walking order, and what the shelf is short of.
#include "shelfstage/build/plan.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <tuple>

#include "shelfstage/error.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/synth/shelf.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::build {

namespace {

char lower(char c) { return static_cast<char>(std::tolower(static_cast<unsigned char>(c))); }
bool digit(char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; }

bool iequal(std::string_view a, std::string_view b) {
  return a.size() == b.size() &&
         std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) { return lower(x) == lower(y); });
}

double line_rating(const store::Part& p) {
  if (p.kind == store::PartKind::resistor) return p.power_w.value_or(0.0);
  if (p.kind == store::PartKind::capacitor) return p.volts.value_or(0.0);
  return 0.0;
}

/// The stock lines that may give pieces, with what each still has to give.
struct Pool {
  struct Entry {
    const store::Part* part = nullptr;
    int held = 0;  // pieces the design's reservation holds, not yet given
    int free = 0;  // available pieces, not yet given
  };
  std::map<std::int64_t, Entry> entries;

  Pool(const std::vector<store::Part>& stock, const std::map<std::int64_t, int>& held) {
    for (const auto& p : stock) {
      if (p.removed) continue;
      Entry e;
      e.part = &p;
      const auto h = held.find(p.id);
      e.held = h == held.end() ? 0 : std::clamp(h->second, 0, p.reserved);
      e.free = std::max(0, p.available());
      entries[p.id] = e;
    }
  }
  Entry* find(std::int64_t id) {
    const auto it = entries.find(id);
    return it == entries.end() ? nullptr : &it->second;
  }
};

/// Pieces one place takes from one line (or one op-amp package and the places its channels
/// serve), before the lines are merged.
struct Grant {
  std::int64_t part_id = 0;
  bool from_held = false;
  std::string designator;
  // An op-amp package: its amplifiers (0: not a package), its number among its type's
  // packages, the places it serves (channel A first).
  int channels = 0;
  int package = 0;
  std::vector<std::string> places;
};

/// One piece of one role, needed `copies` times.
struct Need {
  std::string role;
  std::string base;  // designator of the role, "Q1" for the transistor, "U1" for an op-amp
  int piece = 0, piece_count = 1;
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;
  std::string device;
  const devices::DeviceRecord* record = nullptr;  // a device's type (the candidate's)
  std::vector<std::int64_t> lines;                // bin order
  // For a short item when none of the lines is left to describe it:
  std::optional<units::Tolerance> tol;
  double rating = 0;
  std::string dielectric;
};

/// An op-amp place: its channels are packed into packages (allocate_packages).
bool packed(const Need& need) { return need.record != nullptr && devices::is_opamp(need.record->kind); }

/// A device (transistor or op-amp): every line holding its device type, in bin order.
Need device_need(const devices::DeviceRecord& device, const std::vector<store::Part>& stock,
                 const std::string& designator) {
  Need q;
  q.role = devices::is_opamp(device.kind) ? "U" : "Q";
  q.base = designator;
  q.record = &device;
  q.kind = store::part_kind(device.kind);
  q.device = device.name;
  std::vector<const store::Part*> holders;
  for (const auto& p : stock)
    if (!store::is_passive(p.kind) && !p.removed && iequal(p.device, device.name)) holders.push_back(&p);
  std::stable_sort(holders.begin(), holders.end(),
                   [](const store::Part* a, const store::Part* b) { return bin_less(a->bin, b->bin); });
  for (const auto* p : holders) q.lines.push_back(p->id);
  return q;
}

std::vector<Need> needs_of(const synth::Candidate& c, const std::vector<store::Part>& stock,
                           std::size_t chain_stage = std::string::npos) {
  std::vector<Need> out;
  if (c.is_chain()) {
    // Stage by stage, each with its own device (Q101, U201 ...).
    for (std::size_t k = 0; k < c.stages.size(); ++k)
      for (auto& n : needs_of(c.stages[k], stock, k)) out.push_back(std::move(n));
    return out;
  }
  for (const auto& rp : c.parts) {
    const int n = static_cast<int>(rp.values.size());
    for (int k = 0; k < n; ++k) {
      Need need;
      need.role = rp.role;
      need.base = rp.designator;
      need.piece = k;
      need.piece_count = n;
      need.kind = rp.kind == 'C' ? store::PartKind::capacitor : store::PartKind::resistor;
      need.value = rp.values[static_cast<std::size_t>(k)];
      if (static_cast<std::size_t>(k) < rp.lines.size()) need.lines = rp.lines[static_cast<std::size_t>(k)];
      need.tol = rp.tol;
      need.rating = n == 1 ? rp.rating : 0.0;
      need.dielectric = rp.dielectric;
      out.push_back(std::move(need));
    }
  }
  // One line per device: Q1 (an op-amp: U1), and a pair's Q2 (Q101, Q102, U201 ... in a chain).
  auto designator = [&](std::string_view q) {
    return chain_stage == std::string::npos ? std::string(q) : stages::chain_designator(chain_stage, q);
  };
  out.push_back(device_need(c.device, stock, designator(devices::device_designator(c.device.kind))));
  if (c.device2) out.push_back(device_need(*c.device2, stock, designator("Q2")));
  return out;
}

/// Describes a missing piece from the first named line that still exists, else from the role.
Piece piece_of(const Need& need, const std::vector<store::Part>& stock) {
  Piece p{need.kind, need.value, need.device, need.tol, need.rating, need.dielectric};
  for (const auto id : need.lines) {
    const auto it = std::find_if(stock.begin(), stock.end(), [&](const store::Part& line) { return line.id == id; });
    if (it == stock.end()) continue;
    p.kind = it->kind;
    p.tol = it->tol ? it->tol : std::optional<units::Tolerance>(synth::default_tolerance(*it));
    p.rating = line_rating(*it);
    p.dielectric = it->dielectric;
    break;
  }
  return p;
}

/// A stock line's piece as it states it.
Piece piece_of(const store::Part& line) {
  return {line.kind,      store::is_passive(line.kind) ? line.value : 0.0, line.device, line.tol, line_rating(line),
          line.dielectric};
}

bool same_piece(const Piece& a, const Piece& b) {
  auto close = [](double x, double y) { return std::abs(x - y) <= 1e-9 * std::max(std::abs(x), std::abs(y)); };
  return a.kind == b.kind && close(a.value, b.value) && iequal(a.device, b.device) && a.tol == b.tol &&
         close(a.rating, b.rating) && iequal(a.dielectric, b.dielectric);
}

int kind_order(store::PartKind k) { return static_cast<int>(k); }

/// What the allocation gave (one grant per piece and copy, one per op-amp package) and left
/// (per need, the places; op-amp types' short items in packages).
struct Allocation {
  std::vector<Grant> grants;
  std::vector<std::pair<Need, std::vector<std::string>>> missing;
  std::vector<ShortItem> packages_short;
};

/// The next piece (or package) a need may take, the design's own held ones first, then the
/// free ones, each in bin order: taken from the pool; nullopt when every line is empty.
std::optional<std::pair<std::int64_t, bool>> take_one(const Need& need, Pool& pool) {
  for (const bool use_held : {true, false}) {
    for (const auto id : need.lines) {
      Pool::Entry* e = pool.find(id);
      if (e == nullptr) continue;
      int& left_here = use_held ? e->held : e->free;
      if (left_here <= 0) continue;
      --left_here;
      return std::make_pair(id, use_held);
    }
  }
  return std::nullopt;
}

/// Every op-amp place of each type packed into whole packages (the counting rules in
/// plan.hpp): places copy by copy, in stage order within a copy; a package is taken only
/// when the one before is full.
void allocate_packages(const std::vector<Need>& needs, int copies, Pool& pool, const std::vector<store::Part>& stock,
                       Allocation& out) {
  std::vector<bool> done(needs.size(), false);
  for (std::size_t i = 0; i < needs.size(); ++i) {
    if (!packed(needs[i]) || done[i]) continue;
    const Need& first = needs[i];
    std::vector<const Need*> type;  // every op-amp stage of this type, in stage order
    for (std::size_t j = i; j < needs.size(); ++j)
      if (packed(needs[j]) && iequal(needs[j].device, first.device)) {
        type.push_back(&needs[j]);
        done[j] = true;
      }
    std::vector<std::string> places, roles;
    for (int copy = 1; copy <= copies; ++copy)
      for (const Need* n : type) places.push_back(designator(n->base, 0, 1, copy, copies));
    for (const Need* n : type)
      if (std::find(roles.begin(), roles.end(), n->base) == roles.end()) roles.push_back(n->base);
    const int per = devices::channel_units(*first.record, 1);
    std::size_t next = 0;
    int number = 0;
    while (next < places.size()) {
      const auto got = take_one(first, pool);
      if (!got) break;
      const std::size_t end = std::min(places.size(), next + static_cast<std::size_t>(per));
      Grant g;
      g.part_id = got->first;
      g.from_held = got->second;
      g.channels = per;
      g.package = ++number;
      g.places.assign(places.begin() + static_cast<std::ptrdiff_t>(next),
                      places.begin() + static_cast<std::ptrdiff_t>(end));
      out.grants.push_back(std::move(g));
      next = end;
    }
    if (next == places.size()) continue;
    std::vector<std::string> left(places.begin() + static_cast<std::ptrdiff_t>(next), places.end());
    const int short_packages = devices::packages_for(*first.record, static_cast<int>(left.size()));
    const int needed = devices::packages_for(*first.record, static_cast<int>(places.size()));
    ShortItem s = short_item(piece_of(first, stock), short_packages, needed, std::move(left), std::move(roles));
    s.channels = per;
    out.packages_short.push_back(std::move(s));
  }
}

Allocation allocate(const std::vector<Need>& needs, int copies, Pool& pool, const std::vector<store::Part>& stock) {
  Allocation out;
  for (const Need& need : needs) {
    if (packed(need)) continue;  // below, all places of a type together
    std::vector<std::string> left;
    for (int copy = 1; copy <= copies; ++copy) {
      const std::string where = designator(need.base, need.piece, need.piece_count, copy, copies);
      // The design's own held pieces first, then the free ones, each in bin order.
      if (const auto got = take_one(need, pool)) {
        Grant g;
        g.part_id = got->first;
        g.from_held = got->second;
        g.designator = where;
        out.grants.push_back(std::move(g));
      } else {
        left.push_back(where);
      }
    }
    if (!left.empty()) out.missing.emplace_back(need, std::move(left));
  }
  allocate_packages(needs, copies, pool, stock, out);
  return out;
}

/// The grants merged into one line per stock line, in walking order.
std::vector<PickLine> merge_grants(const std::vector<Grant>& grants, Pool& pool) {
  std::vector<PickLine> lines;
  for (const auto& g : grants) {
    auto it = std::find_if(lines.begin(), lines.end(), [&](const PickLine& l) { return l.part_id == g.part_id; });
    if (it == lines.end()) {
      const store::Part& p = *pool.find(g.part_id)->part;
      PickLine l;
      static_cast<Piece&>(l) = piece_of(p);
      l.bin = p.bin;
      l.part_id = p.id;
      lines.push_back(std::move(l));
      it = lines.end() - 1;
    }
    ++it->qty;
    if (g.from_held) ++it->from_reserved;
    if (g.channels > 0) {
      it->channels = g.channels;
      it->designators.insert(it->designators.end(), g.places.begin(), g.places.end());
      it->packages.push_back({g.package, g.channels, g.places, g.from_held});
    } else {
      it->designators.push_back(g.designator);
    }
  }
  std::stable_sort(lines.begin(), lines.end(), [](const PickLine& a, const PickLine& b) {
    if (a.bin != b.bin) return bin_less(a.bin, b.bin);
    return std::make_tuple(kind_order(a.kind), a.value, a.device, a.part_id) <
           std::make_tuple(kind_order(b.kind), b.value, b.device, b.part_id);
  });
  return lines;
}

/// What is short, one item per kind of piece to buy.
std::vector<ShortItem> short_items_of(const Allocation& a, int copies, const std::vector<store::Part>& stock) {
  std::vector<ShortItem> items;
  for (const auto& [need, places] : a.missing) {
    ShortItem s = short_item(piece_of(need, stock), static_cast<int>(places.size()), copies, places,
                             {need.role == "Q" ? need.base : need.role});
    auto it = std::find_if(items.begin(), items.end(), [&](const ShortItem& o) { return same_piece(o, s); });
    if (it == items.end()) {
      items.push_back(std::move(s));
    } else {
      it->qty += s.qty;
      it->needed += s.needed;
      it->designators.insert(it->designators.end(), s.designators.begin(), s.designators.end());
      for (const auto& r : s.roles)
        if (std::find(it->roles.begin(), it->roles.end(), r) == it->roles.end()) it->roles.push_back(r);
    }
  }
  // Op-amp types, in packages (never merged: one item per type already).
  items.insert(items.end(), a.packages_short.begin(), a.packages_short.end());
  return items;
}

}  // namespace

std::string designator(std::string_view base, int piece, int piece_count, int copy, int copies) {
  std::string s(base);
  if (piece_count > 1) s += static_cast<char>('a' + piece);
  if (copies > 1) s += fmt::format(".{}", copy);
  return s;
}

bool bin_less(std::string_view a, std::string_view b) {
  if (a.empty() != b.empty()) return b.empty();
  std::size_t i = 0, j = 0;
  while (i < a.size() && j < b.size()) {
    if (digit(a[i]) && digit(b[j])) {
      std::size_t i2 = i, j2 = j;
      while (i2 < a.size() && digit(a[i2])) ++i2;
      while (j2 < b.size() && digit(b[j2])) ++j2;
      // Compare the runs as numbers without converting: leading zeros off, then length, then text.
      std::string_view x = a.substr(i, i2 - i), y = b.substr(j, j2 - j);
      while (x.size() > 1 && x.front() == '0') x.remove_prefix(1);
      while (y.size() > 1 && y.front() == '0') y.remove_prefix(1);
      if (x.size() != y.size()) return x.size() < y.size();
      if (x != y) return x < y;
      i = i2;
      j = j2;
    } else {
      if (lower(a[i]) != lower(b[j])) return lower(a[i]) < lower(b[j]);
      ++i;
      ++j;
    }
  }
  if (a.size() - i != b.size() - j) return a.size() - i < b.size() - j;
  return a < b;  // equal but for case or leading zeros: any fixed order
}

std::string item_value_text(store::PartKind kind, double value, std::string_view device) {
  if (!store::is_passive(kind)) return std::string(device);
  return synth::compact_value(value, kind == store::PartKind::resistor);
}

char channel_letter(int k) { return static_cast<char>('A' + std::clamp(k, 0, 25)); }

std::vector<PackageCount> package_counts(const Plan& p) {
  std::vector<PackageCount> out;
  auto count_of = [&](const std::string& device, int channels) -> PackageCount& {
    const auto it =
        std::find_if(out.begin(), out.end(), [&](const PackageCount& c) { return iequal(c.device, device); });
    if (it != out.end()) return *it;
    PackageCount c;
    c.device = device;
    c.channels = channels;
    out.push_back(std::move(c));
    return out.back();
  };
  for (const auto& l : p.lines) {
    if (l.channels <= 0) continue;
    PackageCount& c = count_of(l.device, l.channels);
    c.packages += l.qty;
    for (const auto& pk : l.packages) c.used += static_cast<int>(pk.places.size());
  }
  for (const auto& s : p.short_items) {
    if (s.channels <= 0) continue;
    PackageCount& c = count_of(s.device, s.channels);
    c.short_packages += s.qty;
    c.places_short += static_cast<int>(s.designators.size());
  }
  return out;
}

int Plan::pieces() const {
  int n = 0;
  for (const auto& l : lines) n += l.qty;
  return n;
}

Plan plan_build(const synth::Candidate& c, int copies, const std::vector<store::Part>& stock,
                const std::map<std::int64_t, int>& held) {
  if (copies < 1) throw InputError(fmt::format("copies {} must be at least 1", copies));
  if (c.topology == nullptr && !c.is_chain()) throw InputError(fmt::format("design '{}' has no stage topology", c.id));
  Plan out;
  out.design_id = c.id;
  out.topology = c.topology_name();
  out.device = c.device.name;
  if (c.device2) out.device2 = c.device2->name;
  if (c.piece) out.piece = c.piece->label;
  out.copies = copies;
  Pool pool(stock, held);
  const Allocation a = allocate(needs_of(c, stock), copies, pool, stock);
  out.lines = merge_grants(a.grants, pool);
  out.short_items = short_items_of(a, copies, stock);
  return out;
}

std::string short_summary(const Plan& p) {
  std::vector<std::string> parts;
  for (const auto& s : p.short_items) {
    std::string what = item_value_text(s.kind, s.value, s.device);
    if (s.tol) what += " " + units::format_tolerance(*s.tol);
    if (s.channels > 0)
      parts.push_back(
          fmt::format("{} {} ({} package{} short)", fmt::join(s.roles, "/"), what, s.qty, s.qty == 1 ? "" : "s"));
    else
      parts.push_back(fmt::format("{} {} ({} short)", fmt::join(s.roles, "/"), what, s.qty));
  }
  return fmt::format("{}", fmt::join(parts, ", "));
}

ShortItem short_item(const Piece& what, int qty, int needed, std::vector<std::string> designators,
                     std::vector<std::string> roles) {
  ShortItem s;
  static_cast<Piece&>(s) = what;
  if (!store::is_passive(s.kind)) s.tol.reset();
  s.qty = qty;
  s.needed = needed;
  s.designators = std::move(designators);
  s.roles = std::move(roles);
  return s;
}

std::vector<ShortItem> purchase_items(const synth::Purchase& p) {
  std::vector<ShortItem> out;
  for (const auto& l : p.buy) {
    std::vector<std::string> designators;
    for (const auto& rp : p.design.parts)
      if (std::find(l.roles.begin(), l.roles.end(), rp.role) != l.roles.end()) designators.push_back(rp.designator);
    out.push_back(short_item({l.kind, l.value, "", l.tol, l.rating, l.dielectric}, l.qty, l.qty + l.held,
                             std::move(designators), l.roles));
  }
  return out;
}

}  // namespace shelfstage::build
