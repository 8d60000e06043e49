// A circuit as a graph: nets are vertices, components are edges carrying kind, role,
// designator and value. A transistor is two edges (its channel or collector-emitter path,
// and its control pair) that share one designator and name all three pins.
#pragma once
#include <array>
#include <functional>
#include <map>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include <boost/graph/adjacency_list.hpp>

#include "shelfstage/devices/models.hpp"

namespace shelfstage::circuit {

enum class ElementKind { resistor, capacitor, vsource, jfet, bjt };

/// Which branch of a component an edge stands for.
enum class Branch {
  whole,    ///< a two-terminal part: the edge is the part
  main,     ///< transistor drain-source or collector-emitter path (carries the DC current)
  control,  ///< transistor gate-source or base-emitter pair (no DC path for a JFET gate)
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
  double value = 0;        ///< ohms, farads, volts (DC of a source)
  double ac_volts = 0;     ///< AC magnitude of a source (the input gets 1)
  /// Pins in SPICE order: two-terminal (plus, minus); JFET (drain, gate, source);
  /// BJT (collector, base, emitter). Vertex indices.
  std::array<std::size_t, 3> pins{0, 0, 0};
  std::size_t device = 0;  ///< index into Circuit::jfets() or bjts()
};

using Graph = boost::adjacency_list<boost::vecS, boost::vecS, boost::undirectedS, Net, Component>;
using Vertex = boost::graph_traits<Graph>::vertex_descriptor;
using Edge = boost::graph_traits<Graph>::edge_descriptor;

/// One element as the solver and the writer see it: the graph's component with its pins.
struct Element {
  Component c;
  std::size_t pin_count() const { return (c.kind == ElementKind::jfet || c.kind == ElementKind::bjt) ? 3 : 2; }
};

/// A circuit under construction or analysis. Vertex 0 is ground ("0").
class Circuit {
 public:
  Circuit();

  /// The net of that name, created if new. "0" or "gnd" is ground.
  std::size_t net(const std::string& name);
  std::optional<std::size_t> find_net(const std::string& name) const;
  const std::string& net_name(std::size_t v) const { return graph_[v].name; }
  std::size_t net_count() const { return boost::num_vertices(graph_); }

  void resistor(const std::string& designator, const std::string& role, const std::string& a, const std::string& b,
                double ohms);
  void capacitor(const std::string& designator, const std::string& role, const std::string& plus,
                 const std::string& minus, double farads);
  void vsource(const std::string& designator, const std::string& role, const std::string& plus,
               const std::string& minus, double dc_volts, double ac_volts = 0);
  void jfet(const std::string& designator, const std::string& drain, const std::string& gate, const std::string& source,
            const devices::JfetInstance& q);
  void bjt(const std::string& designator, const std::string& collector, const std::string& base,
           const std::string& emitter, const devices::BjtInstance& q);

  /// Every element once (a transistor once, by its main edge), in insertion order.
  const std::vector<Element>& elements() const { return elements_; }
  const std::vector<devices::JfetInstance>& jfets() const { return jfets_; }
  const std::vector<devices::BjtInstance>& bjts() const { return bjts_; }
  const Graph& graph() const { return graph_; }

  /// Changes the value of a two-terminal part (or a source's DC) by designator.
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

  /// Checks the circuit can be solved; throws InputError naming the node or part:
  /// every net has a DC path to ground through resistors, sources and transistor main
  /// paths (capacitors and the JFET gate or BJT base pair do not count, so a gate or base
  /// with nothing but a capacitor on it is reported as floating); no loop made only of
  /// voltage sources; no part with both ends on one net; every value finite and positive.
  void validate() const;

 private:
  void add_edge(std::size_t a, std::size_t b, const Component& c);
  Graph graph_;
  std::map<std::string, std::size_t> names_;
  std::vector<Element> elements_;
  std::vector<devices::JfetInstance> jfets_;
  std::vector<devices::BjtInstance> bjts_;
};

}  // namespace shelfstage::circuit
