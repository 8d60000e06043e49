// jfet-boot-follower: JFET source follower with a bootstrapped gate resistor. The source
// resistor is split at a tap x: RS1 (source to x) sets the bias, RS2 (x to ground) lifts the
// source for swing and is the AC load. RG returns the gate to the tap, and CB carries the
// source's signal to the tap, so RG sees only the small difference between gate and source:
// the input impedance is RG / (1 - A), tens of megohms from a 1M part, with the full swing
// and the gain just under one of a follower. Its equations:
//   DC (no gate current): VG = Vx = ID RS2, VGS = -ID RS1, VS = ID (RS1 + RS2), VDS = VDD - VS.
//   Mid-band (CB a short, drain at AC ground), with G = 1/RS2 + 1/RL + 1/ro:
//     A = vs/vg = (gm + 1/RG) / (gm + 1/RG + G),   Zin = RG / (1 - A),
//     gain = A Zin / (Zin + Rsig),   Zout = 1 / (1/RS2 + 1/ro + (gm + 1/RG)(1 - k)),
//   k = Rsig / (Rsig + RG) (the gate follows the output through RG when driven from Rsig).
// Zin = R / (1 - A) is the textbook form of bootstrapping a resistor whose far end follows its
// near end with gain A (Horowitz and Hill, The Art of Electronics, on bootstrapping; from memory).
#include <algorithm>
#include <complex>
#include <fmt/format.h>

#include "common.hpp"
#include "distortion.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { RG, RS1, RS2, CB, CIN, COUT };

constexpr Role kRoles[] = {
    {"RG",
     "R1",
     'R',
     false,
     false,
     "",
     "",
     "gate to the tap x, bootstrapped: sets the input impedance",
     {13, 19, true, 'l'}},
    {"RS1", "R2", 'R', false, false, "", "", "source to the tap x: sets the bias", {19, 17, true, 'l'}},
    {"RS2",
     "R3",
     'R',
     false,
     false,
     "",
     "",
     "tap x to ground: lifts the source for swing; the AC load",
     {19, 23, true, 'l'}},
    {"CB",
     "C2",
     'C',
     false,
     true,
     "source",
     "x",
     "bootstrap: carries the source's signal to the tap",
     {22, 17, true, 'r'},
     true},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "source", "out", "output coupling", {26, 14, false, 'a'}},
};
constexpr InnerNet kInner[] = {{"x", "RS1\u2013RS2 tap", 4}};

// The response below mid-band, all three capacitors together: as CB's reactance grows the tap
// stops following the source, the bootstrap fails and the input impedance falls toward
// RG (RS1 + RS2) / RS1, which moves the input corner. Node equations in (vg, vs, vx) with the
// signal behind Zs = Rsig + Zc_in, Y1 = 1/RS1 + 1/Zc_b, Yo = 1/(RL + Zc_out):
//   gate:   (Ys + gR) vg - gR vx = Ys vsig
//   source: -gm vg + (gm + go + Y1 + Yo) vs - Y1 vx = 0
//   tap:    -gR vg - Y1 vs + (Y1 + gR + g2) vx = 0,   vout = vs RL Yo.
struct BootLowResponse {
  double gm = 0, go = 0, g_rg = 0, g1 = 0, g2 = 0, rsig = 0, rl = 0, cin = 0, cb = 0, cout = 0;
  double mid_gain = 0;  ///< the closed form's mid-band gain (every capacitor a short)

  std::complex<double> transfer(std::complex<double> z_cin, std::complex<double> y_cb,
                                std::complex<double> z_cout) const {
    using C = std::complex<double>;
    const C ys = 1.0 / (rsig + z_cin), y1 = g1 + y_cb, yo = 1.0 / (rl + z_cout);
    const C a[3][3] = {{ys + g_rg, 0.0, -g_rg}, {-gm, gm + go + y1 + yo, -y1}, {-g_rg, -y1, y1 + g_rg + g2}};
    const C rhs[3] = {ys, 0.0, 0.0};
    auto det = [](const C m[3][3]) {
      return m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0]) +
             m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
    };
    C m[3][3];
    std::copy(&a[0][0], &a[0][0] + 9, &m[0][0]);
    for (int r = 0; r < 3; ++r) m[r][1] = rhs[r];  // Cramer's rule for vs
    return det(m) / det(a) * rl * yo;
  }
  // Mid-band from the closed form: the solve with CB's admittance made huge would cancel
  // its square out of the determinant and lose the digits that matter.
  std::complex<double> mid() const { return mid_gain; }
  std::complex<double> at(double w) const {
    const std::complex<double> s(0.0, w);
    return transfer(1.0 / (s * cin), s * cb, 1.0 / (s * cout));
  }
  double h2(double w, std::complex<double> ref) const { return std::norm(at(w) / ref); }
  /// The -3 dB frequency, Hz: the first rise through -3 dB from below, as a sweep upward
  /// meets it (the bootstrap failing can bend the response), found on a log grid and then
  /// halved in log w.
  double corner_hz() const {
    const std::complex<double> ref = mid();
    const double p_in = 1.0 / (cin * (rsig + 1.0 / g_rg)), p_out = 1.0 / (cout * rl), p_b = g1 / cb;
    const double lo = 0.01 * std::min({p_in, p_out, p_b}), hi = 10.0 * (p_in + p_out + p_b);
    auto below = [&](double w) { return h2(w, ref) < 0.5; };
    constexpr int kSteps = 120;
    double prev = lo;
    for (int i = 1; i <= kSteps; ++i) {
      const double w = lo * std::pow(hi / lo, static_cast<double>(i) / kSteps);
      if (below(prev) && !below(w)) return detail::lf_crossing_hz(below, prev, w);
      prev = w;
    }
    return detail::lf_crossing_hz(below, lo, hi);
  }
};

class JfetBootFollower final : public Topology {
 public:
  std::string_view name() const override { return "jfet-boot-follower"; }
  bool is_buffer() const override { return true; }
  std::string_view summary() const override {
    return "JFET source follower, gate resistor bootstrapped from a tap of the source resistor: tens of megohms in, "
           "gain just under one";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_jfet(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"gate", "source", "drain"}; }
  std::span<const InnerNet> inner_nets() const override { return kInner; }

  LoadLine load_line(const Values& v, const Conditions& c) const override {
    return {.at_common = true, .r_dc_ohm = v[RS1] + v[RS2], .r_ac_ohm = par(v[RS2], c.load_ohm)};
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "gate", "in");
    detail::add_role(net, kRoles, v, RG, "gate", "x");
    detail::add_role(net, kRoles, v, RS1, "source", "x");
    detail::add_role(net, kRoles, v, RS2, "x", "0");
    detail::add_role(net, kRoles, v, CB, "source", "x");
    detail::add_role(net, kRoles, v, COUT, "source", "out");
    net.jfet("Q1", "vdd", "gate", "source", q.jfet);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    Performance p;
    const auto& j = q.jfet;
    // VGS = -ID RS1 and VDS = VDD - ID (RS1 + RS2): the self-biased solution with RS2 in
    // the drain's place (the same current through the same total), shifted up by ID RS2.
    const detail::JfetBias b = detail::jfet_bias(j, 0.0, v[RS1], v[RS2], c.supply_v);
    if (!detail::jfet_operating_point(p, b)) return p;
    const double v_tap = b.id_a * v[RS2];
    p.v_in = v_tap;
    p.v_common = v_tap + b.vs_v;
    p.v_out = c.supply_v;
    const double gm = b.gm_s, g_rg = 1.0 / v[RG];
    const double go = std::isinf(b.ro_ohm) ? 0.0 : 1.0 / b.ro_ohm;
    const double rsig = c.source_ohm > 0 ? c.source_ohm : 1e-3;
    const double g_load = 1.0 / v[RS2] + 1.0 / c.load_ohm + go;
    const double a_int = (gm + g_rg) / (gm + g_rg + g_load);
    p.zin_ohm = v[RG] / (1.0 - a_int);
    const double divider = p.zin_ohm / (p.zin_ohm + c.source_ohm);
    p.gain = a_int * divider;
    const double k = rsig / (rsig + v[RG]);
    p.zout_ohm = 1.0 / (1.0 / v[RS2] + go + (gm + g_rg) * (1.0 - k));
    // Swing. Down: the current falls to zero across the AC load RS2 || RL. Up: the source
    // rises until VDS meets VGS - VP, or the gate reaches the source.
    const double r_ac = par(v[RS2], c.load_ohm);
    detail::jfet_follower_swing(p, j, b, r_ac);
    if (detail::screened_out(p, c)) return p;

    // High corner: the hybrid-pi network with RG between gate and source (where gpi sits in a
    // bipolar device: the bootstrap), the drain at AC ground, output at the source.
    detail::HybridPi m;
    m.g_src = 1.0 / rsig;
    m.gpi = g_rg;
    m.cpi = detail::cgs_at(j, b.vgs_v);
    m.cmu = detail::cgd_at(j, b.vgs_v - b.vds_v);
    m.gm = gm;
    m.go = go;
    m.g_e = 1.0 / r_ac;
    m.g_c = 1e9;
    m.out_at_emitter = true;
    detail::finish_response(p, {}, m, c, v[COUT], d);
    const BootLowResponse lr{gm,         go,     g_rg,  1.0 / v[RS1], 1.0 / v[RS2], rsig,
                             c.load_ohm, v[CIN], v[CB], v[COUT],      p.gain};
    if (v[CIN] > 0 && v[CB] > 0 && v[COUT] > 0) {
      if (d == Detail::full) p.f_low_hz = lr.corner_hz();
      if (c.band_lo_hz > 0)
        p.loss_lo_db = std::max(0.0, -10.0 * std::log10(lr.h2(2 * std::numbers::pi * c.band_lo_hz, lr.mid())));
    }

    detail::finish_distortion(p, c, [&] { return detail::transfer(m, detail::jfet_orders(j, b.vgst_v, b.vds_v)); });
    if (d != Detail::core) {
      // Input-referred noise: the source's own; RG's noise current (bootstrapped, it flows
      // through the source resistance only); the channel and the source's load, as in a
      // follower (each an output current of gm times the input it stands for).
      const double kt4 = detail::thermal_v2(1.0, c.celsius);
      const double v2 =
          kt4 * rsig + kt4 * g_rg * rsig * rsig +
          ((2.0 / 3.0) * kt4 / gm + kt4 * (1.0 / v[RS2] + 1.0 / c.load_ohm) / (gm * gm)) / (divider * divider);
      p.noise_v_rthz = std::sqrt(v2);
      const double i2 = b.id_a * b.id_a;
      p.stress = {
          detail::res_stress(RG, 0),      detail::res_stress(RS1, i2 * v[RS1]), detail::res_stress(RS2, i2 * v[RS2]),
          detail::cap_stress(CB, b.vs_v), detail::cap_stress(CIN, v_tap),       detail::cap_stress(COUT, p.v_common)};
    }
    return p;
  }

  // Design: RS1 for a range of drain currents at self-bias; RS2 to put the source near the
  // middle of its room (from ground to the supply less the overdrive); RG from the input
  // impedance less the bootstrap (A of 0.8 at least: Zin >= 5 RG).
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    const auto& j = q.jfet;
    const std::vector<double> rgs = detail::gate_resistors(shelf, g.zin_min_ohm / 5);
    for (double frac : {0.1, 0.2, 0.3, 0.45, 0.6, 0.8}) {
      const double id = frac * j.idss_a;
      if (g.max_current_a > 0 && id > g.max_current_a) continue;
      const double vov = j.vp_abs_v * std::sqrt(frac);
      std::vector<double> rs1s;
      shelf.nearest((j.vp_abs_v - vov) / id, 2, rs1s);
      for (double rs1 : rs1s) {
        std::vector<double> rs2s;
        for (double share : {0.35, 0.5, 0.65}) {
          const double r = share * (c.supply_v - vov) / id - rs1;
          if (r > 0) shelf.nearest(r, 2, rs2s);
        }
        detail::unique_values(rs2s);
        for (double rs2 : rs2s)
          for (double rg : rgs) {
            Values v;
            v[RG] = rg;
            v[RS1] = rs1;
            v[RS2] = rs2;
            emit(v);
          }
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    return with_capacitors(v, q, c, f / 6, f / 10);
  }

  // The source midway between where RS1 alone puts it and the supply less the overdrive; RG 1M.
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    const auto& j = q.jfet;
    const double id = k.current_frac * j.idss_a;
    const double vov = j.vp_abs_v * std::sqrt(k.current_frac);
    Values v;
    v[RG] = 1e6;
    v[RS1] = (j.vp_abs_v - vov) / id;
    v[RS2] = std::max(0.5 * (c.supply_v - vov - id * v[RS1]) / id, 0.05 * v[RS1]);
    return with_capacitors(v, q, c, k.f_corner_hz, k.f_corner_hz);
  }

 private:
  // The capacitors for coupling corners at f_couple and the bootstrap's at f_boot: CIN against
  // RG alone (the input impedance once the bootstrap fails: the safe side), CB against RS1
  // beside the loop through the source and RS2, COUT against the load.
  static Values with_capacitors(const Values& v, const Transistor& q, const Conditions& c, double f_couple,
                                double f_boot) {
    Values t = v;
    const detail::JfetBias b = detail::jfet_bias(q.jfet, 0.0, v[RS1], v[RS2], c.supply_v);
    const double inv_gm = b.conducts ? 1.0 / b.gm_s : v[RS1];
    t[CIN] = detail::cap_for(c.source_ohm + v[RG], f_couple);
    t[CB] = detail::cap_for(par(v[RS1], par(inv_gm, c.load_ohm) + v[RS2]), f_boot);
    t[COUT] = detail::cap_for(par(v[RS2], inv_gm) + c.load_ohm, f_couple);
    return t;
  }
};

}  // namespace

const Topology& jfet_boot_follower() {
  static const JfetBootFollower t;
  return t;
}

}  // namespace shelfstage::stages
