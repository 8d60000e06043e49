// Pick lists: pieces allocated from the named stock lines in bin order, grouped by bin, with
// assembly and polarity notes and the short items; JSON, CSV and text views.
#include "shelfstage/report/picklist.hpp"

#include "shelfstage/stages/chain.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <tuple>

#include "shelfstage/error.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/synth/shelf.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::report {

namespace {

char lower(char c) { return static_cast<char>(std::tolower(static_cast<unsigned char>(c))); }
bool digit(char c) { return std::isdigit(static_cast<unsigned char>(c)) != 0; }

bool iequal(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) { return lower(x) == lower(y); });
}

std::string_view kind_letter(store::PartKind k) { return store::kind_code(k); }

double line_rating(const store::Part& p) {
  if (p.kind == store::PartKind::resistor) return p.power_w.value_or(0.0);
  if (p.kind == store::PartKind::capacitor) return p.volts.value_or(0.0);
  return 0.0;
}

std::string rating_text(store::PartKind kind, double rating) {
  if (!(rating > 0)) return {};
  if (kind == store::PartKind::resistor) return fmt::format("{:g}W", rating);
  if (kind == store::PartKind::capacitor) return fmt::format("{:g}V", rating);
  return {};
}

std::string tol_text(const std::optional<units::Tolerance>& tol) { return tol ? units::format_tolerance(*tol) : ""; }

/// "R4", "R4a", "R4.2", "R4a.2".
std::string place(std::string_view base, int piece, int piece_count, int copy, int copies) {
  std::string s(base);
  if (piece_count > 1) s += static_cast<char>('a' + piece);
  if (copies > 1) s += fmt::format(".{}", copy);
  return s;
}

std::string join_word(synth::Join j) {
  switch (j) {
    case synth::Join::series: return "series";
    case synth::Join::parallel: return "parallel";
    case synth::Join::single: break;
  }
  return "single";
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

/// Pieces one place takes from one line, before the lines are merged.
struct Grant {
  std::int64_t part_id;
  bool from_held;
  std::string designator;
};

/// One piece of one role, needed `copies` times.
struct Need {
  std::string role;
  std::string base;       // designator of the role, "Q1" for the transistor
  int piece = 0, piece_count = 1;
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;
  std::string device;
  std::vector<std::int64_t> lines;  // bin order
  // For a short item when none of the lines is left to describe it:
  std::optional<units::Tolerance> tol;
  double rating = 0;
  std::string dielectric;
};

std::vector<Need> needs_of(const synth::Candidate& c, const std::vector<store::Part>& stock,
                           const std::string& q_designator = "Q1") {
  std::vector<Need> out;
  if (c.is_chain()) {
    // Stage by stage, each with its own transistor (Q101, Q201 ...).
    for (std::size_t k = 0; k < c.stages.size(); ++k)
      for (auto& n : needs_of(c.stages[k], stock, stages::chain_designator(k, "Q1"))) out.push_back(std::move(n));
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
  // The transistor: every line holding its device type, in bin order.
  Need q;
  q.role = "Q";
  q.base = q_designator;
  q.kind = store::part_kind(c.device.kind);
  q.device = c.device.name;
  std::vector<const store::Part*> holders;
  for (const auto& p : stock)
    if (!store::is_passive(p.kind) && !p.removed && iequal(p.device, c.device.name)) holders.push_back(&p);
  std::stable_sort(holders.begin(), holders.end(),
                   [](const store::Part* a, const store::Part* b) { return bin_less(a->bin, b->bin); });
  for (const auto* p : holders) q.lines.push_back(p->id);
  out.push_back(std::move(q));
  return out;
}

/// Describes a short item from the first named line that still exists, else from the role.
ShortItem short_item(const Need& need, const std::vector<store::Part>& stock) {
  ShortItem s;
  s.kind = need.kind;
  s.value = need.value;
  s.device = need.device;
  s.tol = need.tol;
  s.rating = need.rating;
  s.dielectric = need.dielectric;
  for (const auto id : need.lines) {
    const auto it = std::find_if(stock.begin(), stock.end(), [&](const store::Part& p) { return p.id == id; });
    if (it == stock.end()) continue;
    s.kind = it->kind;
    s.tol = it->tol ? it->tol : std::optional<units::Tolerance>(synth::default_tolerance(*it));
    s.rating = line_rating(*it);
    s.dielectric = it->dielectric;
    break;
  }
  if (!store::is_passive(s.kind)) s.tol.reset();
  return s;
}

bool same_item(const ShortItem& a, const ShortItem& b) {
  auto close = [](double x, double y) { return std::abs(x - y) <= 1e-9 * std::max(std::abs(x), std::abs(y)); };
  return a.kind == b.kind && close(a.value, b.value) && iequal(a.device, b.device) && a.tol == b.tol &&
         close(a.rating, b.rating) && iequal(a.dielectric, b.dielectric);
}

int kind_order(store::PartKind k) { return static_cast<int>(k); }

TableLayout indented() {
  TableLayout layout;
  layout.indent = "  ";
  return layout;
}

}  // namespace

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

std::string net_for_people(std::string_view net, const synth::Candidate& c, std::size_t stage_count) {
  if (c.is_chain()) return fmt::format("net {}", net);
  // The transistor's designator: Q1, or Q101, Q201 ... in a chain's stage.
  std::string q = "Q1";
  if (!c.parts.empty() && c.parts.front().stage > 0)
    q = stages::chain_designator(static_cast<std::size_t>(c.parts.front().stage - 1), "Q1");
  const int stage = c.parts.empty() ? 0 : c.parts.front().stage;
  if (net == "0") return "ground";
  if (net == "in")
    return stage > 1 ? fmt::format("the input side (toward stage {})", stage - 1)
                     : std::string("the input side (toward the signal source)");
  if (net == "out")
    return stage > 0 && static_cast<std::size_t>(stage) < stage_count
               ? fmt::format("the output side (toward stage {})", stage + 1)
               : std::string("the output side (toward the load)");
  if (const stages::InnerNet* inner = c.topology ? c.topology->inner_net(net) : nullptr) {
    const bool has_upper = inner->upper.empty() || std::any_of(c.parts.begin(), c.parts.end(), [&](const synth::RolePart& rp) {
                             return rp.role == inner->upper;
                           });
    if (!has_upper) return fmt::format("the {} of {} ({} is left out)", c.topology->node_names()[1], q, inner->upper);
    return fmt::format("the {}", inner->words);
  }
  for (const char* terminal : {"gate", "drain", "source", "base", "collector", "emitter"})
    if (net == terminal) return fmt::format("the {} of {}", net, q);
  if (net == "vdd" || net == "vcc" || net == "supply") return "the supply rail";
  return fmt::format("net {}", net);
}

std::string item_value_text(store::PartKind kind, double value, std::string_view device) {
  if (!store::is_passive(kind)) return std::string(device);
  return synth::compact_value(value, kind == store::PartKind::resistor);
}

int PickList::pieces() const {
  int n = 0;
  for (const auto& l : lines) n += l.qty;
  return n;
}

PickList make_pick_list(const synth::Candidate& c, int copies, const std::vector<store::Part>& stock,
                        const std::map<std::int64_t, int>& held) {
  if (copies < 1) throw InputError(fmt::format("copies {} must be at least 1", copies));
  if (c.topology == nullptr && !c.is_chain())
    throw InputError(fmt::format("design '{}' has no stage topology", c.id));
  PickList out;
  out.design_id = c.id;
  out.topology = c.topology_name();
  out.device = c.device.name;
  if (c.piece) out.piece = c.piece->label;
  out.copies = copies;

  Pool pool(stock, held);
  std::vector<Grant> grants;
  std::vector<std::pair<Need, std::vector<std::string>>> missing;  // need, places left
  for (const Need& need : needs_of(c, stock)) {
    std::vector<std::string> left;
    for (int copy = 1; copy <= copies; ++copy) {
      const std::string where = place(need.base, need.piece, need.piece_count, copy, copies);
      bool got = false;
      // The design's own held pieces first, then the free ones, each in bin order.
      for (const bool use_held : {true, false}) {
        for (const auto id : need.lines) {
          Pool::Entry* e = pool.find(id);
          if (e == nullptr) continue;
          int& left_here = use_held ? e->held : e->free;
          if (left_here <= 0) continue;
          --left_here;
          grants.push_back({id, use_held, where});
          got = true;
          break;
        }
        if (got) break;
      }
      if (!got) left.push_back(where);
    }
    if (!left.empty()) missing.emplace_back(need, std::move(left));
  }

  // Merge the grants into one line per stock line.
  for (const auto& g : grants) {
    auto it = std::find_if(out.lines.begin(), out.lines.end(), [&](const PickLine& l) { return l.part_id == g.part_id; });
    if (it == out.lines.end()) {
      const store::Part& p = *pool.find(g.part_id)->part;
      PickLine l;
      l.bin = p.bin;
      l.part_id = p.id;
      l.kind = p.kind;
      l.value = store::is_passive(p.kind) ? p.value : 0.0;
      l.device = p.device;
      l.tol = p.tol;
      l.rating = line_rating(p);
      l.dielectric = p.dielectric;
      out.lines.push_back(std::move(l));
      it = out.lines.end() - 1;
    }
    ++it->qty;
    if (g.from_held) ++it->from_reserved;
    it->designators.push_back(g.designator);
  }
  std::stable_sort(out.lines.begin(), out.lines.end(), [](const PickLine& a, const PickLine& b) {
    if (a.bin != b.bin) return bin_less(a.bin, b.bin);
    return std::make_tuple(kind_order(a.kind), a.value, a.device, a.part_id) <
           std::make_tuple(kind_order(b.kind), b.value, b.device, b.part_id);
  });

  // What is short, one item per kind of piece to buy.
  for (const auto& [need, places] : missing) {
    ShortItem s = short_item(need, stock);
    s.qty = static_cast<int>(places.size());
    s.needed = copies;
    s.designators = places;
    s.roles = {need.role == "Q" ? need.base : need.role};
    auto it = std::find_if(out.short_items.begin(), out.short_items.end(), [&](const ShortItem& o) { return same_item(o, s); });
    if (it == out.short_items.end()) {
      out.short_items.push_back(std::move(s));
    } else {
      it->qty += s.qty;
      it->needed += s.needed;
      it->designators.insert(it->designators.end(), s.designators.begin(), s.designators.end());
      for (const auto& r : s.roles)
        if (std::find(it->roles.begin(), it->roles.end(), r) == it->roles.end()) it->roles.push_back(r);
    }
  }

  // How combinations go together, and which way electrolytics go in (stage by stage).
  std::vector<const synth::Candidate*> stage_list;
  if (c.is_chain())
    for (const auto& s : c.stages) stage_list.push_back(&s);
  else
    stage_list.push_back(&c);
  for (const synth::Candidate* sc : stage_list) {
  const auto roles = sc->topology->roles();
  for (const auto& rp : sc->parts) {
    const int n = static_cast<int>(rp.values.size());
    std::vector<std::string> pieces;
    for (int k = 0; k < n; ++k) pieces.push_back(place(rp.designator, k, n, 1, 1));
    if (n > 1) {
      Assembly a;
      a.designator = rp.designator;
      a.role = rp.role;
      a.join = rp.combo.join;
      a.values = rp.values;
      a.pieces = pieces;
      std::string vals;
      const char* sep = rp.combo.join == synth::Join::series ? " + " : " || ";
      for (const double v : rp.values) vals += (vals.empty() ? "" : sep) + synth::compact_value(v, rp.kind == 'R');
      a.text = fmt::format("{} ({}): {} in {} ({}, {})", rp.designator, rp.role, vals, join_word(rp.combo.join),
                           fmt::join(pieces, ", "), rp.combo.join == synth::Join::series ? "end to end" : "side by side");
      out.assemblies.push_back(std::move(a));
    }
    if (rp.polarised && !rp.plus_net.empty()) {
      Polarity pol;
      pol.designator = fmt::format("{}", fmt::join(pieces, ", "));
      pol.role = rp.role;
      pol.plus_net = rp.plus_net;
      // The other lead as the design's analysis found it on the rail (a design kept before that
      // was known: the role's other end).
      pol.minus_net = rp.minus_net;
      const std::size_t i = sc->topology->role_index(rp.role);
      if (pol.minus_net.empty() && i < roles.size()) {
        const auto& r = roles[i];
        pol.minus_net = std::string(rp.plus_net == r.pos_net ? r.neg_net : r.pos_net);
      }
      pol.plus = net_for_people(pol.plus_net, *sc, stage_list.size());
      pol.minus = pol.minus_net.empty() ? std::string("the other end") : net_for_people(pol.minus_net, *sc, stage_list.size());
      pol.text = fmt::format("{} ({}, {} {}): + lead to {}, - lead to {}", pol.designator, rp.role,
                             synth::compact_value(rp.combo.nominal, false),
                             rp.dielectric.empty() ? std::string("polarised") : rp.dielectric, pol.plus, pol.minus);
      out.polarities.push_back(std::move(pol));
    }
  }
  }
  return out;
}

namespace {

Json kind_json(store::PartKind k) { return std::string(kind_letter(k)); }

Json value_json(store::PartKind kind, double value, const std::string& device) {
  if (!store::is_passive(kind)) return device;
  return value;
}

Json or_null(const std::string& s) { return s.empty() ? Json(nullptr) : Json(s); }

}  // namespace

Json short_item_json(const ShortItem& s) {
  Json o;
  o["kind"] = kind_json(s.kind);
  o["value"] = value_json(s.kind, s.value, s.device);
  o["qty"] = s.qty;
  o["designators"] = s.designators;
  o["value_text"] = item_value_text(s.kind, s.value, s.device);
  o["tol"] = or_null(tol_text(s.tol));
  o["rating"] = s.rating > 0 ? Json(s.rating) : Json(nullptr);
  o["dielectric"] = or_null(s.dielectric);
  o["needed"] = s.needed;
  o["roles"] = s.roles;
  return o;
}

Json pick_json(const PickList& p) {
  Json j;
  j["schema"] = 1;
  j["design"] = p.design_id;
  j["copies"] = p.copies;
  j["topology"] = p.topology;
  j["device"] = p.device;
  j["piece"] = p.piece ? Json(*p.piece) : Json(nullptr);
  Json lines = Json::array();
  for (const auto& l : p.lines) {
    Json o;
    o["bin"] = l.bin;
    o["kind"] = kind_json(l.kind);
    o["value"] = value_json(l.kind, l.value, l.device);
    o["qty"] = l.qty;
    o["designators"] = l.designators;
    o["part_id"] = l.part_id;
    o["value_text"] = item_value_text(l.kind, l.value, l.device);
    o["tol"] = or_null(tol_text(l.tol));
    o["rating"] = l.rating > 0 ? Json(l.rating) : Json(nullptr);
    o["dielectric"] = or_null(l.dielectric);
    o["from_reserved"] = l.from_reserved;
    lines.push_back(o);
  }
  j["lines"] = lines;
  Json shorts = Json::array();
  for (const auto& s : p.short_items) shorts.push_back(short_item_json(s));
  j["short"] = shorts;
  Json assembly = Json::array();
  for (const auto& a : p.assemblies)
    assembly.push_back({{"designator", a.designator},
                        {"role", a.role},
                        {"join", join_word(a.join)},
                        {"values", a.values},
                        {"pieces", a.pieces},
                        {"text", a.text}});
  j["assembly"] = assembly;
  Json polarity = Json::array();
  for (const auto& pol : p.polarities)
    polarity.push_back({{"designator", pol.designator},
                        {"role", pol.role},
                        {"plus_net", pol.plus_net},
                        {"minus_net", pol.minus_net},
                        {"plus", pol.plus},
                        {"minus", pol.minus},
                        {"text", pol.text}});
  j["polarity"] = polarity;
  j["rail"] = p.rail.empty() ? Json(nullptr) : Json(p.rail);
  return j;
}

std::string pick_csv(const PickList& p) {
  std::string out = "status,bin,kind,value,qty,designators,tol,rating,dielectric,part_id\n";
  auto row = [&](std::string_view status, const std::string& bin, store::PartKind kind, double value,
                 const std::string& device, int qty, const std::vector<std::string>& designators,
                 const std::optional<units::Tolerance>& tol, double rating, const std::string& dielectric,
                 std::string part_id) {
    out += fmt::format("{},{},{},{},{},{},{},{},{},{}\n", status, store::csv_field(bin), kind_letter(kind),
                       store::csv_field(item_value_text(kind, value, device)), qty,
                       store::csv_field(fmt::format("{}", fmt::join(designators, " "))), store::csv_field(tol_text(tol)),
                       rating > 0 ? fmt::format("{:g}", rating) : std::string(), store::csv_field(dielectric), part_id);
  };
  for (const auto& l : p.lines)
    row("pick", l.bin, l.kind, l.value, l.device, l.qty, l.designators, l.tol, l.rating, l.dielectric,
        std::to_string(l.part_id));
  for (const auto& s : p.short_items)
    row("short", "", s.kind, s.value, s.device, s.qty, s.designators, s.tol, s.rating, s.dielectric, "");
  return out;
}

std::string pick_text(const PickList& p) {
  std::string out = fmt::format("Pick list for {} ({} with {}), {} cop{}: {} pieces from {} stock lines.\n", p.design_id,
                                p.topology, p.device, p.copies, p.copies == 1 ? "y" : "ies", p.pieces(), p.lines.size());
  if (!p.rail.empty()) out += fmt::format("Supply: {}.\n", p.rail);
  if (p.copies > 1) out += "Designators carry the copy number: R3.2 is R3 of copy 2.\n";
  if (!p.lines.empty()) {
    TextTable t({{"BIN"}, {"KIND"}, {"VALUE", Align::right}, {"TOL"}, {"RATING", Align::right}, {"TYPE"},
                 {"QTY", Align::right}, {"FOR"}});
    std::string last_bin = "\x01";
    for (const auto& l : p.lines) {
      std::string bin = l.bin == last_bin ? std::string() : (l.bin.empty() ? std::string("(no bin)") : l.bin);
      last_bin = l.bin;
      std::string qty = std::to_string(l.qty);
      if (l.from_reserved > 0) qty += fmt::format(" ({} held)", l.from_reserved);
      t.add_row({bin, std::string(kind_letter(l.kind)), item_value_text(l.kind, l.value, l.device), tol_text(l.tol),
                 rating_text(l.kind, l.rating), l.dielectric, qty, fmt::format("{}", fmt::join(l.designators, " "))});
    }
    out += "\n" + t.render(indented());
  }
  if (p.piece) out += fmt::format("\nQ1 is the measured piece '{}': take that one from its bin.\n", *p.piece);
  if (!p.assemblies.empty()) {
    out += "\nCombined values (join the pieces, then fit them as one part):\n";
    for (const auto& a : p.assemblies) out += "  " + a.text + "\n";
  }
  if (!p.polarities.empty()) {
    out += "\nPolarised capacitors (reversed, an electrolytic can fail or vent):\n";
    for (const auto& pol : p.polarities) out += "  " + pol.text + "\n";
  }
  if (p.short_items.empty()) {
    out += "\nNothing is short.\n";
  } else {
    out += "\nShort (not on the shelf for these copies):\n";
    out += shopping_text(p.short_items);
  }
  return out;
}

std::string short_summary(const PickList& p) {
  std::vector<std::string> parts;
  for (const auto& s : p.short_items) {
    std::string what = item_value_text(s.kind, s.value, s.device);
    if (s.tol) what += " " + tol_text(s.tol);
    parts.push_back(fmt::format("{} {} ({} short)", fmt::join(s.roles, "/"), what, s.qty));
  }
  return fmt::format("{}", fmt::join(parts, ", "));
}

std::vector<ShortItem> purchase_items(const synth::Purchase& p) {
  std::vector<ShortItem> out;
  for (const auto& l : p.buy) {
    ShortItem s;
    s.kind = l.kind;
    s.value = l.value;
    s.tol = l.tol;
    s.rating = l.rating;
    s.dielectric = l.dielectric;
    s.qty = l.qty;
    s.needed = l.qty + l.held;
    s.roles = l.roles;
    for (const auto& rp : p.design.parts)
      if (std::find(l.roles.begin(), l.roles.end(), rp.role) != l.roles.end()) s.designators.push_back(rp.designator);
    out.push_back(std::move(s));
  }
  return out;
}

std::string shopping_text(const std::vector<ShortItem>& items) {
  TextTable t({{"QTY", Align::right}, {"KIND"}, {"VALUE", Align::right}, {"TOL"}, {"RATING"}, {"FOR"}});
  for (const auto& s : items) {
    // The rating of the stock the design drew on: a higher one does as well.
    std::string rating = rating_text(s.kind, s.rating);
    if (!rating.empty()) rating = "at least " + rating;
    if (s.kind == store::PartKind::capacitor && !s.dielectric.empty())
      rating = rating.empty() ? s.dielectric : rating + " " + s.dielectric;
    t.add_row({std::to_string(s.qty), std::string(kind_letter(s.kind)), item_value_text(s.kind, s.value, s.device),
               tol_text(s.tol), rating, fmt::format("{}", fmt::join(s.designators, " "))});
  }
  return t.render(indented());
}

}  // namespace shelfstage::report
