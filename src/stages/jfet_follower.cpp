// jfet-follower: JFET source follower (common drain), gate at 0 V through RG.
#include <algorithm>
#include <complex>
#include <fmt/format.h>

#include "common.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { RG, RS, CIN, COUT };

constexpr Role kRoles[] = {
    {"RG", "R1", 'R', false, false, "", "", "gate to ground: sets the input impedance"},
    {"RS", "R2", 'R', false, false, "", "", "source to ground: sets the bias and drives the load"},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling"},
    {"COUT", "C2", 'C', false, true, "source", "out", "output coupling"},
};

class JfetFollower final : public Topology {
 public:
  std::string_view name() const override { return "jfet-follower"; }
  std::string_view summary() const override {
    return "JFET source follower: gain just under one, high input and low output impedance";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_jfet(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"gate", "source", "drain"}; }

  circuit::Circuit netlist(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(q, c);
    detail::add_role(net, kRoles, v, CIN, "gate", "in");
    detail::add_role(net, kRoles, v, RG, "gate", "0");
    detail::add_role(net, kRoles, v, RS, "source", "0");
    detail::add_role(net, kRoles, v, COUT, "source", "out");
    net.jfet("Q1", "vdd", "gate", "source", q.jfet);
    return net;
  }

  Performance evaluate(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    Performance p;
    const auto& j = q.jfet;
    const detail::JfetBias b = detail::jfet_bias(j, 0.0, v[RS], 0.0, c.supply_v);
    if (!b.conducts) {
      p.problem = "cut off";
      return p;
    }
    p.valid = true;
    p.active = b.saturated();
    if (!p.active) p.problem = fmt::format("in the triode region: VDS {:.2f} V < VGS-VP {:.2f} V", b.vds_v, b.vgst_v);
    p.bias_current_a = b.id_a;
    p.supply_current_a = b.id_a;
    const double k = detail::pol(q);
    p.v_in = 0;
    p.v_common = k * b.vs_v;
    p.v_out = k * c.supply_v;
    const double gm = b.gm_s;
    const double rsl = par(par(v[RS], c.load_ohm), b.ro_ohm);  // RS || RL || ro
    const double a_int = gm * rsl / (1.0 + gm * rsl);
    const double divider = v[RG] / (v[RG] + c.source_ohm);
    p.gain = a_int * divider;
    p.zin_ohm = v[RG];
    p.zout_ohm = par(par(v[RS], 1.0 / gm), b.ro_ohm);
    // Swing. Down: the current falls to zero. Up: the source rises toward the supply until
    // VDS meets VGS - VP, or the gate reaches the source (VGS = 0).
    const double r_ac = par(v[RS], c.load_ohm);
    p.swing_down_v = b.id_a * r_ac;
    auto margin = [&](double a) { return std::sqrt((b.id_a + a / r_ac) / b.beta_eff) - (b.vds_v - a); };
    const double up = margin(0) < 0 ? detail::bisect(margin, 0.0, b.vds_v) : 0.0;
    const double gate_limit = (j.vp_abs_v * j.vp_abs_v * b.beta_eff - b.id_a) * r_ac;
    p.swing_up_v = std::max(0.0, std::min(up, gate_limit));
    p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);

    detail::LfSection lf[2] = {{1.0 / (v[CIN] * (c.source_ohm + v[RG])), 0.0},
                               {1.0 / (v[COUT] * (p.zout_ohm + c.load_ohm)), 0.0}};
    p.f_low_hz = detail::lf_corner_hz(lf);
    // High corner, exact for the follower with Cgs and Cgd (Cgd to AC ground):
    // H = A0 (1 + s Cgs/gm) / (1 + b1 s + b2 s^2), with GL = 1/(RS||RL||ro), Rs' = Rsig||RG,
    // b1 = (Cgs + Rs' Cgd (gm + GL) + Rs' Cgs GL) / (gm + GL), b2 = Rs' Cgd Cgs / (gm + GL).
    const double cgs = detail::cgs_at(j, b.vgs_v), cgd = detail::cgd_at(j, b.vgs_v - b.vds_v);
    const double gl = 1.0 / rsl;
    const double rsrc = par(c.source_ohm > 0 ? c.source_ohm : 1e-3, v[RG]);
    const double b1 = (cgs + rsrc * cgd * (gm + gl) + rsrc * cgs * gl) / (gm + gl);
    const double b2 = rsrc * cgd * cgs / (gm + gl);
    p.f_high_hz = detail::hf_corner_hz(b1, b2, cgs > 0 ? gm / cgs : 0.0);

    if (d == Detail::full) {
      p.hd2 = c.hd2_peak_v / (8.0 * b.id_a * r_ac * (1.0 + gm * r_ac));
      const double kt4 = detail::thermal_v2(1.0, c.celsius);
      const double rsig = c.source_ohm > 0 ? c.source_ohm : 1e-3;
      double v2 = kt4 * par(rsig, v[RG]);
      v2 += (2.0 / 3.0) * kt4 / gm;
      v2 += kt4 * (1.0 / v[RS] + 1.0 / c.load_ohm) / (gm * gm);
      p.noise_v_rthz = std::sqrt(v2) / divider;
      p.stress = {{RG, 0, 0, {}}, {RS, b.id_a * b.id_a * v[RS], 0, {}}, detail::cap_stress(kRoles, CIN, 0.0, q),
                  detail::cap_stress(kRoles, COUT, b.vs_v, q)};
    }
    return p;
  }
};

}  // namespace

const Topology& jfet_follower() {
  static const JfetFollower t;
  return t;
}

}  // namespace shelfstage::stages
