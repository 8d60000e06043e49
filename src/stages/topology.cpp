// What every topology shares: placing its N-frame circuit and figures on the user's rail
// (the N/P mirror and the turned-over stage, done once here), and role lookup.
#include "shelfstage/stages/topology.hpp"

#include <algorithm>
#include <cmath>

namespace shelfstage::stages {

bool is_bench_role(std::string_view role) {
  return role == "supply" || role == "signal" || role == "source" || role == "load" || role == kRoleLoadCapacitance;
}

bool is_bench_net(std::string_view net) { return net == kNetSignal || net == kNetIn || net == kNetOut; }

Rail rail_of(const Transistor& q, const Conditions& c) {
  Rail r;
  r.sign = c.negative_rail ? -1.0 : 1.0;
  r.pol = q.kind == devices::DeviceKind::opamp ? 1.0 : devices::polarity(q.kind);
  r.flipped = r.sign != r.pol;
  r.offset_v = r.flipped ? r.sign * c.supply_v : 0.0;
  return r;
}

Transistor Transistor::second() const {
  Transistor q;
  q.kind = bjt2.kind;
  q.bjt = bjt2;
  return q;
}

std::vector<Transistor> transistors_of(const Transistor& q) {
  if (!q.paired) return {q};
  return {q, q.second()};
}

bool Topology::accepts_second(devices::DeviceKind first, devices::DeviceKind second) const {
  // Q2 is bipolar; Q1 a transistor (an op-amp is no Q1 and has no polarity).
  if (!devices::is_transistor(first) || !devices::is_bjt(second)) return false;
  switch (second_device()) {
    case SecondDevice::none: return false;
    case SecondDevice::complement: return devices::polarity(first) != devices::polarity(second);
    case SecondDevice::same: return devices::polarity(first) == devices::polarity(second);
  }
  return false;
}

std::string_view Topology::device_designator() const {
  return devices::device_designator(accepts(devices::DeviceKind::opamp) ? devices::DeviceKind::opamp
                                                                        : devices::DeviceKind::npn);
}

std::string_view Rail::net(std::string_view n) const {
  if (!flipped) return n;
  if (n == "0") return kNetSupply;
  if (n == kNetSupply) return "0";
  return n;
}

std::size_t Topology::role_index(std::string_view role) const {
  const auto r = roles();
  for (std::size_t i = 0; i < r.size(); ++i)
    if (r[i].name == role) return i;
  return r.size();
}

const InnerNet* Topology::inner_net(std::string_view net) const {
  for (const InnerNet& n : inner_nets())
    if (n.name == net) return &n;
  return nullptr;
}

std::string Topology::net_words(std::string_view net) const {
  if (net == "0") return "ground";
  if (net == kNetSupply) return "supply rail";
  if (net == kNetIn) return "input side";
  if (net == kNetOut) return "output side";
  if (const InnerNet* n = inner_net(net)) return std::string(n->words);
  if (accepts(devices::DeviceKind::opamp)) {             // the op-amp's pins
    if (net == node_names()[2]) return "op-amp output";  // first: a buffer's - input is its output
    if (net == node_names()[0]) return "op-amp + input";
    if (net == node_names()[1]) return "op-amp - input";
  }
  return std::string(net);
}

circuit::Circuit Topology::netlist(const Values& values, const Transistor& q, const Conditions& c) const {
  circuit::Circuit n_frame = wire(values, q, c);
  const Rail rail = rail_of(q, c);
  if (!rail.flipped) return n_frame;
  // Turned over: the stage's own parts swap "0" and "vdd"; the bench (supply, source, load)
  // stays on ground.
  circuit::Circuit out;
  circuit::Circuit::Carry carry;
  carry.net = [&](const circuit::Component& e, const std::string& net) {
    return is_bench_role(e.role) ? net : std::string(rail.net(net));
  };
  out.append(n_frame, carry);
  return out;
}

double input_divider(double source_ohm, double r_in_ohm, double c_in_f, double c_couple_f) {
  if (!(r_in_ohm > 0) || !(c_in_f > 0) || !(c_couple_f > 0) || !std::isfinite(r_in_ohm)) return 1.0;
  return 1.0 / (1.0 + r_in_ohm * c_in_f / ((std::max(source_ohm, 0.0) + r_in_ohm) * c_couple_f));
}

namespace {

// The role of the capacitor that couples the signal in ("in" at one end), or roles.size().
std::size_t input_coupling(std::span<const Role> roles) {
  for (std::size_t i = 0; i < roles.size(); ++i)
    if (roles[i].kind == 'C' && (roles[i].pos_net == kNetIn || roles[i].neg_net == kNetIn)) return i;
  return roles.size();
}

// The input's flat capacitive divider (Performance::gain) for a closed form's figures p at
// `values`: 1 without an input coupling capacitor.
double input_divider_at(const Performance& p, const Values& values, std::span<const Role> roles, const Conditions& c) {
  const std::size_t cin = input_coupling(roles);
  return cin < roles.size() ? input_divider(c.source_ohm, p.zin_ohm, p.c_in_f, values[cin]) : 1.0;
}

// The divider applied to the closed form's figures: the gain and the transfer's input (o[n]
// scales with the n-th power); the harmonics at an output level and the output's swing stay
// as they are.
void apply_input_divider(Performance& p, const Values& values, std::span<const Role> roles, const Conditions& c) {
  const double k = input_divider_at(p, values, roles, c);
  if (k == 1.0) return;
  p.gain *= k;
  double kn = 1.0;
  for (double& o : p.transfer.o) {
    o *= kn;
    kn *= k;
  }
}

}  // namespace

Performance Topology::evaluate(const Values& values, const Transistor& q, const Conditions& c, Detail detail) const {
  Performance p = evaluate_n(values, q, c, detail);
  p.gain_undivided = p.gain;
  if (p.valid) apply_input_divider(p, values, roles(), c);
  const Rail rail = rail_of(q, c);
  p.v_in = rail.real(p.v_in);
  p.v_common = rail.real(p.v_common);
  p.v_out = rail.real(p.v_out);
  if (q.paired) p.v_out2 = rail.real(p.v_out2);
  const auto r = roles();
  for (Stress& s : p.stress) {
    if (s.role >= r.size() || r[s.role].kind != 'C') continue;
    const std::string_view pos = s.pos_n.empty() ? r[s.role].pos_net : s.pos_n;
    const std::string_view neg = s.neg_n.empty() ? r[s.role].neg_net : s.neg_n;
    // Real DC of each end: bench nets sit at 0 V, the stage's nets at offset + pol * V_n.
    const double actual =
        rail.pol * s.dc_n_v + (is_bench_net(pos) ? 0.0 : rail.offset_v) - (is_bench_net(neg) ? 0.0 : rail.offset_v);
    s.dc_v = std::abs(actual);
    s.plus_net = actual >= 0 ? rail.net(pos) : rail.net(neg);
    s.minus_net = actual >= 0 ? rail.net(neg) : rail.net(pos);
  }
  return p;
}

double Topology::gain_with(const Values& values, const Conditions& c, const Performance& p) const {
  if (!p.valid) return p.gain;  // (evaluate() leaves an invalid stage's gain undivided)
  return p.gain_undivided * input_divider_at(p, values, roles(), c);  // (times 1 is exact)
}

}  // namespace shelfstage::stages
