// jfet-cs-divider: JFET common source with the gate biased from a supply divider.
#include "common.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { R1, R2, RD, RS1, RS2, CS, CIN, COUT };

constexpr Role kRoles[] = {
    {"R1", "R1", 'R', false, false, "", "", "supply to gate: upper divider leg"},
    {"R2", "R2", 'R', false, false, "", "", "gate to ground: lower divider leg"},
    {"RD", "R3", 'R', false, false, "", "", "supply to drain: the load the gain develops across"},
    {"RS1", "R4", 'R', true, false, "", "", "source to x, unbypassed: sets the gain"},
    {"RS2", "R5", 'R', true, false, "", "", "x to ground, bypassed: with the divider, sets the bias"},
    {"CS", "C2", 'C', true, true, "x", "0", "bypass across RS2"},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling"},
    {"COUT", "C3", 'C', false, true, "drain", "out", "output coupling"},
};

class JfetCsDivider final : public Topology {
 public:
  std::string_view name() const override { return "jfet-cs-divider"; }
  std::string_view summary() const override {
    return "JFET common source, gate biased from a divider: a larger source resistor holds the "
           "current steadier across IDSS and VP spread";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_jfet(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"gate", "source", "drain"}; }

  circuit::Circuit netlist(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(q, c);
    detail::add_role(net, kRoles, v, CIN, "gate", "in");
    detail::add_role(net, kRoles, v, R1, "vdd", "gate");
    detail::add_role(net, kRoles, v, R2, "gate", "0");
    detail::add_role(net, kRoles, v, RD, "vdd", "drain");
    const bool split = v[RS1] > 0 && v[RS2] > 0;
    detail::add_role(net, kRoles, v, RS1, "source", split ? "x" : "0");
    detail::add_role(net, kRoles, v, RS2, split ? "x" : "source", "0");
    if (v[RS2] > 0) detail::add_role(net, kRoles, v, CS, split ? "x" : "source", "0");
    detail::add_role(net, kRoles, v, COUT, "drain", "out");
    net.jfet("Q1", "drain", "gate", (v[RS1] > 0 || v[RS2] > 0) ? "source" : "0", q.jfet);
    return net;
  }

  Performance evaluate(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    detail::CsCircuit s;
    s.vg_v = c.supply_v * v[R2] / (v[R1] + v[R2]);
    s.r_gate_ohm = par(v[R1], v[R2]);
    s.bias_network_a = c.supply_v / (v[R1] + v[R2]);
    s.rd = v[RD];
    s.rs1 = v[RS1];
    s.rs2 = v[RS2];
    s.cs = v[CS];
    s.cin = v[CIN];
    s.cout = v[COUT];
    detail::JfetBias b;
    Performance p = detail::jfet_cs(s, q.jfet, c, d, b);
    const double k = detail::pol(q);
    p.v_in *= k;
    p.v_common *= k;
    p.v_out *= k;
    if (d == Detail::full && p.valid) {
      const double i2 = b.id_a * b.id_a;
      const double idiv = s.bias_network_a;
      const double vg = s.vg_v;
      p.stress = {{R1, idiv * idiv * v[R1], 0, {}}, {R2, idiv * idiv * v[R2], 0, {}}, {RD, i2 * v[RD], 0, {}}};
      if (v[RS1] > 0) p.stress.push_back({RS1, i2 * v[RS1], 0, {}});
      if (v[RS2] > 0) p.stress.push_back({RS2, i2 * v[RS2], 0, {}});
      if (v[CS] > 0) p.stress.push_back(detail::cap_stress(kRoles, CS, b.id_a * v[RS2], q));
      p.stress.push_back(detail::cap_stress(kRoles, CIN, vg, q));
      p.stress.push_back(detail::cap_stress(kRoles, COUT, b.vd_v, q));
    }
    return p;
  }
};

}  // namespace

const Topology& jfet_cs_divider() {
  static const JfetCsDivider t;
  return t;
}

}  // namespace shelfstage::stages
