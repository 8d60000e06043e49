// A circuit as a graph: nets are vertices, components are edges carrying kind, role,
// designator and value. A transistor is two edges (its channel or collector-emitter path,
// and its control pair) that share one designator and name all three pins; so is a
// controlled source (its output pair and its control pair, four pins).
// The circuit keeps its nets and elements as plain lists and gives the edges from the
// elements (edges()); the checks that walk the graph build a Boost graph from them
// (netlist.cpp), so this header, included by nearly every file of the library, does not
// carry Boost.Graph's templates into each of them.
#pragma once
#include <array>
#include <functional>
#include <map>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "shelfstage/devices/models.hpp"

namespace shelfstage::circuit {

/// What an element is. isource, vccs, vcvs and diode are SPICE's I, G, E and D elements: the
/// pieces of an op-amp macro-model.
enum class ElementKind { resistor, capacitor, vsource, jfet, bjt, isource, vccs, vcvs, diode };

/// Which branch of a component an edge stands for.
enum class Branch {
  whole,    ///< a two-terminal part: the edge is the part
  main,     ///< transistor drain-source or collector-emitter path (carries the DC current);
            ///< a controlled source's output pair
  control,  ///< transistor gate-source or base-emitter pair (no DC path for a JFET gate); a
            ///< controlled source's control pair (draws no current, no DC path)
};

/// A net.
struct Net {
  std::string name;  ///< "0" is ground
};

/// A component (or one branch of a transistor).
struct Component {
  ElementKind kind = ElementKind::resistor;
  Branch branch = Branch::whole;
  std::string designator;  ///< R1, C2, Q1, VDD
  std::string role;        ///< RD, RS1, CIN, "supply", "signal", "load", "device"
  /// Ohms, farads, volts (DC of a voltage source), amperes (DC of a current source), siemens
  /// (a VCCS's transconductance), volts per volt (a VCVS's gain); unused for a diode.
  double value = 0;
  double ac_volts = 0;  ///< AC magnitude of a source (the input gets 1); amperes for a current source
  /// Pins in SPICE order: two-terminal (plus, minus); diode (anode, cathode); JFET (drain, gate,
  /// source); BJT (collector, base, emitter); VCCS and VCVS (out plus, out minus, control plus,
  /// control minus). Vertex indices.
  std::array<std::size_t, 4> pins{0, 0, 0, 0};
  std::size_t device = 0;  ///< index into Circuit::jfets(), bjts() or diodes()
  /// A resistor of a device's model rather than a part: no thermal noise (SPICE noisy=0).
  bool noiseless = false;
};

/// One edge of the graph: a component (or one branch of a transistor or controlled source)
/// between nets `a` and `b`.
struct Edge {
  std::size_t a = 0, b = 0;
  Component c;
};

/// A junction diode as SPICE's D element with only IS and N given: I = IS (exp(V / (N Vt)) - 1),
/// no series resistance, no capacitance, no breakdown; Vt at the analysis temperature.
struct DiodeModel {
  double is_a = 1e-14;  ///< saturation current (SPICE IS)
  double n = 1;         ///< emission coefficient (SPICE N)
};

/// One element as the solver and the writer see it: the graph's component with its pins.
struct Element {
  Component c;
  std::size_t pin_count() const {
    switch (c.kind) {
      case ElementKind::jfet:
      case ElementKind::bjt: return 3;
      case ElementKind::vccs:
      case ElementKind::vcvs: return 4;
      default: return 2;
    }
  }
};

/// A circuit under construction or analysis. Vertex 0 is ground ("0").
class Circuit {
 public:
  Circuit();

  /// The net of that name, created if new. "0" or "gnd" is ground.
  std::size_t net(const std::string& name);
  std::optional<std::size_t> find_net(const std::string& name) const;
  const std::string& net_name(std::size_t v) const { return nets_[v].name; }
  std::size_t net_count() const { return nets_.size(); }

  /// A resistor; `noiseless` for one inside a device's model (Component::noiseless).
  void resistor(const std::string& designator, const std::string& role, const std::string& a, const std::string& b,
                double ohms, bool noiseless = false);
  void capacitor(const std::string& designator, const std::string& role, const std::string& plus,
                 const std::string& minus, double farads);
  void vsource(const std::string& designator, const std::string& role, const std::string& plus,
               const std::string& minus, double dc_volts, double ac_volts = 0);
  void jfet(const std::string& designator, const std::string& drain, const std::string& gate, const std::string& source,
            const devices::JfetInstance& q);
  void bjt(const std::string& designator, const std::string& collector, const std::string& base,
           const std::string& emitter, const devices::BjtInstance& q);
  /// A current source (SPICE I): dc_amps (and ac_amps in AC) flow from `plus` through the
  /// source to `minus`, so it draws the current out of `plus` and pushes it into `minus`.
  void isource(const std::string& designator, const std::string& role, const std::string& plus,
               const std::string& minus, double dc_amps, double ac_amps = 0);
  /// A voltage-controlled current source (SPICE G): gm (v(ctrl_plus) - v(ctrl_minus)) flows
  /// from `out_plus` through the source to `out_minus`. Linear; the control pair draws nothing.
  void vccs(const std::string& designator, const std::string& role, const std::string& out_plus,
            const std::string& out_minus, const std::string& ctrl_plus, const std::string& ctrl_minus, double gm);
  /// A voltage-controlled voltage source (SPICE E): v(out_plus) - v(out_minus) = gain
  /// (v(ctrl_plus) - v(ctrl_minus)). Linear; a branch current unknown like a voltage source's.
  void vcvs(const std::string& designator, const std::string& role, const std::string& out_plus,
            const std::string& out_minus, const std::string& ctrl_plus, const std::string& ctrl_minus, double gain);
  /// A junction diode (SPICE D with a .model of IS and N), current from anode to cathode.
  void diode(const std::string& designator, const std::string& role, const std::string& anode,
             const std::string& cathode, double is_a, double n);

  /// Every element once (a transistor once, by its main edge), in insertion order.
  const std::vector<Element>& elements() const { return elements_; }
  const std::vector<devices::JfetInstance>& jfets() const { return jfets_; }
  const std::vector<devices::BjtInstance>& bjts() const { return bjts_; }
  const std::vector<DiodeModel>& diodes() const { return diodes_; }
  /// Every edge of the graph, in insertion order (a transistor's or controlled source's main
  /// edge, then its control edge), from elements().
  std::vector<Edge> edges() const;

  /// Changes the value of a two-terminal part (or a source's DC, a controlled source's gm or
  /// gain) by designator.
  void set_value(const std::string& designator, double value);
  /// Finds an element by designator.
  const Element* find(const std::string& designator) const;

  /// How append() carries elements over: the net each pin goes to, which elements come, and
  /// their designators (empty functions: same net, every element, same designator).
  struct Carry {
    std::function<std::string(const Component&, const std::string&)> net;
    std::function<bool(const Component&)> keep;
    std::function<std::string(const Component&)> designator;
  };
  /// Appends the elements of `from` to this circuit (roles, values and devices kept) as
  /// `carry` says. The nets' DC paths are not checked until validate().
  void append(const Circuit& from, const Carry& carry);
  /// Adds one element of `from` (kind, role, value, AC magnitude and device kept) as
  /// `designator` on the nets named by `pins` (SPICE order; the unused ones ignored).
  void copy_element(const Circuit& from, const Component& e, const std::string& designator,
                    const std::array<std::string, 4>& pins);

  /// Checks the circuit can be solved; throws InputError naming the node or part:
  /// every net has a DC path to ground through resistors, voltage sources, VCVS outputs,
  /// diodes and transistor main paths (capacitors, current sources, VCCS outputs, the control
  /// pairs of controlled sources and the JFET gate or BJT base pair do not count, so a gate
  /// or base with nothing but a capacitor on it is reported as floating); no loop made only
  /// of voltage sources and VCVS outputs; no part with both ends (or a controlled source with
  /// both output or both control pins) on one net; every value finite, resistors, capacitors
  /// and a diode's IS and N positive.
  void validate() const;

 private:
  void controlled(ElementKind kind, const std::string& designator, const std::string& role, const std::string& out_plus,
                  const std::string& out_minus, const std::string& ctrl_plus, const std::string& ctrl_minus,
                  double value);
  std::vector<Net> nets_;
  std::map<std::string, std::size_t> names_;
  std::vector<Element> elements_;
  std::vector<devices::JfetInstance> jfets_;
  std::vector<devices::BjtInstance> bjts_;
  std::vector<DiodeModel> diodes_;
};

}  // namespace shelfstage::circuit
