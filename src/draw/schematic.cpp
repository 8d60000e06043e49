// The schematic of a stage: role-keyed placement, rail and trunk wiring from the netlist's
// nets, junctions, and the SVG rendering with our own symbol style.
#include "shelfstage/draw/schematic.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <numbers>
#include <optional>
#include <string>

#include "shelfstage/draw/palette.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::draw {

namespace {

using circuit::ElementKind;
using Side = PlacedSymbol::Side;

constexpr double kRailSupply = 2;   // y of the supply rail
constexpr double kRailGround = 27;  // y of the ground rail
constexpr double kWidth = 36;
constexpr double kUprightShift = 6;    // NOTES 2b
constexpr double kSecondSupply = 4.5;  // NOTES 6: the sheet widens by this for VEE
// NOTES 6: the op-amp's place: the triangle's centre. Its inputs at x - 3.5 (2 above and 2
// below the centre), its output at x + 3.5, the triangle itself from x - 2.5 to x + 2.5.
constexpr Point kOpampAt{20.5, 16};
constexpr double kHeight = 29.5;

constexpr double kForbidden = 1e6;  // a route that must not be drawn
constexpr double kSideways = 0.5;   // a wire leaving a pin across its lead
constexpr double kCrossing = 50;    // two nets crossing without joining (allowed, avoided)

// The project's palette (draw/palette.hpp): ink for the stage, grey for the test bench,
// brick for values.
const char* const kInk = palette::ink;
const char* const kBench = palette::bench;
const char* const kValue = palette::brick;
const char* const kMuted = palette::muted;
const char* const kResistorFill = palette::resistor_fill;
const char* const kDeviceFill = palette::device_fill;

struct Slot {
  double x, y;
  bool vertical;
  Side side;
};

// NOTES 2a: a stage's second transistor: Q2, or Q102, Q202 ... in a chain's stage (the
// number, less the stage's hundreds, is 2).
bool second_device(std::string_view designator) {
  std::size_t digits = designator.size();
  while (digits > 0 && std::isdigit(static_cast<unsigned char>(designator[digits - 1]))) --digits;
  if (digits == designator.size() || designator.size() - digits > 6) return false;
  return std::stoi(std::string(designator.substr(digits))) % 100 == 2;
}

// NOTES 2b: how the template stands for a stage: whether it has a second transistor and
// whether that one's emitter is off the rails (the same-polarity pair), which takes a wider
// sheet: the bench on the right moves over by kUprightShift.
struct Frame {
  bool paired = false;
  bool upright2 = false;
  double shift() const { return upright2 ? kUprightShift : 0.0; }
};

// NOTES 2: the template's own places (the bench and the transistors); the stage's parts from
// the caller. Grid units; see the header for the rules.
std::optional<Slot> slot_for(std::string_view role, std::string_view designator, const Frame& f,
                             const SchematicOptions& o) {
  const double dx = f.shift();
  if (role == "supply" && designator != "VDD") return Slot{31 + kSecondSupply + dx, 16, true, Side::right};
  if (role == "supply") return Slot{31 + dx, 16, true, Side::right};
  if (role == "signal") return Slot{2, 18, true, Side::right};
  if (role == "source") return Slot{5, 14, false, Side::above};
  if (role == "load") return Slot{28 + dx, 21, true, Side::right};
  if (role == "load capacitance") return Slot{33 + dx, 21, true, Side::right};
  // NOTES 2a: the second transistor up and to the right of the first, its base level with
  // the end of the first's load resistor (x 19, y 8), its collector at x 24: a coupling
  // capacitor's length (4) short of the load at x 28. The collector's net then runs down at
  // x 24, past the first's right side, so both transistors carry their labels on the left.
  // NOTES 2b: standing upright (its emitter on its own resistor), it moves over to x 25, its
  // label under its base lead clear of the first; the stage's places run its collector's net
  // down at x 30, a coupling capacitor's length short of the load, moved over to x 34.
  if (role == "device" && second_device(designator))
    return f.upright2 ? Slot{25, 8, true, Side::left} : Slot{23, 8, true, Side::left};
  if (role == "device") return Slot{18, 12, true, f.paired ? Side::left : Side::right};
  const auto it = o.places.find(role);
  if (it == o.places.end()) return std::nullopt;
  const Place& p = it->second;
  const Side side = p.label == 'l'   ? Side::left
                    : p.label == 'a' ? Side::above
                    : p.label == 'b' ? Side::below
                                     : Side::right;
  return Slot{p.x, p.y, p.vertical, side};
}

// NOTES 3: which end of a two-terminal part goes on top (vertical) or left (horizontal).
double vertical_rank(std::string_view net, const SchematicOptions& o) {
  if (net == "vdd") return 0;
  if (net == "drain" || net == "collector") return 1;
  if (net == "gate" || net == "base" || net == "sig" || net == "in" || net == "out") return 2;
  if (net == "plus" || net == "minus") return 2;  // an op-amp's inputs
  if (net == "opout") return 1;
  if (net == "source" || net == "emitter") return 3;
  if (net == "0") return 5;
  const auto it = o.net_levels.find(net);
  return it == o.net_levels.end() ? 2.5 : it->second;
}

double horizontal_rank(std::string_view net, const SchematicOptions& o) {
  if (net == "sig") return 0;
  if (net == "in") return 1;
  if (net == "gate" || net == "base" || net == "plus" || net == "minus") return 2;
  if (net == "drain" || net == "collector" || net == "source" || net == "emitter" || net == "opout") return 3;
  if (net == "out") return 4;
  const auto it = o.net_orders.find(net);
  return it == o.net_orders.end() ? 2.5 : it->second;
}

bool is_rail(std::string_view net) { return net == "vdd" || net == "0"; }

bool same(Point a, Point b) { return std::abs(a.x - b.x) < 1e-9 && std::abs(a.y - b.y) < 1e-9; }

/// Whether p lies on the segment (ends included).
bool on_segment(Point p, const Wire& w) {
  const double eps = 1e-9;
  if (std::abs(w.a.x - w.b.x) < eps)
    return std::abs(p.x - w.a.x) < eps && p.y >= std::min(w.a.y, w.b.y) - eps && p.y <= std::max(w.a.y, w.b.y) + eps;
  return std::abs(p.y - w.a.y) < eps && p.x >= std::min(w.a.x, w.b.x) - eps && p.x <= std::max(w.a.x, w.b.x) + eps;
}

bool crosses_box(const Wire& w, const Box& b) {
  // The segment (a point across its thin dimension) meets the open interior of the box.
  const double lo_x = std::min(w.a.x, w.b.x), hi_x = std::max(w.a.x, w.b.x);
  const double lo_y = std::min(w.a.y, w.b.y), hi_y = std::max(w.a.y, w.b.y);
  return lo_x < b.x1 && hi_x > b.x0 && lo_y < b.y1 && hi_y > b.y0;
}

/// Two segments of different nets: touching (sharing any point) is forbidden unless it is a
/// clean perpendicular crossing of two interiors, which is only discouraged.
double conflict(const Wire& a, const Wire& b) {
  const bool a_vert = std::abs(a.a.x - a.b.x) < 1e-9, b_vert = std::abs(b.a.x - b.b.x) < 1e-9;
  if (a_vert == b_vert) {
    // Parallel: forbidden if collinear and overlapping.
    if (a_vert && std::abs(a.a.x - b.a.x) < 1e-9)
      return std::max(std::min(a.a.y, a.b.y), std::min(b.a.y, b.b.y)) <=
                     std::min(std::max(a.a.y, a.b.y), std::max(b.a.y, b.b.y)) + 1e-9
                 ? kForbidden
                 : 0;
    if (!a_vert && std::abs(a.a.y - b.a.y) < 1e-9)
      return std::max(std::min(a.a.x, a.b.x), std::min(b.a.x, b.b.x)) <=
                     std::min(std::max(a.a.x, a.b.x), std::max(b.a.x, b.b.x)) + 1e-9
                 ? kForbidden
                 : 0;
    return 0;
  }
  const Wire& v = a_vert ? a : b;
  const Wire& h = a_vert ? b : a;
  const Point x{v.a.x, h.a.y};
  if (!on_segment(x, v) || !on_segment(x, h)) return 0;
  const bool end = same(x, v.a) || same(x, v.b) || same(x, h.a) || same(x, h.b);
  return end ? kForbidden : kCrossing;
}

struct Router {
  std::vector<std::size_t> free_nets;  ///< NOTES 6: nets on an op-amp pin
  std::vector<PlacedPin> opamp_pins;   ///< ... and those pins
  std::vector<Box> bodies;
  std::vector<PlacedPin> all_pins;
  std::vector<Wire> done;  // wires of nets already routed

  double segment_cost(const Wire& w) const {
    double c = 0;
    for (const auto& b : bodies)
      if (crosses_box(w, b)) c += kForbidden;
    for (const auto& p : all_pins)
      if (p.net != w.net && on_segment(p.at, w)) c += kForbidden;
    for (const auto& o : done) c += conflict(w, o);
    return c;
  }

  /// Wires for one net along a trunk (vertical at `at` when vertical, else horizontal),
  /// with their cost; an empty result with a forbidden cost when impossible.
  std::pair<std::vector<Wire>, double> along(const std::vector<PlacedPin>& pins, bool vertical, double at,
                                             std::size_t net) const {
    std::vector<Wire> wires;
    double cost = 0;
    double lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (const auto& p : pins) {
      const double along_coord = vertical ? p.at.y : p.at.x;
      lo = std::min(lo, along_coord);
      hi = std::max(hi, along_coord);
      const Point foot = vertical ? Point{at, p.at.y} : Point{p.at.x, at};
      if (!same(foot, p.at)) {
        wires.push_back({p.at, foot, net});
        const Point d{foot.x - p.at.x, foot.y - p.at.y};
        const double len = std::abs(d.x) + std::abs(d.y);
        const Point u{d.x / len, d.y / len};
        if (same(u, Point{-p.dir.x, -p.dir.y}))
          cost += kForbidden;
        else if (!same(u, p.dir))
          cost += kSideways;
      }
    }
    for (const auto& p : pins) {
      // A pin on the trunk: the trunk must not run back over the pin's own symbol.
      const Point foot = vertical ? Point{at, p.at.y} : Point{p.at.x, at};
      if (!same(foot, p.at)) continue;
      const double c = vertical ? p.at.y : p.at.x;
      const bool goes_minus = lo<c - 1e-9, goes_plus = hi> c + 1e-9;
      const double back = vertical ? -p.dir.y : -p.dir.x;  // the trunk direction over the symbol
      const bool along_axis = vertical ? std::abs(p.dir.x) < 1e-9 : std::abs(p.dir.y) < 1e-9;
      if (along_axis) {
        if ((back < 0 && goes_minus) || (back > 0 && goes_plus)) cost += kForbidden;
      } else if (goes_minus || goes_plus) {
        cost += kSideways;
      }
    }
    if (hi > lo) {
      // Split the trunk where stubs land so that every T is a segment end (simpler tests).
      std::vector<double> cuts{lo, hi};
      for (const auto& w : wires) cuts.push_back(vertical ? w.b.y : w.b.x);
      for (const auto& p : pins) cuts.push_back(vertical ? p.at.y : p.at.x);
      std::sort(cuts.begin(), cuts.end());
      cuts.erase(std::unique(cuts.begin(), cuts.end(), [](double a, double b) { return std::abs(a - b) < 1e-9; }),
                 cuts.end());
      for (std::size_t i = 0; i + 1 < cuts.size(); ++i) {
        if (cuts[i] < lo - 1e-9 || cuts[i + 1] > hi + 1e-9) continue;
        wires.push_back(vertical ? Wire{{at, cuts[i]}, {at, cuts[i + 1]}, net}
                                 : Wire{{cuts[i], at}, {cuts[i + 1], at}, net});
      }
    }
    for (const auto& w : wires) cost += std::abs(w.a.x - w.b.x) + std::abs(w.a.y - w.b.y) + segment_cost(w);
    return {wires, cost};
  }
};

SymbolKind symbol_kind(const circuit::Circuit& c, const circuit::Component& e, const PartNote* note) {
  switch (e.kind) {
    case ElementKind::resistor: return SymbolKind::resistor;
    case ElementKind::capacitor: return note && note->polarised ? SymbolKind::electrolytic : SymbolKind::capacitor;
    case ElementKind::vsource: return e.role == "supply" ? SymbolKind::dc_source : SymbolKind::ac_source;
    case ElementKind::jfet:
      return c.jfets()[e.device].kind == devices::DeviceKind::pjfet ? SymbolKind::pjfet : SymbolKind::njfet;
    case ElementKind::bjt:
      return c.bjts()[e.device].kind == devices::DeviceKind::pnp ? SymbolKind::pnp : SymbolKind::npn;
    case ElementKind::isource:
    case ElementKind::vccs:
    case ElementKind::vcvs:
    case ElementKind::diode: break;  // macro-model elements: never drawn (NOTES 6)
  }
  return SymbolKind::resistor;
}

std::string default_value(const circuit::Component& e) {
  switch (e.kind) {
    case ElementKind::resistor: return units::format_code(e.value, units::Unit::ohm);
    case ElementKind::capacitor: return units::format_code(e.value, units::Unit::farad);
    case ElementKind::vsource:
      return e.role == "supply" ? units::format_value(e.value, units::Unit::volt)
                                : units::format_value(e.ac_volts, units::Unit::volt) + " ac";
    default: return {};
  }
}

bool is_transistor(SymbolKind k) {
  return k == SymbolKind::njfet || k == SymbolKind::pjfet || k == SymbolKind::npn || k == SymbolKind::pnp;
}

// NOTES 3a: a stage turned over on its rail: the supply's sign against the polarity of its
// first transistor (a pair's second is of the other polarity and does not turn the stage).
bool turned_over(const circuit::Circuit& c) {
  double rail = 1;
  if (const auto* vdd = c.find("VDD")) rail = vdd->c.value < 0 ? -1 : 1;
  for (const auto& el : c.elements()) {
    if (second_device(el.c.designator)) continue;
    if (el.c.kind == ElementKind::jfet)
      return (c.jfets()[el.c.device].kind == devices::DeviceKind::pjfet) == (rail > 0);
    if (el.c.kind == ElementKind::bjt) return (c.bjts()[el.c.device].kind == devices::DeviceKind::pnp) == (rail > 0);
  }
  return false;
}

bool is_bench_role(std::string_view role) {
  return role == "supply" || role == "signal" || role == "source" || role == "load" || role == "load capacitance";
}

/// What placing a part needs: the circuit, the caller's options, whether the stage is
/// turned over, and the pins placed so far.
struct Placing {
  const circuit::Circuit& c;
  const SchematicOptions& o;
  bool flipped = false;
  Frame frame;  ///< NOTES 2a, 2b
  std::vector<PlacedPin>& pins;

  /// A net as the stage's N frame names it (the rails swap places in a turned-over stage).
  std::string_view n_frame(std::string_view net) const {
    if (!flipped) return net;
    if (net == "vdd") return "0";
    if (net == "0") return "vdd";
    return net;
  }
};

/// The slot of a part (NOTES 2), mirrored top to bottom when `mirrored` (NOTES 3a); an
/// InputError when neither the template nor the stage places its role.
Slot slot_of(const Placing& pl, const circuit::Component& e, bool mirrored) {
  auto slot = slot_for(e.role, e.designator, pl.frame, pl.o);
  if (slot && mirrored) {
    slot->y = kRailSupply + kRailGround - slot->y;
    if (slot->side == Side::above)
      slot->side = Side::below;
    else if (slot->side == Side::below)
      slot->side = Side::above;
  }
  if (!slot)
    throw InputError(
        fmt::format("schematic: no place for {} (role '{}'); neither the drawing template nor the stage places it",
                    e.designator, e.role));
  return *slot;
}

/// A transistor's pins and body.
void place_transistor(const Placing& pl, PlacedSymbol& sym, const circuit::Component& e, bool mirrored) {
  const Point q = sym.centre;
  // Pins in SPICE order: drain/collector on top, gate/base to the left, source/emitter below
  // (the other way up in a turned-over stage). A transistor whose source or emitter sits on
  // the supply (a pair's complementary second device) stands the other way up, that terminal
  // toward its rail.
  const bool common_on_supply = pl.n_frame(pl.c.net_name(e.pins[2])) == "vdd";
  const bool upside_down = mirrored != common_on_supply;
  const double m = upside_down ? -1 : 1;
  sym.flipped = upside_down;
  pl.pins.push_back({e.designator, 0, e.pins[0], {q.x + 1, q.y - 2 * m}, {0, -m}});
  pl.pins.push_back({e.designator, 1, e.pins[1], {q.x - 2, q.y}, {-1, 0}});
  pl.pins.push_back({e.designator, 2, e.pins[2], {q.x + 1, q.y + 2 * m}, {0, m}});
  sym.body = {q.x - 1.2, q.y - 1.6, q.x + 1.85, q.y + 1.6};
}

/// A two-terminal part's pins (its ends ordered as NOTES 3 ranks their nets), body and +
/// terminal.
void place_two_terminal(const Placing& pl, PlacedSymbol& sym, const circuit::Component& e, const PartNote* note,
                        bool mirrored) {
  const Point q = sym.centre;
  const std::string n0 = pl.c.net_name(e.pins[0]), n1 = pl.c.net_name(e.pins[1]);
  // A mirrored part ranks its ends as the N frame does, upside down.
  auto v_rank = [&](const std::string& n) {
    return mirrored ? 5.0 - vertical_rank(pl.n_frame(n), pl.o) : vertical_rank(n, pl.o);
  };
  sym.first_end = sym.vertical ? (v_rank(n0) <= v_rank(n1) ? 0 : 1)
                               : (horizontal_rank(n0, pl.o) <= horizontal_rank(n1, pl.o) ? 0 : 1);
  const std::size_t second = 1 - sym.first_end;
  const Point d = sym.vertical ? Point{0, 1} : Point{1, 0};
  pl.pins.push_back({e.designator, sym.first_end, e.pins[sym.first_end], {q.x - 2 * d.x, q.y - 2 * d.y}, {-d.x, -d.y}});
  pl.pins.push_back({e.designator, second, e.pins[second], {q.x + 2 * d.x, q.y + 2 * d.y}, d});
  sym.body =
      sym.vertical ? Box{q.x - 0.6, q.y - 1.3, q.x + 0.6, q.y + 1.3} : Box{q.x - 1.3, q.y - 0.6, q.x + 1.3, q.y + 0.6};
  if (sym.kind == SymbolKind::ac_source || sym.kind == SymbolKind::dc_source)
    sym.body = {q.x - 1, q.y - 1.2, q.x + 1, q.y + 1.2};
  // The + terminal: a source's first pin when its value is positive (SPICE: plus,
  // minus); an electrolytic's pin on the noted net.
  if (sym.kind == SymbolKind::dc_source) sym.plus_pin = e.value >= 0 ? 0 : 1;
  if (sym.kind == SymbolKind::electrolytic) {
    if (n0 == note->plus_net)
      sym.plus_pin = 0;
    else if (n1 == note->plus_net)
      sym.plus_pin = 1;
    else
      throw InputError(
          fmt::format("schematic: {} is polarised with its + lead on net '{}', which is not one of "
                      "its nets ({}, {})",
                      e.designator, note->plus_net, n0, n1));
  }
}

/// Labels: designator (and role), value, detail.
void label(PlacedSymbol& sym, const circuit::Component& e, const PartNote* note) {
  std::string first = e.designator;
  if (!sym.bench && e.role != "device" && e.role != "supply" && e.role != e.designator) first += " " + e.role;
  sym.label.push_back(first);
  const std::string value = note && !note->value.empty() ? note->value : default_value(e);
  if (!value.empty()) sym.label.push_back(value);
  if (note && !note->detail.empty()) sym.label.push_back(note->detail);
}

/// One part's symbol at its slot, its pins added to pl.pins.
PlacedSymbol place(const Placing& pl, const circuit::Component& e) {
  const bool mirrored = pl.flipped && !is_bench_role(e.role);
  const Slot slot = slot_of(pl, e, mirrored);
  const auto it = pl.o.notes.find(e.designator);
  const PartNote* note = it == pl.o.notes.end() ? nullptr : &it->second;
  PlacedSymbol sym;
  sym.designator = e.designator;
  sym.role = e.role;
  sym.kind = symbol_kind(pl.c, e, note);
  sym.centre = {slot.x, slot.y};
  sym.vertical = slot.vertical;
  sym.label_side = slot.side;
  sym.bench = std::find(pl.o.bench.begin(), pl.o.bench.end(), e.designator) != pl.o.bench.end();
  if (is_transistor(sym.kind))
    place_transistor(pl, sym, e, mirrored);
  else
    place_two_terminal(pl, sym, e, note, mirrored);
  label(sym, e, note);
  return sym;
}

/// NOTES 6: an op-amp's macro-model in the netlist: its designator and its pins' nets.
struct OpampFound {
  std::string designator;
  std::size_t plus = 0, minus = 0, out = 0, v_pos = 0, v_neg = 0;
};

constexpr std::string_view kDeviceModel = "device model";

std::vector<OpampFound> find_opamps(const circuit::Circuit& c) {
  std::vector<OpampFound> out;
  for (const auto& el : c.elements()) {
    const std::string& d = el.c.designator;
    if (el.c.role != kDeviceModel || d.size() < 5 || !d.ends_with(".VOS")) continue;
    OpampFound m;
    m.designator = d.substr(0, d.size() - 4);
    m.plus = el.c.pins[1];
    const auto* g = c.find(m.designator + ".G1");
    const auto* r = c.find(m.designator + ".ROUT");
    const auto* hi = c.find(m.designator + ".VCLP");
    const auto* lo = c.find(m.designator + ".VCLN");
    if (!g || !r || !hi || !lo)
      throw InputError(
          fmt::format("schematic: the op-amp model {} lacks the elements that name its pins", m.designator));
    m.minus = g->c.pins[3];
    m.out = r->c.pins[1];
    m.v_pos = hi->c.pins[0];
    m.v_neg = lo->c.pins[1];
    out.push_back(std::move(m));
  }
  return out;
}

/// NOTES 6: the - input goes on top unless the signal enters on the + input: the + input is
/// on the input ("in": a chain's later stage, fed by the stage before), or a part of the
/// stage's joins the input to it.
bool minus_on_top(const circuit::Circuit& c, const OpampFound& m) {
  const auto in = c.find_net("in");
  if (!in) return true;
  if (m.plus == *in) return false;
  for (const auto& el : c.elements()) {
    const auto& e = el.c;
    const bool two_ends = e.kind == ElementKind::resistor || e.kind == ElementKind::capacitor;
    if (!two_ends || is_bench_role(e.role) || e.role == kDeviceModel) continue;
    if ((e.pins[0] == *in && e.pins[1] == m.plus) || (e.pins[1] == *in && e.pins[0] == m.plus)) return false;
  }
  return true;
}

/// A rail's name on an op-amp's supply lead: empty for ground (its sign is drawn).
std::string rail_name(const std::string& net) {
  if (net == "0") return {};
  std::string up = net;
  for (char& ch : up) ch = static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
  return up;
}

/// NOTES 6: the op-amp's symbol at the template's place, its pins in pl.pins.
PlacedSymbol place_opamp(const Placing& pl, const OpampFound& m) {
  PlacedSymbol sym;
  sym.designator = m.designator;
  sym.role = "device";
  sym.kind = SymbolKind::opamp;
  sym.centre = kOpampAt;
  sym.label_side = Side::right;
  sym.minus_on_top = minus_on_top(pl.c, m);
  const Point q = sym.centre;
  const double plus_y = sym.minus_on_top ? q.y + 2 : q.y - 2, minus_y = sym.minus_on_top ? q.y - 2 : q.y + 2;
  // The output first: the terminal mark "out" of a split-supply stage goes on it, not on a
  // buffer's - input, which is the same net.
  pl.pins.push_back({m.designator, 2, m.out, {q.x + 3.5, q.y}, {1, 0}});
  pl.pins.push_back({m.designator, 0, m.plus, {q.x - 3.5, plus_y}, {-1, 0}});
  pl.pins.push_back({m.designator, 1, m.minus, {q.x - 3.5, minus_y}, {-1, 0}});
  // The triangle, its supply leads with their names and the ground sign.
  sym.body = {q.x - 2.9, q.y - 4.4, q.x + 2.7, q.y + 4.5};
  sym.rail_hi = rail_name(pl.c.net_name(m.v_pos));
  sym.rail_lo = rail_name(pl.c.net_name(m.v_neg));
  sym.label.push_back(m.designator);
  const auto it = pl.o.notes.find(m.designator);
  if (it != pl.o.notes.end()) {
    if (!it->second.value.empty()) sym.label.push_back(it->second.value);
    if (!it->second.detail.empty()) sym.label.push_back(it->second.detail);
  }
  return sym;
}

/// The wires of one net (NOTES 4): along its rail, or the cheapest trunk through one of its
/// pins; an InputError when every way crosses a part.
/// The cheapest trunk for pins: through one of them or, for a net on an op-amp pin (NOTES 6),
/// also clear of them.
std::pair<std::vector<Wire>, double> best_trunk(const Router& r, const std::vector<PlacedPin>& pins, std::size_t net,
                                                bool free) {
  std::pair<std::vector<Wire>, double> best{{}, std::numeric_limits<double>::infinity()};
  for (const auto& p : pins)
    for (double off : {0.0, 3.0, -3.0, 4.0, -4.0, 5.0, -5.0, 6.0, -6.0}) {
      if (off != 0 && !free) break;
      for (bool vertical : {true, false}) {
        auto cand = r.along(pins, vertical, (vertical ? p.at.x : p.at.y) + off, net);
        if (cand.second < best.second) best = std::move(cand);
      }
    }
  return best;
}

std::vector<Wire> route_net(const Router& r, const circuit::Circuit& c, const std::vector<PlacedPin>& pins,
                            std::size_t net) {
  std::pair<std::vector<Wire>, double> best{{}, std::numeric_limits<double>::infinity()};
  if (is_rail(c.net_name(net))) {
    best = r.along(pins, false, c.net_name(net) == "vdd" ? kRailSupply : kRailGround, net);
  } else {
    // NOTES 6: a net on an op-amp pin may also run clear of its pins, over or under the
    // triangle (a feedback wire from the output back to an input).
    const bool free = std::find(r.free_nets.begin(), r.free_nets.end(), net) != r.free_nets.end();
    best = best_trunk(r, pins, net, free);
    if (free && best.second >= kForbidden) {
      // One trunk cannot take both a feedback wire and the rest (a buffer's output on a split
      // supply: back under the triangle to its - input, and on to the load): the op-amp's
      // pins on their own trunk, then the rest with its output pin on another.
      std::vector<PlacedPin> own, rest;
      for (const auto& p : pins) {
        const bool of_opamp = std::any_of(r.opamp_pins.begin(), r.opamp_pins.end(), [&](const PlacedPin& q) {
          return q.designator == p.designator && q.pin == p.pin;
        });
        (of_opamp ? own : rest).push_back(p);
      }
      const auto anchor = std::find_if(own.begin(), own.end(), [](const PlacedPin& p) { return p.pin == 2; });
      if (own.size() >= 2 && !rest.empty() && anchor != own.end()) {
        auto a = best_trunk(r, own, net, true);
        rest.push_back(*anchor);
        auto b = best_trunk(r, rest, net, true);
        if (a.second < kForbidden && b.second < kForbidden) {
          best.first = a.first;
          best.first.insert(best.first.end(), b.first.begin(), b.first.end());
          best.second = a.second + b.second;
        }
      }
    }
  }
  if (best.second >= kForbidden)
    throw InputError(fmt::format("schematic: net '{}' cannot be wired without crossing a part", c.net_name(net)));
  return best.first;
}

/// Wires every net: the rails first (NOTES 4), then the rest in net order, each avoiding
/// the wires before it.
void route(const circuit::Circuit& c, Schematic& s) {
  Router r;
  for (const auto& sym : s.symbols) r.bodies.push_back(sym.body);
  r.all_pins = s.pins;
  for (const auto& sym : s.symbols)
    if (sym.kind == SymbolKind::opamp)
      for (const auto& p : s.pins)
        if (p.designator == sym.designator) {
          r.free_nets.push_back(p.net);
          r.opamp_pins.push_back(p);
        }

  std::vector<std::size_t> order;
  for (std::size_t v = 0; v < c.net_count(); ++v)
    if (is_rail(c.net_name(v))) order.push_back(v);
  for (std::size_t v = 0; v < c.net_count(); ++v)
    if (!is_rail(c.net_name(v))) order.push_back(v);

  for (std::size_t net : order) {
    std::vector<PlacedPin> pins;
    for (const auto& p : s.pins)
      if (p.net == net) pins.push_back(p);
    if (pins.size() < 2 && !is_rail(c.net_name(net))) continue;
    if (pins.empty()) continue;
    for (const auto& w : route_net(r, c, pins, net)) {
      s.wires.push_back(w);
      r.done.push_back(w);
    }
  }
}

// NOTES 5: junctions.
void add_junctions(Schematic& s) {
  std::vector<Point> points;
  for (const auto& w : s.wires) points.push_back(w.a), points.push_back(w.b);
  for (const auto& p : s.pins) points.push_back(p.at);
  for (const auto& p : points) {
    if (std::any_of(s.junctions.begin(), s.junctions.end(), [&](Point j) { return same(j, p); })) continue;
    int degree = 0;
    for (const auto& w : s.wires) {
      if (same(w.a, p) || same(w.b, p))
        degree += 1;
      else if (on_segment(p, w))
        degree += 2;
    }
    for (const auto& q : s.pins)
      if (same(q.at, p)) degree += 1;
    if (degree >= 3) s.junctions.push_back(p);
  }
}

/// The stage's input and output terminals, each at the first pin of a stage part on its net.
void add_terminal_marks(const circuit::Circuit& c, const SchematicOptions& o, Schematic& s) {
  auto bench_part = [&](const std::string& d) { return std::find(o.bench.begin(), o.bench.end(), d) != o.bench.end(); };
  for (const auto& [name, text] : {std::pair<std::string, std::string>{"in", "in"}, {"out", "out"}}) {
    const auto v = c.find_net(name);
    if (!v) continue;
    for (const auto& p : s.pins)
      if (p.net == *v && !bench_part(p.designator)) {
        s.marks.push_back({*v, {p.at.x + 0.5 * p.dir.x, p.at.y + 0.5 * p.dir.y}, text, true});
        break;
      }
  }
}

/// The supply rail's name at its left end; the ground sign at the ground rail's left end.
void add_rail_marks(const circuit::Circuit& c, Schematic& s) {
  double supply_left = s.width, ground_left = s.width;
  for (const auto& w : s.wires) {
    if (c.net_name(w.net) == "vdd") supply_left = std::min({supply_left, w.a.x, w.b.x});
    if (c.net_name(w.net) == "0") ground_left = std::min({ground_left, w.a.x, w.b.x});
  }
  if (const auto vdd = c.find_net("vdd")) {
    std::string text = "VDD";
    if (const auto* src = c.find("VDD"))
      text += " " + std::string(src->c.value >= 0 ? "+" : "\u2212") +
              units::format_value(std::abs(src->c.value), units::Unit::volt);
    s.marks.push_back({*vdd, {supply_left, kRailSupply}, text, false});
  }
  // NOTES 6: a second supply's free end, named with its voltage.
  for (const auto& el : c.elements()) {
    if (el.c.role != "supply" || el.c.designator == "VDD") continue;
    for (const auto& p : s.pins)
      if (p.designator == el.c.designator && c.net_name(p.net) != "0")
        s.marks.push_back({p.net,
                           {p.at.x - 1.2, p.at.y - 0.4},
                           fmt::format("{} {}{}", el.c.designator, el.c.value >= 0 ? "+" : "\u2212",
                                       units::format_value(std::abs(el.c.value), units::Unit::volt)),
                           false});
  }
  s.ground_symbol = {ground_left < s.width ? ground_left : 2, kRailGround};
}

}  // namespace

Schematic lay_out(const circuit::Circuit& c, const SchematicOptions& o) {
  Schematic s;
  s.height = kHeight;
  for (std::size_t v = 0; v < c.net_count(); ++v) s.net_names.push_back(c.net_name(v));
  Frame frame;
  for (const auto& el : c.elements()) {
    if ((el.c.kind != ElementKind::bjt && el.c.kind != ElementKind::jfet) || !second_device(el.c.designator)) continue;
    frame.paired = true;
    frame.upright2 = !is_rail(c.net_name(el.c.pins[2]));
  }
  s.width = kWidth + frame.shift();
  for (const auto& el : c.elements())
    if (el.c.role == "supply" && el.c.designator != "VDD") s.width += kSecondSupply;  // NOTES 6
  const Placing pl{c, o, turned_over(c), frame, s.pins};
  // Op-amps first: a net's terminal mark goes on the first pin of a stage part (NOTES 6).
  for (const auto& m : find_opamps(c)) s.symbols.push_back(place_opamp(pl, m));
  for (const auto& el : c.elements())
    if (el.c.role != kDeviceModel) s.symbols.push_back(place(pl, el.c));
  route(c, s);
  add_junctions(s);
  add_terminal_marks(c, o, s);
  add_rail_marks(c, s);
  return s;
}

namespace {

/// Drawing in px: grid point to px, and the small painting helpers.
struct Pen {
  Svg& svg;
  double u;
  Point px(Point g) const { return {g.x * u, g.y * u}; }
  void line(Point a, Point b, const std::string& colour, double width) const {
    svg.line(px(a), px(b), Paint().stroke(colour, width).round());
  }
  void polyline(std::vector<Point> pts, const std::string& colour, double width) const {
    for (auto& p : pts) p = px(p);
    svg.polyline(pts, Paint().stroke(colour, width).fill("none").round());
  }
  void filled(std::vector<Point> pts, const std::string& colour) const {
    for (auto& p : pts) p = px(p);
    svg.polygon(pts, Paint().stroke(colour, 1).fill(colour).round());
  }
};

/// Local frame of a two-terminal part: t along the axis from the first end (-2) to the
/// second (+2), n across it.
struct Local {
  Point c;
  bool vertical;
  Point at(double t, double n) const { return vertical ? Point{c.x + n, c.y + t} : Point{c.x + t, c.y + n}; }
};

void plus_sign(const Pen& pen, Point at, const std::string& colour) {
  pen.line({at.x - 0.18, at.y}, {at.x + 0.18, at.y}, colour, 1.4);
  pen.line({at.x, at.y - 0.18}, {at.x, at.y + 0.18}, colour, 1.4);
}

void arrow(const Pen& pen, Point tip, Point dir, const std::string& colour) {
  const double len = std::hypot(dir.x, dir.y);
  const Point d{dir.x / len, dir.y / len}, n{-d.y, d.x};
  const double l = 0.45, w = 0.22;
  pen.filled({tip,
              {tip.x - l * d.x + w * n.x, tip.y - l * d.y + w * n.y},
              {tip.x - l * d.x - w * n.x, tip.y - l * d.y - w * n.y}},
             colour);
}

/// What every symbol is drawn with: the pen, the part, its ink, the lead width, its local
/// frame, and the side (-1: the first end, +1: the second) its + terminal is on.
struct Stroke {
  const Pen& pen;
  const PlacedSymbol& s;
  std::string ink;
  double w;
  Local L;
  double plus_side;
};

void draw_resistor(const Stroke& k) {
  const Pen& pen = k.pen;
  pen.line(k.L.at(-2, 0), k.L.at(-1.1, 0), k.ink, k.w);
  pen.line(k.L.at(1.1, 0), k.L.at(2, 0), k.ink, k.w);
  const Point a = pen.px(k.L.at(-1.1, -0.38)), b = pen.px(k.L.at(1.1, 0.38));
  pen.svg.rect(std::min(a.x, b.x), std::min(a.y, b.y), std::abs(b.x - a.x), std::abs(b.y - a.y),
               Paint().stroke(k.ink, k.w).fill(k.s.bench ? palette::bench_fill : kResistorFill), {{"rx", "3"}});
}

void draw_capacitor(const Stroke& k) {
  k.pen.line(k.L.at(-2, 0), k.L.at(-0.2, 0), k.ink, k.w);
  k.pen.line(k.L.at(0.2, 0), k.L.at(2, 0), k.ink, k.w);
  k.pen.line(k.L.at(-0.2, -0.8), k.L.at(-0.2, 0.8), k.ink, 3);
  k.pen.line(k.L.at(0.2, -0.8), k.L.at(0.2, 0.8), k.ink, 3);
}

void draw_electrolytic(const Stroke& k) {
  const Pen& pen = k.pen;
  // The + plate an open bar, the - plate a solid one, and a + sign by the + lead.
  const double p = k.plus_side;
  pen.line(k.L.at(-2, 0), k.L.at(-0.4 * 1, 0), k.ink, k.w);
  pen.line(k.L.at(0.4, 0), k.L.at(2, 0), k.ink, k.w);
  const Point a = pen.px(k.L.at(0.18 * p, -0.8)), b = pen.px(k.L.at(0.4 * p, 0.8));
  pen.svg.rect(std::min(a.x, b.x), std::min(a.y, b.y), std::abs(b.x - a.x), std::abs(b.y - a.y),
               Paint().stroke(k.ink, 1.6).fill(palette::blank));
  const Point c = pen.px(k.L.at(-0.18 * p, -0.8)), d = pen.px(k.L.at(-0.4 * p, 0.8));
  pen.svg.rect(std::min(c.x, d.x), std::min(c.y, d.y), std::abs(d.x - c.x), std::abs(d.y - c.y),
               Paint().stroke(k.ink, 1.6).fill(k.ink));
  // The + sign on the side away from the label (across: +x for a vertical part, +y for a
  // horizontal one).
  const double across = k.s.label_side == Side::right || k.s.label_side == Side::below ? -0.75 : 0.75;
  plus_sign(pen, k.L.at(0.95 * p, across), kValue);
}

void draw_dc_source(const Stroke& k) {
  const double p = k.plus_side;
  k.pen.line(k.L.at(-2, 0), k.L.at(-0.22, 0), k.ink, k.w);
  k.pen.line(k.L.at(0.22, 0), k.L.at(2, 0), k.ink, k.w);
  k.pen.line(k.L.at(0.22 * p, -0.85), k.L.at(0.22 * p, 0.85), k.ink, 1.8);  // long plate: +
  k.pen.line(k.L.at(-0.22 * p, -0.45), k.L.at(-0.22 * p, 0.45), k.ink, 4);  // short plate: -
  plus_sign(k.pen, k.L.at(0.75 * p, -0.7), kValue);
}

void draw_ac_source(const Stroke& k) {
  const Pen& pen = k.pen;
  const Point q = k.s.centre;
  pen.line(k.L.at(-2, 0), k.L.at(-0.9, 0), k.ink, k.w);
  pen.line(k.L.at(0.9, 0), k.L.at(2, 0), k.ink, k.w);
  pen.svg.circle(pen.px(q), 0.9 * pen.u, Paint().stroke(k.ink, k.w).fill(palette::blank));
  std::vector<Point> wave;
  for (int i = 0; i <= 16; ++i) {
    const double t = i / 16.0;
    wave.push_back({q.x - 0.55 + 1.1 * t, q.y - 0.3 * std::sin(2 * std::numbers::pi * t)});
  }
  pen.polyline(wave, k.ink, 1.5);
}

void draw_jfet(const Stroke& k) {
  const Pen& pen = k.pen;
  const std::string& ink = k.ink;
  const double w = k.w;
  const Point q = k.s.centre;
  const double m = k.s.flipped ? -1 : 1;  // drain on top, or (turned over) at the bottom
  pen.svg.circle(pen.px({q.x + 0.35, q.y}), 1.45 * pen.u, Paint().stroke(ink, 1.2).fill(kDeviceFill));
  pen.line({q.x - 0.1, q.y - 1.1}, {q.x - 0.1, q.y + 1.1}, ink, 3.2);
  pen.polyline({{q.x - 0.1, q.y - 0.7 * m}, {q.x + 1, q.y - 0.7 * m}, {q.x + 1, q.y - 2 * m}}, ink, w);
  pen.polyline({{q.x - 0.1, q.y + 0.7 * m}, {q.x + 1, q.y + 0.7 * m}, {q.x + 1, q.y + 2 * m}}, ink, w);
  pen.line({q.x - 2, q.y}, {q.x - 0.1, q.y}, ink, w);
  if (k.s.kind == SymbolKind::njfet)
    arrow(pen, {q.x - 0.14, q.y}, {1, 0}, ink);  // N channel: the arrow points into the channel
  else
    arrow(pen, {q.x - 0.75, q.y}, {-1, 0}, ink);
}

void draw_bjt(const Stroke& k) {
  const Pen& pen = k.pen;
  const std::string& ink = k.ink;
  const double w = k.w;
  const Point q = k.s.centre;
  const double m = k.s.flipped ? -1 : 1;  // collector on top, or (turned over) at the bottom
  pen.svg.circle(pen.px({q.x + 0.35, q.y}), 1.45 * pen.u, Paint().stroke(ink, 1.2).fill(kDeviceFill));
  pen.line({q.x - 0.35, q.y - 0.9}, {q.x - 0.35, q.y + 0.9}, ink, 3.2);
  pen.line({q.x - 2, q.y}, {q.x - 0.35, q.y}, ink, w);
  pen.polyline({{q.x - 0.35, q.y - 0.4 * m}, {q.x + 1, q.y - 1.1 * m}, {q.x + 1, q.y - 2 * m}}, ink, w);
  pen.polyline({{q.x - 0.35, q.y + 0.4 * m}, {q.x + 1, q.y + 1.1 * m}, {q.x + 1, q.y + 2 * m}}, ink, w);
  const Point a{q.x - 0.35, q.y + 0.4 * m}, b{q.x + 1, q.y + 1.1 * m};
  const Point d{b.x - a.x, b.y - a.y};
  if (k.s.kind == SymbolKind::npn)
    arrow(pen, {a.x + 0.85 * d.x, a.y + 0.85 * d.y}, d, ink);  // NPN: the emitter arrow points out
  else
    arrow(pen, {a.x + 0.2 * d.x, a.y + 0.2 * d.y}, {-d.x, -d.y}, ink);
}

// NOTES 6: the triangle, its inputs marked - and + inside, the output at the apex, and the
// supply leads from its top and bottom edges: named for their rails (a ground sign for ground).
void draw_opamp(const Stroke& k) {
  const Pen& pen = k.pen;
  const std::string& ink = k.ink;
  const Point q = k.s.centre;
  pen.filled({{q.x - 2.5, q.y - 3.5}, {q.x - 2.5, q.y + 3.5}, {q.x + 2.5, q.y}}, kDeviceFill);
  pen.polyline({{q.x - 2.5, q.y - 3.5}, {q.x - 2.5, q.y + 3.5}, {q.x + 2.5, q.y}, {q.x - 2.5, q.y - 3.5}}, ink, 1.8);
  for (double dy : {-2.0, 2.0}) pen.line({q.x - 3.5, q.y + dy}, {q.x - 2.5, q.y + dy}, ink, k.w);
  pen.line({q.x + 2.5, q.y}, {q.x + 3.5, q.y}, ink, k.w);
  const double top = k.s.minus_on_top ? -2.0 : 2.0;  // the - input's side
  pen.line({q.x - 2.15, q.y + top}, {q.x - 1.55, q.y + top}, ink, 1.8);
  plus_sign(pen, {q.x - 1.85, q.y - top}, ink);
  // Supply leads at the middle of the sloping edges (which fall 0.7 per unit towards the apex).
  const double edge_hi = q.y - 3.5 + 0.7 * 2.5, edge_lo = q.y + 3.5 - 0.7 * 2.5;
  pen.line({q.x, edge_hi}, {q.x, q.y - 3.5}, ink, k.w);
  pen.line({q.x, edge_lo}, {q.x, q.y + 3.25}, ink, k.w);
  auto name = [&](const std::string& rail, double y) {
    const Point p = pen.px({q.x - 0.3, y});
    pen.svg.text(p, rail, 10.5, "end", kMuted, "bold");
  };
  if (!k.s.rail_hi.empty()) name(k.s.rail_hi, q.y - 3.1);
  if (k.s.rail_lo.empty()) {
    const double y = q.y + 3.25;
    pen.line({q.x - 0.5, y}, {q.x + 0.5, y}, ink, 2);
    pen.line({q.x - 0.3, y + 0.22}, {q.x + 0.3, y + 0.22}, ink, 2);
    pen.line({q.x - 0.12, y + 0.44}, {q.x + 0.12, y + 0.44}, ink, 2);
  } else {
    name(k.s.rail_lo, q.y + 3.55);
  }
}

void draw_symbol(const Pen& pen, const PlacedSymbol& s) {
  const Stroke k{
      pen, s, s.bench ? kBench : kInk, 1.8, Local{s.centre, s.vertical}, s.plus_pin == s.first_end ? -1.0 : 1.0};
  switch (s.kind) {
    case SymbolKind::resistor: return draw_resistor(k);
    case SymbolKind::capacitor: return draw_capacitor(k);
    case SymbolKind::electrolytic: return draw_electrolytic(k);
    case SymbolKind::dc_source: return draw_dc_source(k);
    case SymbolKind::ac_source: return draw_ac_source(k);
    case SymbolKind::njfet:
    case SymbolKind::pjfet: return draw_jfet(k);
    case SymbolKind::npn:
    case SymbolKind::pnp: return draw_bjt(k);
    case SymbolKind::opamp: return draw_opamp(k);
  }
}

void draw_label(const Pen& pen, const PlacedSymbol& s) {
  if (s.label.empty()) return;
  const double gap = 0.68;  // line spacing, grid units
  const double n = static_cast<double>(s.label.size());
  Point at;
  std::string anchor = "start";
  const bool transistor = is_transistor(s.kind);
  const bool source = s.kind == SymbolKind::ac_source || s.kind == SymbolKind::dc_source;
  switch (s.label_side) {
    case Side::right:
      at = {s.centre.x + (transistor ? 2.1 : source ? 1.2 : 0.85), s.centre.y - gap * (n - 1) / 2 + 0.2};
      if (s.kind == SymbolKind::opamp) at = {s.centre.x + 0.7, s.centre.y - 3.3};  // over the upper edge
      break;
    case Side::left:
      if (transistor) {
        // Beside the control lead on the common terminal's side (under it, or over it for a
        // symbol standing common terminal up), ending under the circle's left half: the
        // leads and nets on the other side stay clear.
        const double first = s.flipped ? s.centre.y - 1.6 - gap * (n - 1) : s.centre.y + 2.0;
        at = {s.centre.x + 0.5, first};
      } else {
        at = {s.centre.x - 0.85, s.centre.y - gap * (n - 1) / 2 + 0.2};
      }
      anchor = "end";
      break;
    case Side::above:
      at = {s.centre.x, s.centre.y - 0.95 - gap * (n - 1)};
      anchor = "middle";
      break;
    case Side::below:
      at = {s.centre.x, s.centre.y + 1.55};
      anchor = "middle";
      break;
  }
  for (std::size_t i = 0; i < s.label.size(); ++i) {
    const Point p = pen.px({at.x, at.y + gap * static_cast<double>(i)});
    if (i == 0) {
      // Designator in bold, the role after it in a quieter tone.
      const auto space = s.label[0].find(' ');
      const std::string des = s.label[0].substr(0, space);
      const std::string role = space == std::string::npos ? std::string() : s.label[0].substr(space + 1);
      std::string markup = fmt::format(
          "<text x=\"{}\" y=\"{}\" font-size=\"12.5\" text-anchor=\"{}\" fill=\"{}\"><tspan font-weight=\"bold\">{}"
          "</tspan>",
          num(p.x), num(p.y), anchor, s.bench ? kBench : kInk, xml_escape(des));
      if (!role.empty())
        markup += fmt::format("<tspan font-size=\"10.5\" fill=\"{}\"> {}</tspan>", kMuted, xml_escape(role));
      markup += "</text>";
      pen.svg.raw(markup);
    } else if (i == 1) {
      pen.svg.text(p, s.label[i], 12.5, anchor, s.bench ? kBench : kValue, "bold");
    } else {
      pen.svg.text(p, s.label[i], 10.5, anchor, kMuted);
    }
  }
}

}  // namespace

std::string schematic_svg(const Schematic& s, std::string_view title) {
  Svg svg(s.width * s.unit, s.height * s.unit, title);
  const Pen pen{svg, s.unit};
  svg.rect(0, 0, s.width * s.unit, s.height * s.unit, Paint().stroke("none").fill(palette::paper));
  // Wires under the symbols; each net its own group, named for people and tests.
  std::vector<std::size_t> nets;
  for (const auto& w : s.wires)
    if (std::find(nets.begin(), nets.end(), w.net) == nets.end()) nets.push_back(w.net);
  for (std::size_t net : nets) {
    const std::string& name = net < s.net_names.size() ? s.net_names[net] : std::string();
    svg.open("g", Paint().stroke(kInk, 2).round(), {{"data-net", name == "0" ? "ground" : name}});
    for (const auto& w : s.wires)
      if (w.net == net) svg.line(pen.px(w.a), pen.px(w.b), {});
    svg.close();
  }
  for (const auto& j : s.junctions) svg.circle(pen.px(j), 3.6, Paint().stroke("none").fill(kInk));
  for (const auto& sym : s.symbols) {
    svg.open("g", {}, {{"data-part", sym.designator}});
    svg.title(fmt::format("{}", fmt::join(sym.label, " · ")));
    draw_symbol(pen, sym);
    draw_label(pen, sym);
    svg.close();
  }
  // Ground sign.
  const Point g = s.ground_symbol;
  pen.line(g, {g.x, g.y + 0.55}, kInk, 2);
  pen.line({g.x - 0.6, g.y + 0.55}, {g.x + 0.6, g.y + 0.55}, kInk, 2.2);
  pen.line({g.x - 0.38, g.y + 0.8}, {g.x + 0.38, g.y + 0.8}, kInk, 2.2);
  pen.line({g.x - 0.16, g.y + 1.05}, {g.x + 0.16, g.y + 1.05}, kInk, 2.2);
  for (const auto& m : s.marks) {
    if (m.terminal) {
      svg.circle(pen.px(m.at), 0.24 * s.unit, Paint().stroke(kInk, 1.8).fill(palette::blank));
      svg.text(pen.px({m.at.x, m.at.y - 0.5}), m.text, 11.5, "middle", kInk, "bold");
    } else {
      svg.text(pen.px({m.at.x, m.at.y - 0.35}), m.text, 11.5, "start", kInk, "bold");
    }
  }
  return svg.str();
}

}  // namespace shelfstage::draw
