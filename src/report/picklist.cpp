// Pick lists: the build plan with assembly and polarity notes; JSON, CSV and text views.
#include "shelfstage/report/picklist.hpp"

#include <nlohmann/json.hpp>
#include <fmt/format.h>

#include <algorithm>
#include <cctype>

#include "shelfstage/report/design_json.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/synth/shelf.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::report {

namespace {

std::string_view kind_letter(store::PartKind k) { return store::kind_code(k); }

std::string rating_text(store::PartKind kind, double rating) {
  if (!(rating > 0)) return {};
  if (kind == store::PartKind::resistor) return fmt::format("{:g}W", rating);
  if (kind == store::PartKind::capacitor) return fmt::format("{:g}V", rating);
  return {};
}

std::string tol_text(const std::optional<units::Tolerance>& tol) { return tol ? units::format_tolerance(*tol) : ""; }

std::string join_word(synth::Join j) {
  switch (j) {
    case synth::Join::series: return "series";
    case synth::Join::parallel: return "parallel";
    case synth::Join::single: break;
  }
  return "single";
}

bool same_name(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
         });
}

/// The kind of package an op-amp type comes in, as the trade says it.
std::string package_word(int channels) {
  switch (channels) {
    case 1: return "single";
    case 2: return "dual";
    case 4: return "quad";
    default: break;
  }
  return fmt::format("{}-channel", channels);
}

TableLayout indented() {
  TableLayout layout;
  layout.indent = "  ";
  return layout;
}

}  // namespace

std::string net_for_people(std::string_view net, const synth::Candidate& c, std::size_t stage_count) {
  if (c.is_chain()) return fmt::format("net {}", net);
  // The device's designator: Q1 (an op-amp U1), or Q101, U201 ... in a chain's stage.
  const std::string_view base = devices::device_designator(c.device.kind);
  std::string q(base);
  if (!c.parts.empty() && c.parts.front().stage > 0)
    q = stages::chain_designator(static_cast<std::size_t>(c.parts.front().stage - 1), base);
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
    const bool has_upper =
        inner->upper.empty() ||
        std::any_of(c.parts.begin(), c.parts.end(), [&](const synth::RolePart& rp) { return rp.role == inner->upper; });
    if (!has_upper) return fmt::format("the {} of {} ({} is left out)", c.topology->node_names()[1], q, inner->upper);
    return fmt::format("the {}", inner->words);
  }
  for (const char* terminal : {"gate", "drain", "source", "base", "collector", "emitter"})
    if (net == terminal) return fmt::format("the {} of {}", net, q);
  if (net == "vdd" || net == "vcc" || net == "supply") return "the supply rail";
  if (c.topology && c.topology->accepts(devices::DeviceKind::opamp)) {  // an op-amp's pins: "the output of U1"
    const auto pins = c.topology->node_names();                         // + input, - input, output
    if (net == pins[2]) return fmt::format("the output of {}", q);
    if (net == pins[0]) return fmt::format("the + input of {}", q);
    if (net == pins[1]) return fmt::format("the - input of {}", q);
  }
  return fmt::format("net {}", net);
}

namespace {

/// How a role filled by more than one piece goes together.
Assembly assembly_of(const synth::RolePart& rp, const std::vector<std::string>& pieces) {
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
  return a;
}

/// Which way a polarised capacitor of stage `sc` (one of `stage_count`) goes in.
Polarity polarity_of(const synth::RolePart& rp, const std::vector<std::string>& pieces, const synth::Candidate& sc,
                     std::size_t stage_count) {
  Polarity pol;
  pol.designator = fmt::format("{}", fmt::join(pieces, ", "));
  pol.role = rp.role;
  pol.plus_net = rp.plus_net;
  // The other lead as the design's analysis found it on the rail (a design kept before that
  // was known: the role's other end).
  pol.minus_net = rp.minus_net;
  const auto roles = sc.topology->roles();
  const std::size_t i = sc.topology->role_index(rp.role);
  if (pol.minus_net.empty() && i < roles.size()) {
    const auto& r = roles[i];
    pol.minus_net = std::string(rp.plus_net == r.pos_net ? r.neg_net : r.pos_net);
  }
  pol.plus = net_for_people(pol.plus_net, sc, stage_count);
  pol.minus = pol.minus_net.empty() ? std::string("the other end") : net_for_people(pol.minus_net, sc, stage_count);
  pol.text = fmt::format("{} ({}, {} {}): + lead to {}, - lead to {}", pol.designator, rp.role,
                         synth::compact_value(rp.combo.nominal, false),
                         rp.dielectric.empty() ? std::string("polarised") : rp.dielectric, pol.plus, pol.minus);
  return pol;
}

}  // namespace

PickList make_pick_list(const synth::Candidate& c, int copies, const std::vector<store::Part>& stock,
                        const std::map<std::int64_t, int>& held) {
  PickList out{build::plan_build(c, copies, stock, held), {}, {}, {}};
  // How combinations go together, and which way electrolytics go in (stage by stage).
  std::vector<const synth::Candidate*> stage_list;
  if (c.is_chain())
    for (const auto& s : c.stages) stage_list.push_back(&s);
  else
    stage_list.push_back(&c);
  for (const synth::Candidate* sc : stage_list) {
    for (const auto& rp : sc->parts) {
      const int n = static_cast<int>(rp.values.size());
      std::vector<std::string> pieces;
      for (int k = 0; k < n; ++k) pieces.push_back(build::designator(rp.designator, k, n, 1, 1));
      if (n > 1) out.assemblies.push_back(assembly_of(rp, pieces));
      if (rp.polarised && !rp.plus_net.empty())
        out.polarities.push_back(polarity_of(rp, pieces, *sc, stage_list.size()));
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

}  // namespace

/// An op-amp line's packages: each with its channels and the places they serve.
Json packages_json(const build::PickLine& l) {
  Json out = Json::array();
  for (const auto& pk : l.packages) {
    Json channels = Json::array();
    for (std::size_t k = 0; k < pk.places.size(); ++k)
      channels.push_back(
          {{"channel", std::string(1, build::channel_letter(static_cast<int>(k)))}, {"designator", pk.places[k]}});
    out.push_back(
        {{"number", pk.number}, {"channels", channels}, {"spare", pk.spare()}, {"from_reserved", pk.from_reserved}});
  }
  return out;
}

Json short_item_json(const build::ShortItem& s) {
  Json o;
  o["kind"] = kind_json(s.kind);
  o["value"] = value_json(s.kind, s.value, s.device);
  o["qty"] = s.qty;
  o["designators"] = s.designators;
  o["value_text"] = build::item_value_text(s.kind, s.value, s.device);
  o["tol"] = text_or_null(tol_text(s.tol));
  o["rating"] = s.rating > 0 ? Json(s.rating) : Json(nullptr);
  o["dielectric"] = text_or_null(s.dielectric);
  o["needed"] = s.needed;
  o["roles"] = s.roles;
  if (s.channels > 0) o["channels"] = s.channels;  // an op-amp: qty and needed count packages
  return o;
}

Json pick_json(const PickList& p) {
  Json j;
  j["schema"] = 1;
  j["design"] = p.design_id;
  j["copies"] = p.copies;
  j["topology"] = p.topology;
  j["device"] = p.device;
  j["device2"] = p.device2.empty() ? Json(nullptr) : Json(p.device2);
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
    o["value_text"] = build::item_value_text(l.kind, l.value, l.device);
    o["tol"] = text_or_null(tol_text(l.tol));
    o["rating"] = l.rating > 0 ? Json(l.rating) : Json(nullptr);
    o["dielectric"] = text_or_null(l.dielectric);
    o["from_reserved"] = l.from_reserved;
    if (l.channels > 0) {  // an op-amp line: qty counts packages
      o["channels"] = l.channels;
      o["packages"] = packages_json(l);
    }
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
  j["rail"] = text_or_null(p.rail);
  if (const auto counts = build::package_counts(p); !counts.empty()) {
    Json opamps = Json::array();
    for (const auto& c : counts)
      opamps.push_back({{"device", c.device},
                        {"channels", c.channels},
                        {"packages", c.packages},
                        {"channels_used", c.used},
                        {"channels_spare", c.spare()},
                        {"packages_short", c.short_packages}});
    j["opamps"] = opamps;
  }
  return j;
}

std::string pick_csv(const PickList& p) {
  std::string out = "status,bin,kind,value,qty,designators,tol,rating,dielectric,part_id\n";
  auto row = [&](std::string_view status, const std::string& bin, store::PartKind kind, double value,
                 const std::string& device, int qty, const std::vector<std::string>& designators,
                 const std::optional<units::Tolerance>& tol, double rating, const std::string& dielectric,
                 std::string part_id) {
    out +=
        fmt::format("{},{},{},{},{},{},{},{},{},{}\n", status, store::csv_field(bin), kind_letter(kind),
                    store::csv_field(build::item_value_text(kind, value, device)), qty,
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
  std::string out = fmt::format("Pick list for {} ({} with {}), {} cop{}: {} pieces from {} stock lines.\n",
                                p.design_id, p.topology, p.device2.empty() ? p.device : p.device + " and " + p.device2,
                                p.copies, p.copies == 1 ? "y" : "ies", p.pieces(), p.lines.size());
  if (!p.rail.empty()) out += fmt::format("Supply: {}.\n", p.rail);
  if (p.copies > 1) out += "Designators carry the copy number: R3.2 is R3 of copy 2.\n";
  if (!p.lines.empty()) {
    TextTable t({{"BIN"},
                 {"KIND"},
                 {"VALUE", Align::right},
                 {"TOL"},
                 {"RATING", Align::right},
                 {"TYPE"},
                 {"QTY", Align::right},
                 {"FOR"}});
    std::string last_bin = "\x01";
    for (const auto& l : p.lines) {
      std::string bin = l.bin == last_bin ? std::string() : (l.bin.empty() ? std::string("(no bin)") : l.bin);
      last_bin = l.bin;
      std::string qty = std::to_string(l.qty);
      if (l.from_reserved > 0) qty += fmt::format(" ({} held)", l.from_reserved);
      t.add_row({bin, std::string(kind_letter(l.kind)), build::item_value_text(l.kind, l.value, l.device),
                 tol_text(l.tol), rating_text(l.kind, l.rating),
                 l.channels > 0 ? package_word(l.channels) : l.dielectric, qty,
                 fmt::format("{}", fmt::join(l.designators, " "))});
    }
    out += "\n" + t.render(indented());
  }
  if (const auto notes = package_notes(p); !notes.empty()) {
    out +=
        "\nOp-amp packages (each U place takes one amplifier, a channel, of a package; channel A is the\n"
        "datasheet's amplifier 1, then B, C, D):\n";
    for (const auto& n : notes) out += "  " + n + "\n";
    const auto counts = build::package_counts(p);
    if (std::any_of(counts.begin(), counts.end(), [](const build::PackageCount& c) { return c.spare() > 0; }))
      out +=
          "  Wire each spare channel as a follower (output to its - input) with its + input at a quiet voltage\n"
          "  inside its input range, so it neither oscillates nor draws extra supply current.\n";
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

std::vector<std::string> package_notes(const build::Plan& p) {
  std::vector<std::string> out;
  for (const auto& c : build::package_counts(p)) {
    std::string head = fmt::format("{}, {}: ", c.device, package_word(c.channels));
    if (c.channels == 1)
      head += fmt::format("{} package{}, one per place", c.packages, c.packages == 1 ? "" : "s");
    else
      head += fmt::format("{} package{}, {} of {} {} channels used, {} spare", c.packages, c.packages == 1 ? "" : "s",
                          c.used, c.packages == 1 ? "its" : "their", c.packages * c.channels,
                          c.spare() == 0 ? std::string("none") : std::to_string(c.spare()));
    if (c.short_packages > 0)
      head += fmt::format("; {} more package{} short ({} place{} without a channel)", c.short_packages,
                          c.short_packages == 1 ? "" : "s", c.places_short, c.places_short == 1 ? "" : "s");
    out.push_back(head + ".");
    if (c.channels == 1) continue;  // the table's FOR column says it all
    // Each package in order of its number, wherever its line sits on the shelf.
    std::vector<std::pair<const build::Package*, const build::PickLine*>> packages;
    for (const auto& l : p.lines)
      if (l.channels > 0 && same_name(l.device, c.device))
        for (const auto& pk : l.packages) packages.emplace_back(&pk, &l);
    std::stable_sort(packages.begin(), packages.end(),
                     [](const auto& a, const auto& b) { return a.first->number < b.first->number; });
    for (const auto& [pk, l] : packages) {
      std::vector<std::string> uses;
      for (std::size_t k = 0; k < pk->places.size(); ++k)
        uses.push_back(fmt::format("{} on {}", pk->places[k], build::channel_letter(static_cast<int>(k))));
      std::vector<std::string> spare;
      for (int k = static_cast<int>(pk->places.size()); k < pk->channels; ++k)
        spare.push_back(std::string(1, build::channel_letter(k)));
      std::string line =
          fmt::format("  package {} ({}{}): {}", pk->number, l->bin.empty() ? std::string("no bin") : "bin " + l->bin,
                      pk->from_reserved ? ", held" : "", fmt::join(uses, ", "));
      if (!spare.empty()) line += fmt::format("; {} spare", fmt::join(spare, " and "));
      out.push_back(line);
    }
  }
  return out;
}

std::string shopping_text(const std::vector<build::ShortItem>& items) {
  TextTable t({{"QTY", Align::right}, {"KIND"}, {"VALUE", Align::right}, {"TOL"}, {"RATING"}, {"FOR"}});
  for (const auto& s : items) {
    // The rating of the stock the design drew on: a higher one does as well.
    std::string rating = rating_text(s.kind, s.rating);
    if (!rating.empty()) rating = "at least " + rating;
    if (s.kind == store::PartKind::capacitor && !s.dielectric.empty())
      rating = rating.empty() ? s.dielectric : rating + " " + s.dielectric;
    // An op-amp is bought in whole packages: the quantity counts them.
    if (s.channels > 0) rating = fmt::format("{} package{}", package_word(s.channels), s.qty == 1 ? "" : "s");
    t.add_row({std::to_string(s.qty), std::string(kind_letter(s.kind)),
               build::item_value_text(s.kind, s.value, s.device), tol_text(s.tol), rating,
               fmt::format("{}", fmt::join(s.designators, " "))});
  }
  return t.render(indented());
}

}  // namespace shelfstage::report
