// jfet-cs-divider: JFET common source with the gate biased from a supply divider.
#include <algorithm>

#include "common.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { R1, R2, RD, RS1, RS2, CS, CIN, COUT };

constexpr Role kRoles[] = {
    {"R1", "R1", 'R', false, false, "", "", "supply to gate: upper divider leg", {13, 6, true, 'l'}},
    {"R2", "R2", 'R', false, false, "", "", "gate to ground: lower divider leg", {13, 19, true, 'l'}},
    {"RD", "R3", 'R', false, false, "", "", "supply to drain: the load the gain develops across", {19, 6, true, 'l'}},
    {"RS1", "R4", 'R', true, false, "", "", "source to x, unbypassed: sets the gain", {19, 17, true, 'l'}},
    {"RS2",
     "R5",
     'R',
     true,
     false,
     "",
     "",
     "x to ground, bypassed: with the divider, sets the bias",
     {19, 23, true, 'l'}},
    {"CS", "C2", 'C', true, true, "x", "0", "bypass across RS2", {22, 23, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "drain", "out", "output coupling", {23, 9, false, 'a'}},
};
constexpr InnerNet kInner[] = {{"x", "RS1\u2013RS2 junction", 4, "RS1"}};
constexpr detail::CommonRoles kCommon{RD, RS1, RS2, CS, CIN, COUT};

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
  std::span<const InnerNet> inner_nets() const override { return kInner; }
  LoadLine load_line(const Values& v, const Conditions& c) const override {
    return detail::common_load_line(kCommon, v, c);
  }
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    Values v;
    const double vg = k.gate_frac * c.supply_v;
    v[R2] = 1e6;
    v[R1] = v[R2] * (c.supply_v - vg) / vg;
    detail::jfet_cs_reference(v, kCommon, q.jfet, c, k, vg, par(v[R1], v[R2]));
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "gate", "in");
    detail::add_role(net, kRoles, v, R1, "vdd", "gate");
    detail::add_role(net, kRoles, v, R2, "gate", "0");
    const std::string common = detail::wire_common_leg(net, kRoles, v, kCommon, "drain", "source");
    net.jfet("Q1", "drain", "gate", common, q.jfet);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
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
    if (d != Detail::core && p.valid && !p.cut_short) {
      const double i2 = b.id_a * b.id_a;
      const double idiv = s.bias_network_a;
      const double vg = s.vg_v;
      p.stress = detail::stress_list({detail::res_stress(R1, idiv * idiv * v[R1]),
                                      detail::res_stress(R2, idiv * idiv * v[R2]), detail::res_stress(RD, i2 * v[RD])});
      if (v[RS1] > 0) p.stress.push_back(detail::res_stress(RS1, i2 * v[RS1]));
      if (v[RS2] > 0) p.stress.push_back(detail::res_stress(RS2, i2 * v[RS2]));
      if (v[CS] > 0) p.stress.push_back(detail::cap_stress(CS, b.id_a * v[RS2], v[RS1] > 0 ? "x" : "source"));
      p.stress.push_back(detail::cap_stress(CIN, vg));
      p.stress.push_back(detail::cap_stress(COUT, b.vd_v));
    }
    return p;
  }

  // Design: a source voltage a good fraction of the supply (the larger, the less the bias
  // moves with IDSS and VP); for a few drain currents RS = VS/ID and the gate voltage
  // VG = VS + VGS(ID); the divider from the input impedance; RD from the gain.
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    const auto& j = q.jfet;
    // A narrower search keeps the ends of each choice and one divider impedance.
    const auto vs_fracs = detail::choices(g, {0.12, 0.2, 0.3}, {0.12, 0.3});
    const auto fracs = detail::choices(g, {0.2, 0.35, 0.5}, {0.2, 0.5});
    const double r_usual = std::max(1e6, g.zin_min_ohm * 1.15), r_low = std::max(220e3, g.zin_min_ohm * 1.15);
    const auto rpars = detail::choices(g, {r_usual, r_low}, {r_usual});
    for (double vs_frac : vs_fracs) {
      const double vs = vs_frac * c.supply_v;
      for (double frac : fracs) {
        const double id = frac * j.idss_a;
        if (g.max_current_a > 0 && id > g.max_current_a) continue;
        if (id < detail::least_swing_current(g, c.load_ohm)) continue;
        const double vg = vs - j.vp_abs_v * (1.0 - std::sqrt(frac));
        if (vg <= 0.05 * c.supply_v) continue;  // the self-biased stage covers this
        const double r = vg / c.supply_v;
        for (double rpar : rpars) {
          std::vector<double> r1s, r2s, rs_tot;
          shelf.nearest(rpar / r, 2, r1s);
          shelf.nearest(rpar / (1.0 - r), 2, r2s);
          shelf.nearest(vs / id, 1, rs_tot);
          for (double a : r1s) {
            for (double bb : r2s) {
              if (par(a, bb) < g.zin_min_ohm * 1.06) continue;
              const double a_int = g.gain * (par(a, bb) + c.source_ohm) / par(a, bb);
              for (double rt : rs_tot) {
                detail::jfet_cs_legs(shelf, g, c, j, c.supply_v * bb / (a + bb), rt, a_int,
                                     [&](double rd, double rs1, double rs2) {
                                       Values v;
                                       v[R1] = a;
                                       v[R2] = bb;
                                       v[RD] = rd;
                                       v[RS1] = rs1;
                                       v[RS2] = rs2;
                                       emit(v);
                                     });
              }
            }
          }
        }
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    Values t = v;
    const double vg = c.supply_v * v[R2] / (v[R1] + v[R2]);
    const detail::JfetBias b = detail::jfet_bias(q.jfet, vg, v[RS1] + v[RS2], v[RD], c.supply_v);
    const double gm = b.conducts ? b.gm_s : 1e-3;
    t[CIN] = detail::cap_for(c.source_ohm + par(v[R1], v[R2]), f / 6);
    t[COUT] = detail::cap_for(v[RD] + c.load_ohm, f / 6);
    t[CS] = v[RS2] > 0 ? detail::cap_for(par(v[RS2], v[RS1] + 1.0 / gm), f / 4) : 0.0;
    return t;
  }
};

}  // namespace

const Topology& jfet_cs_divider() {
  static const JfetCsDivider t;
  return t;
}

}  // namespace shelfstage::stages
