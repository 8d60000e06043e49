// Tests of the schematic: for every registered topology's netlist (its reference design, in
// N and P polarity, on a positive and a negative rail, with each subset of its optional
// resistors left out), the drawn wires, read back purely as geometry, join exactly the pins
// the netlist puts on each net; no wire crosses a symbol or touches another net; every tee
// carries a junction dot; a pair's second transistor has a place of its own and is drawn as
// its own kind; an op-amp is one triangle on its model's nets, the input the signal enters on
// top; and the drawing is an SVG that Chromium parses and paints. The stage's places come
// from its roles, as the report passes them.
#include "shelfstage/draw/schematic.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <numeric>
#include <random>
#include <set>

#include "shelfstage/error.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/stages/topology.hpp"
#include "support/browser.hpp"
#include "support/palette_check.hpp"

using namespace shelfstage;
using namespace shelfstage::draw;

namespace {

struct Variant {
  std::string topology;
  bool p_type = false;
  bool negative_rail = false;
  std::vector<std::string> left_out = {};  // optional resistors left out
};

const stages::Topology& topology(const Variant& v) {
  const stages::Topology* t = stages::find_topology(v.topology);
  REQUIRE_MESSAGE(t != nullptr, v.topology);
  return *t;
}

/// The stage's places and inner-net levels, from its roles (as the report passes them).
SchematicOptions placed(const Variant& v, SchematicOptions o = {}) {
  const auto& t = topology(v);
  for (const auto& r : t.roles()) o.places[std::string(r.name)] = {r.at.x, r.at.y, r.at.vertical, r.at.label};
  for (const auto& n : t.inner_nets()) {
    o.net_levels[std::string(n.name)] = n.level;
    o.net_orders[std::string(n.name)] = n.order;
  }
  return o;
}

/// The topology's netlist at its reference design: a piece of the variant's polarity on a
/// 12 V rail, 1k source, 10k load.
bool opamp_stage(const stages::Topology& t) { return t.accepts(devices::DeviceKind::opamp); }

circuit::Circuit build(const Variant& v) {
  const auto& t = topology(v);
  stages::Transistor q;
  if (opamp_stage(t)) {
    // An op-amp piece of the usual order for a general-purpose part (from memory), with both
    // noise densities, so that every element its model can hold is in the netlist.
    q.kind = devices::DeviceKind::opamp;
    q.opamp = {.gbw_hz = 1e6,
               .aol = 2e5,
               .pole2_hz = 3e6,
               .slew_v_per_s = 5e5,
               .vos_v = 1e-3,
               .ib_plus_a = 1e-7,
               .ib_minus_a = 1e-7,
               .out_drop_hi_v = 1.5,
               .out_drop_lo_v = 1.5,
               .out_drop_ohm = 100,
               .iout_max_a = 0.025,
               .cm_drop_hi_v = 1.5,
               .cm_drop_lo_v = 1.5,
               .en_v_rthz = 1e-8,
               .in_a_rthz = 5e-13,
               .iq_a = 2e-3,
               .vs_min_v = 4,
               .vs_max_v = 36};
    stages::Conditions c;
    c.supply_v = 12;
    c.split_supply = t.supply_form() == stages::SupplyForm::split;
    c.source_ohm = 1e3;
    return t.netlist(t.reference(q, c, {}), q, c);
  }
  const bool jfet = t.accepts(devices::DeviceKind::njfet);
  q.kind = jfet ? (v.p_type ? devices::DeviceKind::pjfet : devices::DeviceKind::njfet)
                : (v.p_type ? devices::DeviceKind::pnp : devices::DeviceKind::npn);
  q.jfet.kind = q.kind;
  q.jfet.idss_a = 5e-3;
  q.jfet.vp_abs_v = 2;
  q.bjt.kind = q.kind;
  // A pair takes its second, bipolar transistor (Q2) beside the first: of the other polarity
  // for a complementary pair, of the same for a like pair.
  if (t.second_device() != stages::SecondDevice::none) {
    const bool npn2 = (t.second_device() == stages::SecondDevice::same) != v.p_type;
    q.paired = true;
    q.bjt2.kind = npn2 ? devices::DeviceKind::npn : devices::DeviceKind::pnp;
  }
  stages::Conditions c;
  c.supply_v = 12;
  c.negative_rail = v.negative_rail;
  c.source_ohm = 1e3;
  stages::Values values = t.reference(q, c, {});
  // A reference design, not an empty one: every part the stage cannot do without has a value.
  for (std::size_t i = 0; i < t.roles().size(); ++i)
    CHECK_MESSAGE((t.roles()[i].optional || values[i] > 0), v.topology, " ", t.roles()[i].name);
  for (const auto& r : v.left_out) values[t.role_index(r)] = 0;
  return t.netlist(values, q, c);
}

std::vector<Variant> variants() {
  std::vector<Variant> out;
  for (const stages::Topology* t : stages::registry()) {
    std::vector<std::string> optional;
    for (const auto& r : t->roles())
      if (r.optional && r.kind == 'R') optional.emplace_back(r.name);
    if (opamp_stage(*t)) {  // no polarity, and built for the rail its topology names
      out.push_back({std::string(t->name())});
      continue;
    }
    for (bool p : {false, true})
      for (bool neg : {false, true})
        for (std::size_t mask = 0; mask < (std::size_t{1} << optional.size()); ++mask) {
          Variant v{std::string(t->name()), p, neg, {}};
          for (std::size_t k = 0; k < optional.size(); ++k)
            if (mask & (std::size_t{1} << k)) v.left_out.push_back(optional[k]);
          out.push_back(v);
        }
  }
  return out;
}

/// The designator of a role in the variant's netlist.
std::string des(const Variant& v, std::string_view role) {
  const auto& t = topology(v);
  const std::size_t i = t.role_index(role);
  REQUIRE_MESSAGE(i < t.roles().size(), role);
  return std::string(t.roles()[i].designator);
}

bool on(Point p, const Wire& w) {
  const double e = 1e-9;
  return p.x >= std::min(w.a.x, w.b.x) - e && p.x <= std::max(w.a.x, w.b.x) + e && p.y >= std::min(w.a.y, w.b.y) - e &&
         p.y <= std::max(w.a.y, w.b.y) + e && (std::abs(w.a.x - w.b.x) < e || std::abs(w.a.y - w.b.y) < e);
}

bool same(Point a, Point b) { return std::abs(a.x - b.x) < 1e-9 && std::abs(a.y - b.y) < 1e-9; }

struct Dsu {
  std::vector<std::size_t> p;
  explicit Dsu(std::size_t n) : p(n) { std::iota(p.begin(), p.end(), 0); }
  std::size_t find(std::size_t i) { return p[i] == i ? i : p[i] = find(p[i]); }
  void join(std::size_t a, std::size_t b) { p[find(a)] = find(b); }
};

/// Reads the drawing as geometry only and checks it against the netlist graph.
void check_wiring(const circuit::Circuit& c, const Schematic& s, const std::string& what) {
  INFO(what);
  // Every pin of every element is drawn once, at the net the graph gives it; an op-amp's
  // model (its elements "U1.<name>", role "device model") as one symbol U1 whose + input,
  // - input and output (pins 0, 1, 2) are the nets of the model's input offset source, its
  // input stage's - control pin and its output resistor (src/stages/opamp_model.cpp).
  const auto model = [](const circuit::Element& el) { return el.c.role == stages::kRoleDeviceModel; };
  std::size_t expected_pins = 0;
  for (const auto& el : c.elements()) expected_pins += model(el) ? 0 : el.pin_count();
  for (const auto& el : c.elements()) {
    if (!model(el) || !el.c.designator.ends_with(".VOS")) continue;
    const std::string u = el.c.designator.substr(0, el.c.designator.size() - 4);
    expected_pins += 3;
    const std::size_t nets[] = {el.c.pins[1], c.find(u + ".G1")->c.pins[3], c.find(u + ".ROUT")->c.pins[1]};
    for (std::size_t k = 0; k < 3; ++k) {
      const auto it = std::find_if(s.pins.begin(), s.pins.end(),
                                   [&](const PlacedPin& p) { return p.designator == u && p.pin == k; });
      REQUIRE_MESSAGE(it != s.pins.end(), u, " pin ", k);
      CHECK(it->net == nets[k]);
    }
  }
  CHECK(s.pins.size() == expected_pins);
  for (const auto& el : c.elements())
    for (std::size_t k = 0; k < (model(el) ? 0 : el.pin_count()); ++k) {
      const auto it = std::find_if(s.pins.begin(), s.pins.end(),
                                   [&](const PlacedPin& p) { return p.designator == el.c.designator && p.pin == k; });
      REQUIRE_MESSAGE(it != s.pins.end(), el.c.designator, " pin ", k);
      CHECK(it->net == el.c.pins[k]);
    }
  // The same from the graph's side: each edge's ends are nets of its component's pins.
  for (const auto& edge : c.edges()) {
    const auto& comp = edge.c;
    if (comp.role == stages::kRoleDeviceModel) continue;
    const auto a = edge.a, b = edge.b;
    std::set<std::size_t> drawn;
    for (const auto& p : s.pins)
      if (p.designator == comp.designator) drawn.insert(p.net);
    CHECK(drawn.count(a) == 1);
    CHECK(drawn.count(b) == 1);
  }

  // Union wires and pins by geometry alone: wires touch when an end of one lies on the other;
  // a pin joins the wires through its point (and pins at the same point join).
  const std::size_t nw = s.wires.size(), np = s.pins.size();
  Dsu d(nw + np);
  for (std::size_t i = 0; i < nw; ++i)
    for (std::size_t j = i + 1; j < nw; ++j)
      if (on(s.wires[i].a, s.wires[j]) || on(s.wires[i].b, s.wires[j]) || on(s.wires[j].a, s.wires[i]) ||
          on(s.wires[j].b, s.wires[i]))
        d.join(i, j);
  for (std::size_t k = 0; k < np; ++k) {
    for (std::size_t i = 0; i < nw; ++i)
      if (on(s.pins[k].at, s.wires[i])) d.join(nw + k, i);
    for (std::size_t m = k + 1; m < np; ++m)
      if (same(s.pins[k].at, s.pins[m].at)) d.join(nw + k, nw + m);
  }
  // Pins share a component exactly when they share a net.
  for (std::size_t k = 0; k < np; ++k)
    for (std::size_t m = k + 1; m < np; ++m) {
      const bool joined = d.find(nw + k) == d.find(nw + m);
      const bool same_net = s.pins[k].net == s.pins[m].net;
      CHECK_MESSAGE(joined == same_net, s.pins[k].designator, ".", s.pins[k].pin, " and ", s.pins[m].designator, ".",
                    s.pins[m].pin, " on ", c.net_name(s.pins[k].net), " / ", c.net_name(s.pins[m].net));
    }
  // No dangling wire: each reaches a pin of its own net.
  for (std::size_t i = 0; i < nw; ++i) {
    bool reached = false;
    for (std::size_t k = 0; k < np; ++k)
      if (d.find(i) == d.find(nw + k)) {
        reached = true;
        CHECK(s.pins[k].net == s.wires[i].net);
      }
    CHECK(reached);
  }
  // Everything on the sheet.
  for (const auto& w : s.wires)
    for (const Point p : {w.a, w.b})
      CHECK_MESSAGE((p.x > 0 && p.x < s.width && p.y > 0 && p.y < s.height), p.x, ",", p.y);
  // No wire through a symbol's body; no crossing of two nets (our templates need none, but
  // one: the same-polarity pair, whose feedback from Q2's collector to Q1's emitter must pass
  // Q2's emitter leg on its way; there one clean crossing of those two nets for each part of
  // the feedback, RF and CF, and no other; and an op-amp stage on one supply, whose divider
  // runs from the supply rail to ground across the signal's way in (the source on the left,
  // the load on the right, both on ground: no place for it that crosses nothing), where the
  // reference's wire crosses the input's once).
  for (const auto& w : s.wires)
    for (const auto& sym : s.symbols) {
      const double lx = std::min(w.a.x, w.b.x), hx = std::max(w.a.x, w.b.x);
      const double ly = std::min(w.a.y, w.b.y), hy = std::max(w.a.y, w.b.y);
      const bool crosses = lx < sym.body.x1 && hx > sym.body.x0 && ly < sym.body.y1 && hy > sym.body.y0;
      CHECK_MESSAGE(!crosses, "wire of ", c.net_name(w.net), " crosses ", sym.designator);
    }
  std::size_t feedback_parts = 0;
  if (c.find_net("emitter2"))
    for (const auto& el : c.elements())
      if (el.c.role == "RF" || el.c.role == "CF") ++feedback_parts;
  std::vector<Point> feedback_crossings;
  int reference_crossings = 0;
  for (std::size_t i = 0; i < nw; ++i)
    for (std::size_t j = i + 1; j < nw; ++j) {
      const auto& a = s.wires[i];
      const auto& b = s.wires[j];
      if (a.net == b.net) continue;
      const bool av = std::abs(a.a.x - a.b.x) < 1e-9, bv = std::abs(b.a.x - b.b.x) < 1e-9;
      if (av == bv) continue;
      const Point x = av ? Point{a.a.x, b.a.y} : Point{b.a.x, a.a.y};
      if (!(on(x, a) && on(x, b))) continue;
      const std::set<std::string> nets{c.net_name(a.net), c.net_name(b.net)};
      const bool inner = !same(x, a.a) && !same(x, a.b) && !same(x, b.a) && !same(x, b.b);
      if (inner && nets == std::set<std::string>{"ref", "in"}) {
        ++reference_crossings;
        continue;
      }
      if (feedback_parts > 0 && inner && nets == std::set<std::string>{"collector2", "emitter2"}) {
        if (std::none_of(feedback_crossings.begin(), feedback_crossings.end(), [&](Point q) { return same(q, x); }))
          feedback_crossings.push_back(x);
        continue;
      }
      CHECK_MESSAGE(false, "nets ", c.net_name(a.net), " and ", c.net_name(b.net), " cross");
    }
  CHECK(feedback_crossings.size() <= feedback_parts);
  CHECK(reference_crossings <= 1);
  // Junction dots exactly where three or more connections meet.
  std::vector<Point> points;
  for (const auto& w : s.wires) points.push_back(w.a), points.push_back(w.b);
  for (const auto& p : s.pins) points.push_back(p.at);
  for (const auto& p : points) {
    int degree = 0;
    for (const auto& w : s.wires) degree += (same(w.a, p) || same(w.b, p)) ? 1 : (on(p, w) ? 2 : 0);
    for (const auto& q : s.pins) degree += same(q.at, p);
    const bool dot = std::any_of(s.junctions.begin(), s.junctions.end(), [&](Point j) { return same(j, p); });
    CHECK_MESSAGE(dot == (degree >= 3), "at ", p.x, ",", p.y, " degree ", degree);
  }
}

std::string temp_dir() {
  std::random_device rd;
  const auto d = std::filesystem::temp_directory_path() / ("shelfstage-schematic-test-" + std::to_string(rd()));
  std::filesystem::create_directories(d);
  return d.string();
}

}  // namespace

TEST_CASE("lay_out: every net of every topology is wired to exactly its pins") {
  for (const auto& v : variants()) {
    const auto c = build(v);
    const auto s = lay_out(c, placed(v));
    std::string what = v.topology + (v.p_type ? " P" : " N") + (v.negative_rail ? " on -rail" : " on +rail");
    for (const auto& r : v.left_out) what += " -" + r;
    check_wiring(c, s, what);
  }
}

TEST_CASE("lay_out: parts are ordered along the page: supply on top, ground below, signal left to right") {
  const Variant v{"jfet-cs-self"};
  const auto c = build(v);
  const auto s = lay_out(c, placed(v));
  auto pin_at = [&](const std::string& des, const std::string& net) {
    for (const auto& p : s.pins)
      if (p.designator == des && c.net_name(p.net) == net) return p.at;
    FAIL("no pin ", des, " on ", net);
    return Point{};
  };
  CHECK(pin_at(des(v, "RD"), "vdd").y < pin_at(des(v, "RD"), "drain").y);      // supply above the drain
  CHECK(pin_at(des(v, "RG"), "gate").y < pin_at(des(v, "RG"), "0").y);         // gate above ground
  CHECK(pin_at(des(v, "RS1"), "source").y < pin_at(des(v, "RS1"), "x").y);     // source above the junction
  CHECK(pin_at(des(v, "RS2"), "x").y < pin_at(des(v, "RS2"), "0").y);          // the junction above ground
  CHECK(pin_at(des(v, "CIN"), "in").x < pin_at(des(v, "CIN"), "gate").x);      // input left of the gate
  CHECK(pin_at(des(v, "COUT"), "drain").x < pin_at(des(v, "COUT"), "out").x);  // drain left of the output
  CHECK(pin_at("Q1", "drain").y < pin_at("Q1", "source").y);
  // The stage's input and output terminals sit on their nets.
  int terminals = 0;
  for (const auto& m : s.marks)
    if (m.terminal) {
      ++terminals;
      bool on_net = false;
      for (const auto& w : s.wires)
        if (w.net == m.net && on(m.at, w)) on_net = true;
      CHECK_MESSAGE(on_net, m.text);
    }
  CHECK(terminals == 2);
}

TEST_CASE("lay_out: symbols follow the device polarity and the electrolytic's + lead") {
  const Variant cs{"jfet-cs-self"};
  SchematicOptions o;
  const std::string cout = des(cs, "COUT"), bypass = des(cs, "CS");
  o.notes[cout] = {"10u", "25 V", true, "drain"};
  o.notes[bypass] = {"100u", "", true, "x"};
  auto c = build(cs);
  auto s = lay_out(c, placed(cs, o));
  auto symbol = [&](const std::string& d) {
    return *std::find_if(s.symbols.begin(), s.symbols.end(), [&](const PlacedSymbol& y) { return y.designator == d; });
  };
  CHECK(symbol("Q1").kind == SymbolKind::njfet);
  CHECK(symbol(cout).kind == SymbolKind::electrolytic);
  CHECK(c.net_name(c.find(cout)->c.pins[symbol(cout).plus_pin]) == "drain");
  CHECK(c.net_name(c.find(bypass)->c.pins[symbol(bypass).plus_pin]) == "x");
  CHECK(symbol(des(cs, "CIN")).kind == SymbolKind::capacitor);
  CHECK(symbol("VDD").kind == SymbolKind::dc_source);
  CHECK(symbol("VSIG").kind == SymbolKind::ac_source);
  // The label carries the designator, the role and the note's value.
  CHECK(symbol(cout).label == std::vector<std::string>{cout + " COUT", "10u", "25 V"});
  // Without a note the value is the netlist's, in IEC 60062 code (here RG's 1 Mohm).
  CHECK(symbol(des(cs, "RG")).label == std::vector<std::string>{des(cs, "RG") + " RG", "1M0"});
  // P-channel and PNP devices, and the negative supply's + terminal at its ground end.
  const Variant pj{"jfet-cs-self", true, true};
  c = build(pj);
  s = lay_out(c, placed(pj));
  CHECK(symbol("Q1").kind == SymbolKind::pjfet);
  CHECK(c.net_name(c.find("VDD")->c.pins[symbol("VDD").plus_pin]) == "0");
  const Variant pnp{"bjt-ce-divider", true};
  c = build(pnp);
  s = lay_out(c, placed(pnp));
  CHECK(symbol("Q1").kind == SymbolKind::pnp);
  const Variant npn{"bjt-follower"};
  c = build(npn);
  s = lay_out(c, placed(npn));
  CHECK(symbol("Q1").kind == SymbolKind::npn);
}

TEST_CASE("lay_out: a pair draws its second transistor apart from the first, as its own kind") {
  int pairs = 0;
  for (const stages::Topology* t : stages::registry()) {
    if (t->second_device() == stages::SecondDevice::none) continue;
    ++pairs;
    for (bool p : {false, true})
      for (bool neg : {false, true}) {
        const Variant v{std::string(t->name()), p, neg};
        INFO(v.topology, p ? " P" : " N", neg ? " on -rail" : " on +rail");
        const auto c = build(v);
        const auto s = lay_out(c, placed(v));
        std::vector<PlacedSymbol> qs;
        for (const auto& y : s.symbols)
          if (y.role == "device") qs.push_back(y);
        REQUIRE(qs.size() == 2);
        const auto& q1 = qs[0].designator == "Q1" ? qs[0] : qs[1];
        const auto& q2 = qs[0].designator == "Q1" ? qs[1] : qs[0];
        REQUIRE(q1.designator == "Q1");
        REQUIRE(q2.designator == "Q2");
        // Two symbols at two places, their bodies apart; the second to the right of the first.
        CHECK_FALSE(same(q1.centre, q2.centre));
        const bool apart = q1.body.x1 <= q2.body.x0 || q2.body.x1 <= q1.body.x0 || q1.body.y1 <= q2.body.y0 ||
                           q2.body.y1 <= q1.body.y0;
        CHECK(apart);
        CHECK(q2.centre.x > q1.centre.x);
        // Each symbol is the netlist's own kind: Q2 a bipolar of the other polarity, or of
        // the same in the same-polarity form.
        const bool like = t->second_device() == stages::SecondDevice::same;
        const auto* e2 = c.find("Q2");
        REQUIRE(e2 != nullptr);
        const auto kind2 = c.bjts()[e2->c.device].kind;
        CHECK(q2.kind == (kind2 == devices::DeviceKind::pnp ? SymbolKind::pnp : SymbolKind::npn));
        CHECK(q2.kind == (p != like ? SymbolKind::npn : SymbolKind::pnp));
        const bool jfet = t->accepts(devices::DeviceKind::njfet);
        CHECK(q1.kind ==
              (jfet ? (p ? SymbolKind::pjfet : SymbolKind::njfet) : (p ? SymbolKind::pnp : SymbolKind::npn)));
        auto pin = [&](const std::string& d, std::size_t k) {
          const auto it = std::find_if(s.pins.begin(), s.pins.end(),
                                       [&](const PlacedPin& x) { return x.designator == d && x.pin == k; });
          REQUIRE(it != s.pins.end());
          return *it;
        };
        auto end_on = [&](const std::string& role, const std::string& net) {
          const std::string d = des(v, role);
          for (std::size_t k = 0; k < 2; ++k)
            if (c.net_name(pin(d, k).net) == net) return pin(d, k).at;
          FAIL("no pin of ", d, " on ", net);
          return Point{};
        };
        // The first transistor stands as in a one-device stage: its main terminal toward the
        // supply unless the stage is turned over (the second's polarity does not turn it).
        const bool turned = p != neg;
        CHECK((pin("Q1", 0).at.y < pin("Q1", 2).at.y) == !turned);
        const PlacedPin emitter = pin("Q2", 2), collector = pin("Q2", 0);
        const std::string common(t->node_names()[1]);
        // The rail the stage's N frame calls the supply (ground's netlist name when turned).
        const std::string supply = turned ? "0" : "vdd", ground = turned ? "vdd" : "0";
        if (like) {
          // Q2 stands as Q1 does, its emitter on its own leg: RE3 (and CE3) from it toward
          // ground, RC2 from the supply down to its collector.
          CHECK(c.net_name(emitter.net) == "emitter2");
          CHECK((collector.at.y < emitter.at.y) == !turned);
          CHECK((end_on("RE3", "emitter2").y < end_on("RE3", ground).y) == !turned);
          CHECK((end_on("RC2", supply).y < end_on("RC2", "collector2").y) == !turned);
          CHECK(std::abs(end_on("RE3", "emitter2").x - emitter.at.x) < 1e-9);  // straight under it
        } else {
          // Q2 stands with its emitter toward the rail it sits on, its collector away from it;
          // RC2 hangs from its collector toward the rail away from its emitter.
          const std::string rail = c.net_name(emitter.net);
          REQUIRE((rail == "vdd" || rail == "0"));
          const double rail_y = rail == "vdd" ? 2.0 : 27.0;
          CHECK(std::abs(emitter.at.y - rail_y) < std::abs(collector.at.y - rail_y));
          const std::string other_rail = rail == "vdd" ? "0" : "vdd";
          CHECK((end_on("RC2", "collector2").y < end_on("RC2", other_rail).y) == !turned);
        }
        // RF runs from the common terminal on the left to Q2's collector net, COUT from it to
        // the output on the right.
        CHECK(end_on("RF", common).x < end_on("RF", "collector2").x);
        CHECK(end_on("COUT", "collector2").x < end_on("COUT", "out").x);
      }
  }
  CHECK(pairs >= 2);
}

TEST_CASE("lay_out: an op-amp stage is one triangle, drawn as textbooks draw the stage") {
  int stages_seen = 0;
  for (const stages::Topology* t : stages::registry()) {
    if (!opamp_stage(*t)) continue;
    ++stages_seen;
    const Variant v{std::string(t->name())};
    INFO(v.topology);
    const auto c = build(v);
    const auto s = lay_out(c, placed(v));
    auto symbol = [&](const std::string& d) {
      const auto it =
          std::find_if(s.symbols.begin(), s.symbols.end(), [&](const PlacedSymbol& y) { return y.designator == d; });
      REQUIRE_MESSAGE(it != s.symbols.end(), d);
      return *it;
    };
    auto pin = [&](const std::string& d, std::size_t k) {
      const auto it = std::find_if(s.pins.begin(), s.pins.end(),
                                   [&](const PlacedPin& x) { return x.designator == d && x.pin == k; });
      REQUIRE(it != s.pins.end());
      return *it;
    };
    // One symbol for the whole model: none of its elements drawn.
    const PlacedSymbol u = symbol("U1");
    CHECK(u.kind == SymbolKind::opamp);
    for (const auto& y : s.symbols) CHECK_MESSAGE(y.designator.find('.') == std::string::npos, y.designator);
    // Inputs on the left, the output at the apex on the right.
    CHECK(pin("U1", 0).at.x < u.centre.x);
    CHECK(pin("U1", 1).at.x < u.centre.x);
    CHECK(pin("U1", 2).at.x > u.centre.x);
    // The input the signal enters on top: the - input of the inverting stages (the signal
    // comes through RG), the + input of the others; the feedback resistor on the side of the
    // - input, over the triangle or under it, its ends between the - input and the output.
    const bool inverting = v.topology.starts_with("opamp-inv");
    CHECK(u.minus_on_top == inverting);
    CHECK((pin("U1", 1).at.y < pin("U1", 0).at.y) == inverting);
    if (t->role_index("RF") < t->roles().size()) {
      const PlacedSymbol rf = symbol(des(v, "RF"));
      CHECK(!rf.vertical);
      CHECK((rf.centre.y < u.body.y0) == inverting);   // over the triangle
      CHECK((rf.centre.y > u.body.y1) == !inverting);  // under it
    }
    // The supply leads name their rails: VDD above; ground below on one supply (its sign),
    // VEE on a split one, whose source stands beside VDD and is named at its free end.
    const bool split = t->supply_form() == stages::SupplyForm::split;
    CHECK(u.rail_hi == "VDD");
    CHECK(u.rail_lo == (split ? "VEE" : ""));
    CHECK((std::find_if(s.symbols.begin(), s.symbols.end(),
                        [](const PlacedSymbol& y) { return y.designator == "VEE"; }) != s.symbols.end()) == split);
    if (split) {
      CHECK(symbol("VEE").centre.x > symbol("VDD").centre.x);
      CHECK(std::any_of(s.marks.begin(), s.marks.end(), [](const NetMark& m) { return m.text.starts_with("VEE"); }));
    }
    // The output terminal on the op-amp's own output on a split supply (no COUT).
    for (const auto& m : s.marks)
      if (m.terminal && m.text == "out" && split) CHECK(std::abs(m.at.x - pin("U1", 2).at.x) < 1);
  }
  CHECK(stages_seen == 6);
}

TEST_CASE("lay_out: an op-amp stage later in a chain (fed on its input by the stage before) is drawn the same way") {
  // A chain's second stage has no CIN: its + input is the input net itself, and its parts
  // carry the stage in the hundreds (U201, R201 ...).
  const auto& t = *stages::find_topology("opamp-noninv");
  stages::Transistor q;
  q.kind = devices::DeviceKind::opamp;
  q.opamp = {.gbw_hz = 1e6,
             .aol = 2e5,
             .slew_v_per_s = 5e5,
             .out_drop_hi_v = 1.5,
             .out_drop_lo_v = 1.5,
             .out_drop_ohm = 100,
             .iout_max_a = 0.025,
             .iq_a = 2e-3};
  stages::Conditions cond;
  cond.supply_v = 12;
  const auto c = stages::chain_stage_netlist({&t, t.reference(q, cond, {}), q}, 1, cond);
  SchematicOptions o;
  for (const auto& r : t.roles()) o.places[std::string(r.name)] = {r.at.x, r.at.y, r.at.vertical, r.at.label};
  for (const auto& n : t.inner_nets()) {
    o.net_levels[std::string(n.name)] = n.level;
    o.net_orders[std::string(n.name)] = n.order;
  }
  const auto s = lay_out(c, o);
  check_wiring(c, s, "opamp-noninv as stage 2");
  const auto u =
      std::find_if(s.symbols.begin(), s.symbols.end(), [](const PlacedSymbol& y) { return y.designator == "U201"; });
  REQUIRE(u != s.symbols.end());
  CHECK_FALSE(u->minus_on_top);  // the signal still enters on top, at the + input
}

TEST_CASE("lay_out: what it cannot draw is an input error naming the part") {
  const Variant cs{"jfet-cs-self"};
  auto c = build(cs);
  c.resistor("R9", "RX", "gate", "0", 1e3);
  CHECK_THROWS_WITH_AS(lay_out(c, placed(cs)), doctest::Contains("R9"), InputError);
  // Without the stage's places, its first part is the one named.
  CHECK_THROWS_WITH_AS(lay_out(build(cs)), doctest::Contains("no place"), InputError);
  SchematicOptions o;
  const std::string cout = des(cs, "COUT");
  o.notes[cout] = {"10u", "", true, "gate"};  // COUT is drain to out
  CHECK_THROWS_WITH_AS(lay_out(build(cs), placed(cs, o)), doctest::Contains(cout.c_str()), InputError);
}

TEST_CASE("schematic_svg: Chromium parses and paints it; every designator is in it") {
  const std::string dir = temp_dir();
  for (const auto& v : {Variant{"jfet-cs-self"}, Variant{"bjt-ce-divider", true, true}, Variant{"jfet-follower"},
                        Variant{"bjt-fb-pair"}, Variant{"bjt-fb-pair-same"}, Variant{"opamp-noninv"},
                        Variant{"opamp-inv-split"}, Variant{"opamp-buffer-split"}}) {
    SchematicOptions o;
    if (v.topology == "bjt-ce-divider") o.notes[des(v, "COUT")] = {"10u", "25 V", true, "out"};
    const auto c = build(v);
    const std::string svg = schematic_svg(lay_out(c, placed(v, o)), v.topology + " <stage>");
    for (const auto& el : c.elements()) {
      // An op-amp model's elements are not drawn: its designator is (U1).
      std::string d = el.c.designator;
      if (el.c.role == stages::kRoleDeviceModel) {
        CHECK_MESSAGE(svg.find(">" + d + "<") == std::string::npos, d);
        d = d.substr(0, d.find('.'));
      }
      CHECK_MESSAGE(svg.find(">" + d + "<") != std::string::npos, d);
    }
    // Every colour from the project's palette (draw/palette.hpp).
    CHECK(test::foreign_colours(svg).empty());
    const std::string path = dir + "/" + v.topology + ".svg";
    std::ofstream(path) << svg;
    const auto run = test::render(path, 760, 620, {.dom = true});
    CHECK(run.dom.find("parsererror") == std::string::npos);
    CHECK(run.console.empty());
    REQUIRE(!run.screenshot.empty());
    const auto img = test::decode_png(run.screenshot);
    CHECK(test::distinct_colours(img) > 20);
    CHECK(test::inked_fraction(img) > 0.05);  // strokes and labels on the drawing's own background
  }
  std::filesystem::remove_all(dir);
}
