// jfet-cs-self: JFET common source, self-biased (RG to ground, split source resistor).
#include <algorithm>

#include "common.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { RG, RD, RS1, RS2, CS, CIN, COUT };

constexpr Role kRoles[] = {
    {"RG", "R1", 'R', false, false, "", "", "gate to ground: sets the input impedance", {13, 19, true, 'l'}},
    {"RD", "R2", 'R', false, false, "", "", "supply to drain: the load the gain develops across", {19, 6, true, 'l'}},
    {"RS1", "R3", 'R', true, false, "", "", "source to x, unbypassed: sets the gain", {19, 17, true, 'l'}},
    {"RS2", "R4", 'R', true, false, "", "", "x to ground, bypassed: adds bias only", {19, 23, true, 'l'}},
    {"CS", "C2", 'C', true, true, "x", "0", "bypass across RS2", {22, 23, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "drain", "out", "output coupling", {23, 9, false, 'a'}},
};
constexpr InnerNet kInner[] = {{"x", "RS1\u2013RS2 junction", 4, "RS1"}};
constexpr detail::CommonRoles kCommon{RD, RS1, RS2, CS, CIN, COUT};

class JfetCsSelf final : public Topology {
 public:
  std::string_view name() const override { return "jfet-cs-self"; }
  std::string_view summary() const override {
    return "JFET common source, self-biased: gate returned through RG to the source resistors' rail, bias from those "
           "resistors";
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
    v[RG] = 1e6;
    detail::jfet_cs_reference(v, kCommon, q.jfet, c, k, 0.0, v[RG]);
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "gate", "in");
    detail::add_role(net, kRoles, v, RG, "gate", "0");
    const std::string common = detail::wire_common_leg(net, kRoles, v, kCommon, "drain", "source");
    net.jfet("Q1", "drain", "gate", common, q.jfet);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    detail::CsCircuit s;
    s.vg_v = 0;
    s.r_gate_ohm = v[RG];
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
      p.stress = detail::stress_list({detail::res_stress(RG, 0), detail::res_stress(RD, i2 * v[RD])});
      if (v[RS1] > 0) p.stress.push_back(detail::res_stress(RS1, i2 * v[RS1]));
      if (v[RS2] > 0) p.stress.push_back(detail::res_stress(RS2, i2 * v[RS2]));
      if (v[CS] > 0) p.stress.push_back(detail::cap_stress(CS, b.id_a * v[RS2], v[RS1] > 0 ? "x" : "source"));
      p.stress.push_back(detail::cap_stress(CIN, 0.0));
      p.stress.push_back(detail::cap_stress(COUT, b.vd_v));
    }
    return p;
  }

  // Design: RG from the input impedance; for a few drain currents (fractions of IDSS)
  // the self-bias resistor RS = -VGS/ID; each split of it; RD from the gain.
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    const auto& j = q.jfet;
    std::vector<double> rgs = detail::gate_resistors(shelf, g.zin_min_ohm);
    // A narrower search (Goal::breadth below 1: a chain's stage pools): the least gate
    // resistor and the one nearest the usual megohm (it sets the input impedance and little
    // else).
    if (g.breadth < 1.0 && rgs.size() > 2) {
      const double usual = std::max(1e6, g.zin_min_ohm);
      const double near = *std::min_element(rgs.begin() + 1, rgs.end(), [&](double a, double b) {
        return std::abs(std::log(a / usual)) < std::abs(std::log(b / usual));
      });
      rgs = {rgs.front(), near};
    }
    // Source resistors over the shelf's values between those that set 70 % and 3 % of IDSS.
    auto rs_for = [&](double frac) { return j.vp_abs_v * (1.0 - std::sqrt(frac)) / (frac * j.idss_a); };
    double frac_max = 0.7;
    if (g.max_current_a > 0) frac_max = std::min(frac_max, g.max_current_a / j.idss_a);
    // Not below the current that can carry the swing into the load.
    const double frac_min = std::max(0.03, detail::least_swing_current(g, c.load_ohm) / j.idss_a);
    if (frac_min > frac_max) return;
    std::vector<double> rs_tot;
    shelf.spread(rs_for(frac_max), rs_for(frac_min), 16, rs_tot);
    for (double rg : rgs) {
      const double a_int = g.gain * (rg + c.source_ohm) / rg;
      for (double rt : rs_tot) {
        detail::jfet_cs_legs(shelf, g, c, j, 0.0, rt, a_int, [&](double rd, double rs1, double rs2) {
          Values v;
          v[RG] = rg;
          v[RD] = rd;
          v[RS1] = rs1;
          v[RS2] = rs2;
          emit(v);
        });
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    Values t = v;
    const detail::JfetBias b = detail::jfet_bias(q.jfet, 0.0, v[RS1] + v[RS2], v[RD], c.supply_v);
    const double gm = b.conducts ? b.gm_s : 1e-3;
    t[CIN] = detail::cap_for(c.source_ohm + v[RG], f / 6);
    t[COUT] = detail::cap_for(v[RD] + c.load_ohm, f / 6);
    t[CS] = v[RS2] > 0 ? detail::cap_for(par(v[RS2], v[RS1] + 1.0 / gm), f / 4) : 0.0;
    return t;
  }
};

}  // namespace

const Topology& jfet_cs_self() {
  static const JfetCsSelf t;
  return t;
}

}  // namespace shelfstage::stages
