// The circuit graph: nets as vertices, parts as edges; validation before anything is solved.
#include "shelfstage/circuit/netlist.hpp"

#include <boost/graph/adjacency_list.hpp>
#include <boost/graph/connected_components.hpp>
#include <boost/graph/filtered_graph.hpp>
#include <boost/pending/disjoint_sets.hpp>
#include <cmath>
#include <fmt/format.h>

#include "shelfstage/error.hpp"

namespace shelfstage::circuit {

Circuit::Circuit() {
  nets_.push_back(Net{"0"});
  names_["0"] = 0;
}

std::size_t Circuit::net(const std::string& name) {
  const std::string key = (name == "gnd" || name == "GND") ? "0" : name;
  if (auto it = names_.find(key); it != names_.end()) return it->second;
  const std::size_t v = nets_.size();
  nets_.push_back(Net{key});
  names_[key] = v;
  return v;
}

std::optional<std::size_t> Circuit::find_net(const std::string& name) const {
  const std::string key = (name == "gnd" || name == "GND") ? "0" : name;
  if (auto it = names_.find(key); it != names_.end()) return it->second;
  return std::nullopt;
}

std::vector<Edge> Circuit::edges() const {
  std::vector<Edge> out;
  for (const auto& el : elements_) {
    Component c = el.c;
    const auto& p = c.pins;
    switch (c.kind) {
      case ElementKind::jfet:
      case ElementKind::bjt:  // the channel or collector-emitter path, then the gate or base pair
        c.branch = Branch::main;
        out.push_back({p[0], p[2], c});
        c.branch = Branch::control;
        out.push_back({p[1], p[2], c});
        break;
      case ElementKind::vccs:
      case ElementKind::vcvs:  // the output pair, then the control pair
        c.branch = Branch::main;
        out.push_back({p[0], p[1], c});
        c.branch = Branch::control;
        out.push_back({p[2], p[3], c});
        break;
      default: out.push_back({p[0], p[1], c});
    }
  }
  return out;
}

void Circuit::append(const Circuit& from, const Carry& carry) {
  for (const auto& el : from.elements()) {
    const Component& e = el.c;
    if (carry.keep && !carry.keep(e)) continue;
    std::array<std::string, 4> pins;
    for (std::size_t i = 0; i < el.pin_count(); ++i) {
      const std::string& own = from.net_name(e.pins[i]);
      pins[i] = carry.net ? carry.net(e, own) : own;
    }
    copy_element(from, e, carry.designator ? carry.designator(e) : e.designator, pins);
  }
}

void Circuit::copy_element(const Circuit& from, const Component& e, const std::string& des,
                           const std::array<std::string, 4>& pin) {
  switch (e.kind) {
    case ElementKind::resistor: resistor(des, e.role, pin[0], pin[1], e.value, e.noiseless); break;
    case ElementKind::capacitor: capacitor(des, e.role, pin[0], pin[1], e.value); break;
    case ElementKind::vsource: vsource(des, e.role, pin[0], pin[1], e.value, e.ac_volts); break;
    case ElementKind::jfet: jfet(des, pin[0], pin[1], pin[2], from.jfets()[e.device]); break;
    case ElementKind::bjt: bjt(des, pin[0], pin[1], pin[2], from.bjts()[e.device]); break;
    case ElementKind::isource: isource(des, e.role, pin[0], pin[1], e.value, e.ac_volts); break;
    case ElementKind::vccs: vccs(des, e.role, pin[0], pin[1], pin[2], pin[3], e.value); break;
    case ElementKind::vcvs: vcvs(des, e.role, pin[0], pin[1], pin[2], pin[3], e.value); break;
    case ElementKind::diode: {
      const DiodeModel& d = from.diodes()[e.device];
      diode(des, e.role, pin[0], pin[1], d.is_a, d.n);
      break;
    }
  }
}

namespace {
// A component on pins a and b (a controlled source adds its control pins after).
Component two_terminal(ElementKind kind, const std::string& des, const std::string& role, std::size_t a, std::size_t b,
                       double value) {
  Component c;
  c.kind = kind;
  c.designator = des;
  c.role = role;
  c.value = value;
  c.pins = {a, b, 0, 0};
  return c;
}
}  // namespace

void Circuit::resistor(const std::string& des, const std::string& role, const std::string& a, const std::string& b,
                       double ohms, bool noiseless) {
  auto c = two_terminal(ElementKind::resistor, des, role, net(a), net(b), ohms);
  c.noiseless = noiseless;
  elements_.push_back({c});
}

void Circuit::capacitor(const std::string& des, const std::string& role, const std::string& plus,
                        const std::string& minus, double farads) {
  const auto c = two_terminal(ElementKind::capacitor, des, role, net(plus), net(minus), farads);
  elements_.push_back({c});
}

void Circuit::vsource(const std::string& des, const std::string& role, const std::string& plus,
                      const std::string& minus, double dc_volts, double ac_volts) {
  auto c = two_terminal(ElementKind::vsource, des, role, net(plus), net(minus), dc_volts);
  c.ac_volts = ac_volts;
  elements_.push_back({c});
}

void Circuit::jfet(const std::string& des, const std::string& drain, const std::string& gate, const std::string& source,
                   const devices::JfetInstance& q) {
  Component c;
  c.kind = ElementKind::jfet;
  c.designator = des;
  c.role = "device";
  c.pins = {net(drain), net(gate), net(source), 0};
  c.device = jfets_.size();
  jfets_.push_back(q);
  c.branch = Branch::main;  // its control pair is an edge of its own (edges())
  elements_.push_back({c});
}

void Circuit::bjt(const std::string& des, const std::string& collector, const std::string& base,
                  const std::string& emitter, const devices::BjtInstance& q) {
  Component c;
  c.kind = ElementKind::bjt;
  c.designator = des;
  c.role = "device";
  c.pins = {net(collector), net(base), net(emitter), 0};
  c.device = bjts_.size();
  bjts_.push_back(q);
  c.branch = Branch::main;  // its control pair is an edge of its own (edges())
  elements_.push_back({c});
}

void Circuit::isource(const std::string& des, const std::string& role, const std::string& plus,
                      const std::string& minus, double dc_amps, double ac_amps) {
  auto c = two_terminal(ElementKind::isource, des, role, net(plus), net(minus), dc_amps);
  c.ac_volts = ac_amps;
  elements_.push_back({c});
}

// A controlled source: its output pair as the main edge, its control pair as the control edge.
void Circuit::controlled(ElementKind kind, const std::string& des, const std::string& role, const std::string& out_plus,
                         const std::string& out_minus, const std::string& ctrl_plus, const std::string& ctrl_minus,
                         double value) {
  auto c = two_terminal(kind, des, role, net(out_plus), net(out_minus), value);
  c.pins[2] = net(ctrl_plus);
  c.pins[3] = net(ctrl_minus);
  c.branch = Branch::main;  // its control pair is an edge of its own (edges())
  elements_.push_back({c});
}

void Circuit::vccs(const std::string& des, const std::string& role, const std::string& out_plus,
                   const std::string& out_minus, const std::string& ctrl_plus, const std::string& ctrl_minus,
                   double gm) {
  controlled(ElementKind::vccs, des, role, out_plus, out_minus, ctrl_plus, ctrl_minus, gm);
}

void Circuit::vcvs(const std::string& des, const std::string& role, const std::string& out_plus,
                   const std::string& out_minus, const std::string& ctrl_plus, const std::string& ctrl_minus,
                   double gain) {
  controlled(ElementKind::vcvs, des, role, out_plus, out_minus, ctrl_plus, ctrl_minus, gain);
}

void Circuit::diode(const std::string& des, const std::string& role, const std::string& anode,
                    const std::string& cathode, double is_a, double n) {
  auto c = two_terminal(ElementKind::diode, des, role, net(anode), net(cathode), 0.0);
  c.device = diodes_.size();
  diodes_.push_back({is_a, n});
  elements_.push_back({c});
}

void Circuit::set_value(const std::string& designator, double value) {
  bool found = false;
  for (auto& e : elements_) {
    if (e.c.designator == designator) {
      e.c.value = value;
      found = true;
    }
  }
  if (!found) throw InputError(fmt::format("no part '{}' in the circuit", designator));
}

const Element* Circuit::find(const std::string& designator) const {
  for (const auto& e : elements_)
    if (e.c.designator == designator) return &e;
  return nullptr;
}

namespace {
// The graph for Boost's algorithms: nets as vertices, components as edges.
using Graph = boost::adjacency_list<boost::vecS, boost::vecS, boost::undirectedS, Net, Component>;

// Edges that fix a DC voltage or carry a DC current set by voltages: resistors, voltage
// sources and VCVS outputs, diodes, transistor main paths. A current source or a VCCS output
// forces a current whatever the voltage across it, so it gives a net no DC path.
struct ConductsDc {
  const Graph* g = nullptr;
  bool operator()(const boost::graph_traits<Graph>::edge_descriptor& e) const {
    const Component& c = (*g)[e];
    if (c.kind == ElementKind::capacitor || c.kind == ElementKind::isource || c.kind == ElementKind::vccs) return false;
    return c.branch != Branch::control;
  }
};

bool is_controlled(ElementKind k) { return k == ElementKind::vccs || k == ElementKind::vcvs; }
}  // namespace

void Circuit::validate() const {
  for (const auto& e : elements_) {
    const Component& c = e.c;
    if (!std::isfinite(c.value) || !std::isfinite(c.ac_volts))
      throw InputError(fmt::format("{} ({}): value is not a finite number", c.designator, c.role));
    if ((c.kind == ElementKind::resistor || c.kind == ElementKind::capacitor) && !(c.value > 0))
      throw InputError(fmt::format("{} ({}): value {:g} must be positive", c.designator, c.role, c.value));
    if (c.kind == ElementKind::diode) {
      const DiodeModel& d = diodes_[c.device];
      if (!(std::isfinite(d.is_a) && d.is_a > 0 && std::isfinite(d.n) && d.n > 0))
        throw InputError(
            fmt::format("{} ({}): IS {:g} and N {:g} must be finite and positive", c.designator, c.role, d.is_a, d.n));
    }
    if (c.kind != ElementKind::jfet && c.kind != ElementKind::bjt && c.pins[0] == c.pins[1])
      throw InputError(fmt::format("{} ({}): both ends on net '{}'", c.designator, c.role, net_name(c.pins[0])));
    if (is_controlled(c.kind) && c.pins[2] == c.pins[3])
      throw InputError(
          fmt::format("{} ({}): both control pins on net '{}'", c.designator, c.role, net_name(c.pins[2])));
  }
  Graph graph(nets_.size());
  for (std::size_t v = 0; v < nets_.size(); ++v) graph[v] = nets_[v];
  for (const auto& e : edges()) boost::add_edge(e.a, e.b, e.c, graph);
  if (boost::degree(0, graph) == 0) throw InputError("the circuit has no ground: no part touches net '0'");
  // Every net needs a DC path to ground.
  ConductsDc pred{&graph};
  boost::filtered_graph<Graph, ConductsDc> dc(graph, pred);
  std::vector<int> comp(boost::num_vertices(graph));
  boost::connected_components(dc, comp.data());
  for (std::size_t v = 1; v < comp.size(); ++v) {
    if (comp[v] == comp[0]) continue;
    std::string what;
    for (const auto& e : elements_) {
      if (e.c.kind == ElementKind::jfet && e.c.pins[1] == v)
        what = fmt::format(" (floating gate of {})", e.c.designator);
      if (e.c.kind == ElementKind::bjt && e.c.pins[1] == v)
        what = fmt::format(" (floating base of {})", e.c.designator);
      if (is_controlled(e.c.kind) && (e.c.pins[2] == v || e.c.pins[3] == v))
        what = fmt::format(" (control input of {}: it draws no current)", e.c.designator);
      if ((e.c.kind == ElementKind::isource || e.c.kind == ElementKind::vccs) && (e.c.pins[0] == v || e.c.pins[1] == v))
        what = fmt::format(" (fed by current source {}: it gives no DC path)", e.c.designator);
    }
    if (v == 0) continue;
    throw InputError(fmt::format("net '{}' has no DC path to ground{}", net_name(v), what));
  }
  // No loop made only of voltage sources and VCVS outputs (their currents would be
  // undetermined).
  std::vector<std::size_t> rank(comp.size()), parent(comp.size());
  boost::disjoint_sets<std::size_t*, std::size_t*> sets(rank.data(), parent.data());
  for (std::size_t v = 0; v < comp.size(); ++v) sets.make_set(v);
  for (const auto& e : elements_) {
    if (e.c.kind != ElementKind::vsource && e.c.kind != ElementKind::vcvs) continue;
    const auto a = sets.find_set(e.c.pins[0]), b = sets.find_set(e.c.pins[1]);
    if (a == b)
      throw InputError(fmt::format("voltage source {} closes a loop of voltage sources at net '{}'", e.c.designator,
                                   net_name(e.c.pins[0])));
    sets.link(a, b);
  }
}

}  // namespace shelfstage::circuit
