// The schematic of a stage, drawn from its netlist graph: each component placed at the spot a
// per-role template gives it, every net wired orthogonally between exactly the pins the graph
// puts on it, and the drawing rendered as SVG with our own symbol style.
//
// NOTES
//  1. Geometry is in grid units (one unit = Schematic::unit px); every pin sits on the grid.
//  2. Placement is keyed by the component's role: the bench's ("supply", "signal", "source",
//     "load", "load capacitance") and the transistor ("device") have fixed places here; the
//     stage's own parts take the places the caller gives (SchematicOptions::places, from the
//     topology's roles). A role without a place is an InputError naming it.
//  2a. A stage with two transistors (a feedback pair): the second (Q2; Q102, Q202 ... in a
//     chain's stage) has its own place up and to the right of the first, its base level with
//     the first's main terminal, its collector toward the load; a transistor whose emitter or
//     source sits on the supply stands that terminal up, toward its rail, and is drawn as
//     its own kind (NPN or PNP). Both carry their labels on the left, beside the base lead on
//     the common terminal's side, where the nets around them leave room.
//  2b. A second transistor whose emitter is on neither rail (the same-polarity pair: Q2's
//     emitter on its own resistor) stands as the first does, collector toward the supply, a
//     column further right; its collector's net runs down on its right and the feedback from
//     it crosses Q2's emitter leg once for each part (no drawing of that graph without a
//     crossing keeps both transistors upright and the input on the left). The bench on the
//     right (load, supply) moves over to make room, and the sheet widens with it.
//  3. A two-terminal part's ends are ordered by a rank of their nets: vertically the supply
//     on top, ground at the bottom (an inner net at the level the caller gives); horizontally
//     along the signal path (source, input, control pin, the stage's output pin, output; an
//     inner net at the place the caller gives).
//  3a. A stage turned over on its rail (its first transistor a P device on a positive supply,
//     an N device on a negative one: stages::Rail) is drawn as people draw it: the stage's
//     own parts mirrored top to bottom (source or emitter toward the + rail on top, drain or
//     collector toward ground), the bench (supply, signal source, load) where it always is.
//  4. The supply net and ground are rails (horizontal lines at fixed heights) that every pin
//     on them reaches by a vertical wire. Any other net is one straight trunk (vertical or
//     horizontal, through the span of its pins' projections) with a straight perpendicular
//     stub from each pin; the trunk is the one of least wire length among those through a
//     pin, a stub or trunk that leaves a pin back over its own symbol or crosses a symbol's
//     body is refused, and one that leaves a pin sideways costs a little.
//  5. A junction dot marks every point where three or more wire ends, pins or pass-throughs
//     meet; nothing else joins (wires of different nets never touch).
//  6. An op-amp is one symbol: the elements of its macro-model (role "device model", named
//     "<U>.<element>") are not drawn; the model's own elements give its pins' nets (the +
//     input behind <U>.VOS, the - input of <U>.G1, the output after <U>.ROUT, the rails of
//     <U>.VCLP and <U>.VCLN). The triangle stands at the template's place with its inputs on
//     the left (the one the signal enters on top: + for a non-inverting stage or a buffer,
//     - for an inverting one, as textbooks draw them), the output at the apex on the right;
//     its supply pins are short leads named for their rails (a ground sign for ground), not
//     wired: every rail is drawn once, at the top and the bottom of the sheet. A net on an
//     op-amp pin may run its trunk clear of the pins (over or under the triangle: a feedback
//     wire). A second supply (VEE of a split supply) stands right of the first, named at its
//     free end.
#pragma once
#include <cstddef>
#include <map>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/draw/svg.hpp"

namespace shelfstage::draw {

/// What the drawing says about a part beyond the netlist.
struct PartNote {
  std::string value;       ///< "4k7"; empty: the netlist value in IEC 60062 code
  std::string detail;      ///< a further line: recipe "4k7+150", device type, "source"
  bool polarised = false;  ///< capacitors: an electrolytic (drawn with a filled - plate and +)
  std::string plus_net;    ///< polarised: the net its + lead goes to (must be one of its pins' nets)
};

/// Where a part of the stage goes (grid units; see NOTES 2).
struct Place {
  double x = 0, y = 0;
  bool vertical = true;  ///< two-terminal parts: drawn along y
  char label = 'r';      ///< label side: 'l'eft, 'r'ight, 'a'bove, 'b'elow
};

struct SchematicOptions {
  std::map<std::string, PartNote> notes;  ///< by designator
  /// The stage's parts' places by role, as an N device on a positive rail has them (a
  /// turned-over stage is mirrored here).
  std::map<std::string, Place, std::less<>> places;
  /// Heights of the stage's inner nets in the ranking of NOTES 3 (the supply 0, the main
  /// terminal 1, the control pin 2, the common terminal 3, ground 5).
  std::map<std::string, double, std::less<>> net_levels;
  /// Places of the stage's inner nets along the signal path, left to right (NOTES 3: the
  /// signal 0, the input 1, the control pin 2, the output terminal 3, the output 4).
  std::map<std::string, double, std::less<>> net_orders;
  /// Designators drawn in the muted style of the test bench (signal source, its resistance,
  /// the load); their labels say what they stand for.
  std::vector<std::string> bench = {"VSIG", "RSIG", "RL", "CL"};
};

enum class SymbolKind { resistor, capacitor, electrolytic, njfet, pjfet, npn, pnp, dc_source, ac_source, opamp };

/// An axis-aligned box in grid units.
struct Box {
  double x0 = 0, y0 = 0, x1 = 0, y1 = 0;
  bool contains(Point p, double margin = 0) const {
    return p.x > x0 - margin && p.x < x1 + margin && p.y > y0 - margin && p.y < y1 + margin;
  }
};

struct PlacedSymbol {
  std::string designator, role;
  SymbolKind kind = SymbolKind::resistor;
  Point centre;
  bool vertical = true;            ///< two-terminal parts: along y
  std::size_t first_end = 0;       ///< pin index at the top (vertical) or left (horizontal) end
  std::size_t plus_pin = 0;        ///< electrolytic and sources: the pin of the + terminal
  Box body;                        ///< no wire may cross it
  std::vector<std::string> label;  ///< designator line, value, detail
  enum class Side { left, right, above, below } label_side = Side::right;
  bool bench = false;
  bool flipped = false;  ///< transistors: drawn upside down (source or emitter on top)
  /// An op-amp (NOTES 6): the - input on top (else the + input), and the names of the rails
  /// its supply pins go to ("VDD", "VEE"; empty: ground, drawn as its sign).
  bool minus_on_top = false;
  std::string rail_hi, rail_lo;
};

struct PlacedPin {
  std::string designator;
  /// Index into the component's pins (SPICE order); an op-amp's: 0 the + input, 1 the -
  /// input, 2 the output.
  std::size_t pin = 0;
  std::size_t net = 0;  ///< vertex index in the circuit
  Point at;
  Point dir;  ///< unit vector along the lead, away from the symbol
};

struct Wire {
  Point a, b;
  std::size_t net = 0;
};

/// A labelled terminal or rail name drawn on a net.
struct NetMark {
  std::size_t net = 0;
  Point at;
  std::string text;
  bool terminal = false;  ///< an open circle (the stage's input or output)
};

struct Schematic {
  double unit = 20;              ///< px per grid unit
  double width = 0, height = 0;  ///< grid units, margins included
  std::vector<PlacedSymbol> symbols;
  std::vector<PlacedPin> pins;
  std::vector<Wire> wires;
  std::vector<Point> junctions;
  std::vector<NetMark> marks;
  Point ground_symbol;                 ///< where the ground sign hangs from the ground rail
  std::vector<std::string> net_names;  ///< by net index
};

/// Places and wires the circuit. Throws InputError for a role the template does not know, a
/// component of a kind it cannot draw, or a polarised note whose plus_net is not on the part.
Schematic lay_out(const circuit::Circuit& circuit, const SchematicOptions& options = {});

/// The drawing as one <svg> document; `title` is its accessible name.
std::string schematic_svg(const Schematic& s, std::string_view title);

}  // namespace shelfstage::draw
