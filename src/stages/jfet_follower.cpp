// jfet-follower: JFET source follower (common drain), gate at 0 V through RG.
#include <algorithm>
#include <complex>
#include <fmt/format.h>

#include "common.hpp"
#include "distortion.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { RG, RS, CIN, COUT };

constexpr Role kRoles[] = {
    {"RG", "R1", 'R', false, false, "", "", "gate to ground: sets the input impedance", {13, 19, true, 'l'}},
    {"RS", "R2", 'R', false, false, "", "", "source to ground: sets the bias and drives the load", {19, 19, true, 'l'}},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C2", 'C', false, true, "source", "out", "output coupling", {23, 16, false, 'b'}},
};

class JfetFollower final : public Topology {
 public:
  std::string_view name() const override { return "jfet-follower"; }
  bool is_buffer() const override { return true; }
  std::string_view summary() const override {
    return "JFET source follower: gain just under one, high input and low output impedance";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_jfet(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"gate", "source", "drain"}; }
  LoadLine load_line(const Values& v, const Conditions& c) const override {
    return {.at_common = true, .r_dc_ohm = v[RS], .r_ac_ohm = par(v[RS], c.load_ohm)};
  }
  // The source resistor that gives the knobs' current at self-bias (VGS = -ID RS).
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    const auto& j = q.jfet;
    const double id = k.current_frac * j.idss_a;
    const double vov = j.vp_abs_v * std::sqrt(k.current_frac);
    Values v;
    v[RG] = 1e6;
    v[RS] = (j.vp_abs_v - vov) / id;
    v[CIN] = detail::cap_for(v[RG] + c.source_ohm, k.f_corner_hz);
    v[COUT] = detail::cap_for(c.load_ohm + par(v[RS], vov / (2.0 * id)), k.f_corner_hz);
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "gate", "in");
    detail::add_role(net, kRoles, v, RG, "gate", "0");
    detail::add_role(net, kRoles, v, RS, "source", "0");
    detail::add_role(net, kRoles, v, COUT, "source", "out");
    net.jfet("Q1", "vdd", "gate", "source", q.jfet);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    Performance p;
    const auto& j = q.jfet;
    const detail::JfetBias b = detail::jfet_bias(j, 0.0, v[RS], 0.0, c.supply_v);
    if (!detail::jfet_operating_point(p, b)) return p;
    p.v_in = 0;
    p.v_common = b.vs_v;
    p.v_out = c.supply_v;
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
    detail::jfet_follower_swing(p, j, b, r_ac);
    if (detail::screened_out(p, c)) return p;

    detail::LfSection lf[2] = {{1.0 / (v[CIN] * (c.source_ohm + v[RG])), 0.0},
                               {1.0 / (v[COUT] * (p.zout_ohm + c.load_ohm)), 0.0}};
    // High corner: the hybrid-pi network with the drain at AC ground, output at the source.
    detail::HybridPi m;
    m.g_src = 1.0 / par(c.source_ohm > 0 ? c.source_ohm : 1e-3, v[RG]);
    m.cpi = detail::cgs_at(j, b.vgs_v);
    m.cmu = detail::cgd_at(j, b.vgs_v - b.vds_v);
    m.gm = gm;
    m.go = std::isinf(b.ro_ohm) ? 0.0 : 1.0 / b.ro_ohm;
    m.g_e = 1.0 / r_ac;
    m.g_c = 1e9;
    m.out_at_emitter = true;
    detail::finish_response(p, lf, m, c, v[COUT], d);

    // Third-order expansion of the square law with lambda on the mid-band network (HD2
    // without lambda: Vo/(8*ID*RS'*(1 + gm*RS'))).
    detail::finish_distortion(p, c, [&] { return detail::transfer(m, detail::jfet_orders(j, b.vgst_v, b.vds_v)); });
    if (d != Detail::core) {
      const double kt4 = detail::thermal_v2(1.0, c.celsius);
      const double rsig = c.source_ohm > 0 ? c.source_ohm : 1e-3;
      double v2 = kt4 * par(rsig, v[RG]);
      v2 += (2.0 / 3.0) * kt4 / gm;
      v2 += kt4 * (1.0 / v[RS] + 1.0 / c.load_ohm) / (gm * gm);
      p.noise_v_rthz = std::sqrt(v2) / divider;
      p.stress = {detail::res_stress(RG, 0), detail::res_stress(RS, b.id_a * b.id_a * v[RS]),
                  detail::cap_stress(CIN, 0.0), detail::cap_stress(COUT, b.vs_v)};
    }
    return p;
  }

  // Design: RG from the input impedance; RS over a range of drain currents (the gain is
  // near one whatever RS is; the current sets the swing into the load).
  void propose(const Goal& g, const Transistor& q, const Conditions& /*c*/, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    const auto& j = q.jfet;
    const std::vector<double> rgs = detail::gate_resistors(shelf, g.zin_min_ohm);
    for (double rg : rgs) {
      std::vector<double> rss;
      // Down to a few per cent of IDSS: a large RS sets the current nearly by itself (the
      // source sits within |VP| of ground whatever RS is), so the gain spreads least there.
      for (double frac : {0.02, 0.05, 0.1, 0.2, 0.3, 0.45, 0.6, 0.8}) {
        const double id = frac * j.idss_a;
        if (g.max_current_a > 0 && id > g.max_current_a) continue;
        shelf.nearest(j.vp_abs_v * (1.0 - std::sqrt(frac)) / id, 2, rss);
      }
      // And the shelf's values across the whole range, from 0.8 IDSS down to half a per cent.
      const double rs_lo = j.vp_abs_v * (1.0 - std::sqrt(0.8)) / (0.8 * j.idss_a);
      const double rs_hi = j.vp_abs_v * (1.0 - std::sqrt(0.005)) / (0.005 * j.idss_a);
      shelf.spread(rs_lo, rs_hi, 16, rss);
      detail::unique_values(rss);
      for (double rs : rss) {
        Values v;
        v[RG] = rg;
        v[RS] = rs;
        emit(v);
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    Values t = v;
    const detail::JfetBias b = detail::jfet_bias(q.jfet, 0.0, v[RS], 0.0, c.supply_v);
    const double zout = b.conducts ? par(v[RS], 1.0 / b.gm_s) : v[RS];
    t[CIN] = detail::cap_for(c.source_ohm + v[RG], f / 6);
    t[COUT] = detail::cap_for(zout + c.load_ohm, f / 6);
    return t;
  }
};

}  // namespace

const Topology& jfet_follower() {
  static const JfetFollower t;
  return t;
}

}  // namespace shelfstage::stages
