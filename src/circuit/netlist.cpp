// The circuit graph: nets as vertices, parts as edges; validation before anything is solved.
#include "shelfstage/circuit/netlist.hpp"

#include <boost/graph/connected_components.hpp>
#include <boost/graph/filtered_graph.hpp>
#include <boost/pending/disjoint_sets.hpp>
#include <cmath>
#include <fmt/format.h>

#include "shelfstage/error.hpp"

namespace shelfstage::circuit {

Circuit::Circuit() {
  const auto g = boost::add_vertex(Net{"0"}, graph_);
  names_["0"] = g;
}

std::size_t Circuit::net(const std::string& name) {
  const std::string key = (name == "gnd" || name == "GND") ? "0" : name;
  if (auto it = names_.find(key); it != names_.end()) return it->second;
  const auto v = boost::add_vertex(Net{key}, graph_);
  names_[key] = v;
  return v;
}

std::optional<std::size_t> Circuit::find_net(const std::string& name) const {
  const std::string key = (name == "gnd" || name == "GND") ? "0" : name;
  if (auto it = names_.find(key); it != names_.end()) return it->second;
  return std::nullopt;
}

void Circuit::add_edge(std::size_t a, std::size_t b, const Component& c) { boost::add_edge(a, b, c, graph_); }

void Circuit::append(const Circuit& from, const Carry& carry) {
  for (const auto& el : from.elements()) {
    const Component& e = el.c;
    if (carry.keep && !carry.keep(e)) continue;
    auto pin = [&](std::size_t i) {
      const std::string& own = from.net_name(e.pins[i]);
      return carry.net ? carry.net(e, own) : own;
    };
    const std::string des = carry.designator ? carry.designator(e) : e.designator;
    switch (e.kind) {
      case ElementKind::resistor: resistor(des, e.role, pin(0), pin(1), e.value); break;
      case ElementKind::capacitor: capacitor(des, e.role, pin(0), pin(1), e.value); break;
      case ElementKind::vsource: vsource(des, e.role, pin(0), pin(1), e.value, e.ac_volts); break;
      case ElementKind::jfet: jfet(des, pin(0), pin(1), pin(2), from.jfets()[e.device]); break;
      case ElementKind::bjt: bjt(des, pin(0), pin(1), pin(2), from.bjts()[e.device]); break;
    }
  }
}

namespace {
Component two_terminal(ElementKind kind, const std::string& des, const std::string& role, std::size_t a, std::size_t b,
                       double value) {
  Component c;
  c.kind = kind;
  c.designator = des;
  c.role = role;
  c.value = value;
  c.pins = {a, b, 0};
  return c;
}
}  // namespace

void Circuit::resistor(const std::string& des, const std::string& role, const std::string& a, const std::string& b,
                       double ohms) {
  const auto c = two_terminal(ElementKind::resistor, des, role, net(a), net(b), ohms);
  add_edge(c.pins[0], c.pins[1], c);
  elements_.push_back({c});
}

void Circuit::capacitor(const std::string& des, const std::string& role, const std::string& plus,
                        const std::string& minus, double farads) {
  const auto c = two_terminal(ElementKind::capacitor, des, role, net(plus), net(minus), farads);
  add_edge(c.pins[0], c.pins[1], c);
  elements_.push_back({c});
}

void Circuit::vsource(const std::string& des, const std::string& role, const std::string& plus,
                      const std::string& minus, double dc_volts, double ac_volts) {
  auto c = two_terminal(ElementKind::vsource, des, role, net(plus), net(minus), dc_volts);
  c.ac_volts = ac_volts;
  add_edge(c.pins[0], c.pins[1], c);
  elements_.push_back({c});
}

void Circuit::jfet(const std::string& des, const std::string& drain, const std::string& gate, const std::string& source,
                   const devices::JfetInstance& q) {
  Component c;
  c.kind = ElementKind::jfet;
  c.designator = des;
  c.role = "device";
  c.pins = {net(drain), net(gate), net(source)};
  c.device = jfets_.size();
  jfets_.push_back(q);
  c.branch = Branch::main;
  add_edge(c.pins[0], c.pins[2], c);
  elements_.push_back({c});
  c.branch = Branch::control;
  add_edge(c.pins[1], c.pins[2], c);
}

void Circuit::bjt(const std::string& des, const std::string& collector, const std::string& base,
                  const std::string& emitter, const devices::BjtInstance& q) {
  Component c;
  c.kind = ElementKind::bjt;
  c.designator = des;
  c.role = "device";
  c.pins = {net(collector), net(base), net(emitter)};
  c.device = bjts_.size();
  bjts_.push_back(q);
  c.branch = Branch::main;
  add_edge(c.pins[0], c.pins[2], c);
  elements_.push_back({c});
  c.branch = Branch::control;
  add_edge(c.pins[1], c.pins[2], c);
}

void Circuit::set_value(const std::string& designator, double value) {
  bool found = false;
  for (auto& e : elements_) {
    if (e.c.designator == designator) {
      e.c.value = value;
      found = true;
    }
  }
  auto [ei, ee] = boost::edges(graph_);
  for (; ei != ee; ++ei) {
    if (graph_[*ei].designator == designator) graph_[*ei].value = value;
  }
  if (!found) throw InputError(fmt::format("no part '{}' in the circuit", designator));
}

const Element* Circuit::find(const std::string& designator) const {
  for (const auto& e : elements_)
    if (e.c.designator == designator) return &e;
  return nullptr;
}

namespace {
// Edges that carry DC current to ground: resistors, sources and transistor main paths.
struct ConductsDc {
  const Graph* g = nullptr;
  bool operator()(const Edge& e) const {
    const Component& c = (*g)[e];
    if (c.kind == ElementKind::capacitor) return false;
    return c.branch != Branch::control;
  }
};
}  // namespace

void Circuit::validate() const {
  for (const auto& e : elements_) {
    const Component& c = e.c;
    if (!std::isfinite(c.value) || !std::isfinite(c.ac_volts))
      throw InputError(fmt::format("{} ({}): value is not a finite number", c.designator, c.role));
    if ((c.kind == ElementKind::resistor || c.kind == ElementKind::capacitor) && !(c.value > 0))
      throw InputError(fmt::format("{} ({}): value {:g} must be positive", c.designator, c.role, c.value));
    if (c.kind != ElementKind::jfet && c.kind != ElementKind::bjt && c.pins[0] == c.pins[1])
      throw InputError(fmt::format("{} ({}): both ends on net '{}'", c.designator, c.role, net_name(c.pins[0])));
  }
  if (boost::degree(0, graph_) == 0) throw InputError("the circuit has no ground: no part touches net '0'");
  // Every net needs a DC path to ground.
  ConductsDc pred{&graph_};
  boost::filtered_graph<Graph, ConductsDc> dc(graph_, pred);
  std::vector<int> comp(boost::num_vertices(graph_));
  boost::connected_components(dc, comp.data());
  for (std::size_t v = 1; v < comp.size(); ++v) {
    if (comp[v] == comp[0]) continue;
    std::string what;
    for (const auto& e : elements_) {
      if (e.c.kind == ElementKind::jfet && e.c.pins[1] == v)
        what = fmt::format(" (floating gate of {})", e.c.designator);
      if (e.c.kind == ElementKind::bjt && e.c.pins[1] == v)
        what = fmt::format(" (floating base of {})", e.c.designator);
    }
    if (v == 0) continue;
    throw InputError(fmt::format("net '{}' has no DC path to ground{}", net_name(v), what));
  }
  // No loop made only of voltage sources (their currents would be undetermined).
  std::vector<std::size_t> rank(comp.size()), parent(comp.size());
  boost::disjoint_sets<std::size_t*, std::size_t*> sets(rank.data(), parent.data());
  for (std::size_t v = 0; v < comp.size(); ++v) sets.make_set(v);
  for (const auto& e : elements_) {
    if (e.c.kind != ElementKind::vsource) continue;
    const auto a = sets.find_set(e.c.pins[0]), b = sets.find_set(e.c.pins[1]);
    if (a == b)
      throw InputError(fmt::format("voltage source {} closes a loop of voltage sources at net '{}'", e.c.designator,
                                   net_name(e.c.pins[0])));
    sets.link(a, b);
  }
}

}  // namespace shelfstage::circuit
