// Tests of the schematic: for every stage wiring of the topology table in docs/interface.md
// (built here by hand from the table, in N and P polarity, with and without the optional
// parts), the drawn wires, read back purely as geometry, join exactly the pins the netlist
// puts on each net; no wire crosses a symbol or touches another net; every tee carries a
// junction dot; and the drawing is an SVG that Chromium parses and paints.
#include "shelfstage/draw/schematic.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <numeric>
#include <random>
#include <set>

#include "shelfstage/error.hpp"
#include "support/browser.hpp"
#include "support/palette_check.hpp"

using namespace shelfstage;
using namespace shelfstage::draw;

namespace {

struct Variant {
  std::string topology;
  bool p_type = false;
  bool rs1 = true, rs2 = true;  // the optional split source/emitter parts
};

/// The test bench (supply, signal source behind its resistance, load) and the stage as
/// docs/interface.md's table wires it.
circuit::Circuit build(const Variant& v) {
  circuit::Circuit c;
  c.vsource("VDD", "supply", "vdd", "0", v.p_type ? -12.0 : 12.0);
  c.vsource("VSIG", "signal", "sig", "0", 0.0, 1.0);
  c.resistor("RSIG", "source", "sig", "in", 1e3);
  c.resistor("RL", "load", "out", "0", 10e3);
  const bool bjt = v.topology.starts_with("bjt");
  const std::string in = bjt ? "base" : "gate", common = bjt ? "emitter" : "source", top = bjt ? "collector" : "drain";
  const bool follower = v.topology.ends_with("follower");
  if (v.topology == "jfet-cs-self" || v.topology == "jfet-follower") {
    c.resistor("R1", "RG", in, "0", 1e6);
  } else {
    c.resistor("R1", "R1", "vdd", in, 1e6);
    c.resistor("R2", "R2", in, "0", 470e3);
  }
  c.capacitor("C1", "CIN", "in", in, 100e-9);
  if (follower) {
    c.resistor("R3", bjt ? "RE" : "RS", common, "0", 2.2e3);
    c.capacitor("C2", "COUT", common, "out", 10e-6);
  } else {
    c.resistor("R3", bjt ? "RC" : "RD", "vdd", top, 4.7e3);
    const bool split = v.rs1 && v.rs2;
    if (v.rs1) c.resistor("R4", bjt ? "RE1" : "RS1", common, split ? "x" : "0", 220);
    if (v.rs2) {
      c.resistor("R5", bjt ? "RE2" : "RS2", split ? "x" : common, "0", 1e3);
      c.capacitor("C2", bjt ? "CE" : "CS", split ? "x" : common, "0", 100e-6);
    }
    c.capacitor("C3", "COUT", top, "out", 10e-6);
  }
  const bool grounded = !follower && !v.rs1 && !v.rs2;
  const std::string common_net = grounded ? "0" : common;
  const std::string top_net = follower ? "vdd" : top;
  if (bjt) {
    devices::BjtInstance q;
    q.kind = v.p_type ? devices::DeviceKind::pnp : devices::DeviceKind::npn;
    c.bjt("Q1", top_net, in, common_net, q);
  } else {
    devices::JfetInstance q;
    q.kind = v.p_type ? devices::DeviceKind::pjfet : devices::DeviceKind::njfet;
    q.idss_a = 5e-3;
    q.vp_abs_v = 2;
    c.jfet("Q1", top_net, in, common_net, q);
  }
  return c;
}

std::vector<Variant> variants() {
  std::vector<Variant> v;
  for (bool p : {false, true}) {
    for (const char* t : {"jfet-cs-self", "jfet-cs-divider", "bjt-ce-divider"})
      for (auto [a, b] : {std::pair{true, true}, {false, true}, {true, false}, {false, false}}) v.push_back({t, p, a, b});
    v.push_back({"jfet-follower", p});
    v.push_back({"bjt-follower", p});
  }
  return v;
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
  // Every pin of every element is drawn once, at the net the graph gives it.
  std::size_t expected_pins = 0;
  for (const auto& el : c.elements()) expected_pins += el.pin_count();
  CHECK(s.pins.size() == expected_pins);
  for (const auto& el : c.elements())
    for (std::size_t k = 0; k < el.pin_count(); ++k) {
      const auto it = std::find_if(s.pins.begin(), s.pins.end(), [&](const PlacedPin& p) {
        return p.designator == el.c.designator && p.pin == k;
      });
      REQUIRE_MESSAGE(it != s.pins.end(), el.c.designator, " pin ", k);
      CHECK(it->net == el.c.pins[k]);
    }
  // The same from the Boost graph's side: each edge's ends are nets of its component's pins.
  for (auto [ei, ee] = boost::edges(c.graph()); ei != ee; ++ei) {
    const auto& comp = c.graph()[*ei];
    const auto a = boost::source(*ei, c.graph()), b = boost::target(*ei, c.graph());
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
  // No wire through a symbol's body; no crossing of two nets (our templates need none).
  for (const auto& w : s.wires)
    for (const auto& sym : s.symbols) {
      const double lx = std::min(w.a.x, w.b.x), hx = std::max(w.a.x, w.b.x);
      const double ly = std::min(w.a.y, w.b.y), hy = std::max(w.a.y, w.b.y);
      const bool crosses = lx < sym.body.x1 && hx > sym.body.x0 && ly < sym.body.y1 && hy > sym.body.y0;
      CHECK_MESSAGE(!crosses, "wire of ", c.net_name(w.net), " crosses ", sym.designator);
    }
  for (std::size_t i = 0; i < nw; ++i)
    for (std::size_t j = i + 1; j < nw; ++j) {
      const auto& a = s.wires[i];
      const auto& b = s.wires[j];
      if (a.net == b.net) continue;
      const bool av = std::abs(a.a.x - a.b.x) < 1e-9, bv = std::abs(b.a.x - b.b.x) < 1e-9;
      if (av == bv) continue;
      const Point x = av ? Point{a.a.x, b.a.y} : Point{b.a.x, a.a.y};
      CHECK_MESSAGE(!(on(x, a) && on(x, b)), "nets ", c.net_name(a.net), " and ", c.net_name(b.net), " cross");
    }
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
    const auto s = lay_out(c);
    check_wiring(c, s, v.topology + (v.p_type ? " P" : " N") + (v.rs1 ? " +RS1" : "") + (v.rs2 ? " +RS2" : ""));
  }
}

TEST_CASE("lay_out: parts are ordered along the page: supply on top, ground below, signal left to right") {
  const auto c = build({"jfet-cs-self"});
  const auto s = lay_out(c);
  auto pin_at = [&](const std::string& des, const std::string& net) {
    for (const auto& p : s.pins)
      if (p.designator == des && c.net_name(p.net) == net) return p.at;
    FAIL("no pin ", des, " on ", net);
    return Point{};
  };
  CHECK(pin_at("R3", "vdd").y < pin_at("R3", "drain").y);      // RD: supply above the drain
  CHECK(pin_at("R1", "gate").y < pin_at("R1", "0").y);         // RG: gate above ground
  CHECK(pin_at("C1", "in").x < pin_at("C1", "gate").x);        // CIN: input left of the gate
  CHECK(pin_at("C3", "drain").x < pin_at("C3", "out").x);      // COUT: drain left of the output
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
  SchematicOptions o;
  o.notes["C3"] = {"10u", "25 V", true, "drain"};
  o.notes["C2"] = {"100u", "", true, "x"};
  auto c = build({"jfet-cs-self"});
  auto s = lay_out(c, o);
  auto symbol = [&](const std::string& d) {
    return *std::find_if(s.symbols.begin(), s.symbols.end(), [&](const PlacedSymbol& y) { return y.designator == d; });
  };
  CHECK(symbol("Q1").kind == SymbolKind::njfet);
  CHECK(symbol("C3").kind == SymbolKind::electrolytic);
  CHECK(c.net_name(c.find("C3")->c.pins[symbol("C3").plus_pin]) == "drain");
  CHECK(c.net_name(c.find("C2")->c.pins[symbol("C2").plus_pin]) == "x");
  CHECK(symbol("C1").kind == SymbolKind::capacitor);
  CHECK(symbol("VDD").kind == SymbolKind::dc_source);
  CHECK(symbol("VSIG").kind == SymbolKind::ac_source);
  // The label carries the designator, the role and the note's value.
  CHECK(symbol("C3").label == std::vector<std::string>{"C3 COUT", "10u", "25 V"});
  // Without a note the value is the netlist's, in IEC 60062 code.
  CHECK(symbol("R3").label == std::vector<std::string>{"R3 RD", "4K7"});
  // P-channel and PNP devices, and the negative supply's + terminal at its ground end.
  c = build({"jfet-cs-self", true});
  s = lay_out(c);
  CHECK(symbol("Q1").kind == SymbolKind::pjfet);
  CHECK(c.net_name(c.find("VDD")->c.pins[symbol("VDD").plus_pin]) == "0");
  c = build({"bjt-ce-divider", true});
  s = lay_out(c);
  CHECK(symbol("Q1").kind == SymbolKind::pnp);
  c = build({"bjt-follower"});
  s = lay_out(c);
  CHECK(symbol("Q1").kind == SymbolKind::npn);
}

TEST_CASE("lay_out: what it cannot draw is an input error naming the part") {
  auto c = build({"jfet-cs-self"});
  c.resistor("R9", "RX", "gate", "0", 1e3);
  CHECK_THROWS_WITH_AS(lay_out(c), doctest::Contains("R9"), InputError);
  SchematicOptions o;
  o.notes["C3"] = {"10u", "", true, "gate"};  // C3 is drain to out
  CHECK_THROWS_WITH_AS(lay_out(build({"jfet-cs-self"}), o), doctest::Contains("C3"), InputError);
}

TEST_CASE("schematic_svg: Chromium parses and paints it; every designator is in it") {
  const std::string dir = temp_dir();
  for (const auto& v : {Variant{"jfet-cs-self"}, Variant{"bjt-ce-divider", true}, Variant{"jfet-follower"}}) {
    SchematicOptions o;
    o.notes["C3"] = {"10u", "25 V", true, v.p_type ? "out" : "collector"};
    if (v.topology != "bjt-ce-divider") o.notes.erase("C3");
    const auto c = build(v);
    const std::string svg = schematic_svg(lay_out(c, o), v.topology + " <stage>");
    for (const auto& el : c.elements())
      CHECK_MESSAGE(svg.find(">" + el.c.designator + "<") != std::string::npos, el.c.designator);
    // Every colour from the project's palette (draw/palette.hpp).
    CHECK(test::foreign_colours(svg).empty());
    const std::string path = dir + "/" + v.topology + ".svg";
    std::ofstream(path) << svg;
    CHECK(test::dump_dom(path).find("parsererror") == std::string::npos);
    const auto run = test::render(path, 760, 620);
    CHECK(run.console.empty());
    REQUIRE(!run.screenshot.empty());
    const auto img = test::decode_png(run.screenshot);
    CHECK(test::distinct_colours(img) > 20);
    CHECK(test::inked_fraction(img) > 0.05);  // strokes and labels on the drawing's own background
  }
  std::filesystem::remove_all(dir);
}
