// bjt-follower: BJT emitter follower (common collector), divider bias.
#include <algorithm>
#include <complex>
#include <numbers>
#include <fmt/format.h>

#include "common.hpp"
#include "distortion.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { R1, R2, RE, CIN, COUT };

constexpr Role kRoles[] = {
    {"R1", "R1", 'R', false, false, "", "", "supply to base: upper divider leg", {13, 6, true, 'l'}},
    {"R2", "R2", 'R', false, false, "", "", "base to ground: lower divider leg", {13, 19, true, 'l'}},
    {"RE",
     "R3",
     'R',
     false,
     false,
     "",
     "",
     "emitter to ground: sets the current and drives the load",
     {19, 19, true, 'l'}},
    {"CIN", "C1", 'C', false, true, "base", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C2", 'C', false, true, "emitter", "out", "output coupling", {23, 16, false, 'b'}},
};

// The low-frequency response with both coupling capacitors solved together: the load
// reaches the base through the emitter ((beta + 1)*Ze), so the output coupling moves the
// input impedance and with it the input corner (two independent sections miss that by up to
// 10 % on f_low). With Zc = 1/(s C), RE' = RE || ro:
//   H(s) = Zp/(Rsig + Zc_in + Zp) * (beta + 1)*Ze/Zb * RL/(RL + Zc_out),
//   Ze = RE' || (RL + Zc_out), Zb = rpi + (beta + 1)*Ze, Zp = RTh || Zb.
struct FollowerLowResponse {
  double beta = 0, rpi = 0, rth = 0, rsig = 0, re = 0, rl = 0, cin = 0, cout = 0;

  std::complex<double> transfer(std::complex<double> z_cin, std::complex<double> z_cout) const {
    const std::complex<double> branch = rl + z_cout;
    const std::complex<double> ze = re * branch / (re + branch);
    const std::complex<double> zb = rpi + (beta + 1.0) * ze;
    const std::complex<double> zp = rth * zb / (rth + zb);
    return zp / (rsig + z_cin + zp) * (beta + 1.0) * ze / zb * rl / branch;
  }
  std::complex<double> mid() const { return transfer(0.0, 0.0); }
  /// |H(jw)|^2 relative to mid-band (ref = mid()).
  double h2(double w, std::complex<double> ref) const {
    const std::complex<double> s(0.0, w);
    return std::norm(transfer(1.0 / (s * cin), 1.0 / (s * cout)) / ref);
  }
  /// The -3 dB frequency, Hz: bracketed by the two poles (the corner lies between the larger
  /// and their sum), then bisection in log w.
  double corner_hz() const {
    const std::complex<double> ref = mid();
    const double p_in = 1.0 / (cin * (rsig + rth)), p_out = 1.0 / (cout * rl);
    return detail::lf_crossing_hz([&](double w) { return h2(w, ref) < 0.5; }, 0.25 * std::max(p_in, p_out),
                                  4.0 * (p_in + p_out));
  }
};

class BjtFollower final : public Topology {
 public:
  std::string_view name() const override { return "bjt-follower"; }
  bool is_buffer() const override { return true; }
  std::string_view summary() const override {
    return "BJT emitter follower: gain just under one, low output impedance for a heavy load";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_bjt(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"base", "emitter", "collector"}; }
  LoadLine load_line(const Values& v, const Conditions& c) const override {
    return {.at_common = true, .r_dc_ohm = v[RE], .r_ac_ohm = par(v[RE], c.load_ohm)};
  }
  // The emitter a little below half the supply.
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    const auto& b = q.bjt;
    const double hfe = k.nominal_hfe > 0 ? k.nominal_hfe : b.bf;
    const double ve = 0.45 * c.supply_v;
    Values v;
    v[RE] = ve / (k.current_a * (1.0 + 1.0 / hfe));
    detail::bjt_divider_reference(v, R1, R2, CIN, COUT, b, c, k, ve, b.vt_v / k.current_a);
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "base", "in");
    detail::add_role(net, kRoles, v, R1, "vdd", "base");
    detail::add_role(net, kRoles, v, R2, "base", "0");
    detail::add_role(net, kRoles, v, RE, "emitter", "0");
    detail::add_role(net, kRoles, v, COUT, "emitter", "out");
    net.bjt("Q1", "vdd", "base", "emitter", q.bjt);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    Performance p;
    const auto& t = q.bjt;
    const double vth = c.supply_v * v[R2] / (v[R1] + v[R2]);
    const double rth = par(v[R1], v[R2]);
    const detail::BjtBias b = detail::bjt_bias(t, vth, rth, v[RE], 0.0, c.supply_v);
    if (!b.conducts) {
      p.problem = "cut off: the base divider does not reach VBE";
      return p;
    }
    p.valid = true;
    p.bias_current_a = b.ic_a;
    p.v_in = b.vb_v;
    p.v_common = b.ve_v;
    p.v_out = c.supply_v;
    const double idiv = (c.supply_v - b.vb_v) / v[R1];
    p.supply_current_a = b.ic_a + idiv;
    p.active = b.vce_v > t.vce_sat_v;
    if (!p.active) p.problem = fmt::format("saturated: VCE {:.2f} V", b.vce_v);

    const double gm = b.gm_s, rpi = b.rpi_ohm, beta = gm * rpi;
    const double rsig = c.source_ohm > 0 ? c.source_ohm : 1e-3;
    const double rs2 = par(rsig, rth);
    const double re_ac = par(par(v[RE], c.load_ohm), b.ro_ohm);
    const double rib = rpi + (beta + 1.0) * re_ac;
    p.zin_ohm = par(rth, rib);
    const double a_int = (beta + 1.0) * re_ac / rib;
    p.gain = a_int * p.zin_ohm / (p.zin_ohm + c.source_ohm);
    p.zout_ohm = par(par(v[RE], b.ro_ohm), (rpi + rs2) / (beta + 1.0));
    // Swing: down until the transistor cuts off (IE into RE || RL); up until VCE reaches
    // saturation.
    const double r_ac = par(v[RE], c.load_ohm);
    p.swing_down_v = b.ie_a * r_ac;
    p.swing_up_v = std::max(0.0, b.vce_v - t.vce_sat_v);
    p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
    if (detail::screened_out(p, c)) return p;

    // High corner: the hybrid-pi network with the collector at AC ground, output at the emitter.
    detail::HybridPi m;
    m.g_src = 1.0 / rs2;
    m.gpi = 1.0 / rpi;
    m.cpi = detail::cbe_at(t, b.vbe_v);
    m.cmu = detail::cbc_at(t, b.vb_v - c.supply_v);
    m.gm = gm;
    m.go = std::isinf(b.ro_ohm) ? 0.0 : 1.0 / b.ro_ohm;
    m.g_e = 1.0 / par(v[RE], c.load_ohm);
    m.g_c = 1e9;
    m.out_at_emitter = true;
    // The low-frequency side comes from FollowerLowResponse below, not from separate sections.
    detail::finish_response(p, {}, m, c, v[COUT], d);
    {
      // The two coupling corners interact through the base: solve them together.
      const FollowerLowResponse lr{beta, rpi, rth, c.source_ohm, par(v[RE], b.ro_ohm), c.load_ohm, v[CIN], v[COUT]};
      if (d == Detail::full) p.f_low_hz = lr.corner_hz();
      if (c.band_lo_hz > 0)
        p.loss_lo_db = std::max(0.0, -10.0 * std::log10(lr.h2(2 * std::numbers::pi * c.band_lo_hz, lr.mid())));
    }

    // Third-order expansion of the exponential law with the Early effect (the collector at
    // AC ground, so VCE moves against the output) on the mid-band network.
    detail::finish_distortion(
        p, c, [&] { return detail::transfer(m, detail::bjt_orders(b.ic_a, b.ib_a, t.vt_v, b.ro_ohm)); });
    if (d != Detail::core) {
      const double kt4 = detail::thermal_v2(1.0, c.celsius);
      const double q2 = 2.0 * devices::kCharge;
      const double gx = gm + 1.0 / rpi;
      const double kc = (1.0 + rs2 / rpi) / gx;
      double v2 = kt4 * rs2;
      v2 += q2 * b.ic_a * kc * kc;                                            // collector shot
      v2 += q2 * b.ib_a * ((1.0 - gm * rs2) / gx) * ((1.0 - gm * rs2) / gx);  // base shot
      v2 += kt4 * (1.0 / v[RE] + 1.0 / c.load_ohm) * kc * kc;                 // RE and the load
      p.noise_v_rthz = std::sqrt(v2) / (rth / (rth + c.source_ohm));
      const double i1 = idiv, i2 = b.vb_v / v[R2];
      p.stress = {detail::res_stress(R1, i1 * i1 * v[R1]), detail::res_stress(R2, i2 * i2 * v[R2]),
                  detail::res_stress(RE, b.ie_a * b.ie_a * v[RE]), detail::cap_stress(CIN, b.vb_v),
                  detail::cap_stress(COUT, b.ve_v)};
    }
    return p;
  }

  // Design: emitter near half the supply for the widest swing (and a little lower for a
  // heavy load); the current from the load it must drive; the divider as stiff as the
  // input impedance allows.
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    const auto& t = q.bjt;
    for (double ic : {0.5e-3, 1e-3, 2e-3, 5e-3, 10e-3}) {
      const double ib = ic / t.bf;
      for (double ve_frac : {0.45, 0.35}) {
        const double ve = ve_frac * c.supply_v;
        const double vb = ve + t.vt_v * std::log(ic / t.is_a);
        for (double k : {20.0, 8.0, 3.0}) {
          const double idiv = k * ib;
          if (g.max_current_a > 0 && ic + idiv > g.max_current_a) continue;
          std::vector<double> r1s, r2s, res;
          shelf.nearest((c.supply_v - vb) / (idiv + ib), 2, r1s);
          shelf.nearest(vb / idiv, 1, r2s);
          shelf.nearest(ve / (ic + ib), 2, res);
          for (double a : r1s)
            for (double bb : r2s)
              for (double re : res) {
                const double zin = par(par(a, bb), t.bf * par(re, c.load_ohm));
                if (zin < g.zin_min_ohm * 1.02) continue;
                Values v;
                v[R1] = a;
                v[R2] = bb;
                v[RE] = re;
                emit(v);
              }
        }
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    Values t = v;
    const auto& d = q.bjt;
    const double rth = par(v[R1], v[R2]);
    const detail::BjtBias b = detail::bjt_bias(d, c.supply_v * v[R2] / (v[R1] + v[R2]), rth, v[RE], 0.0, c.supply_v);
    const double gm = b.conducts ? b.gm_s : 1e-3;
    const double zin = par(rth, d.bf * par(v[RE], c.load_ohm));
    const double zout = par(v[RE], (d.bf / gm + par(c.source_ohm > 0 ? c.source_ohm : 1e-3, rth)) / (d.bf + 1.0));
    t[CIN] = detail::cap_for(c.source_ohm + zin, f / 6);
    t[COUT] = detail::cap_for(zout + c.load_ohm, f / 6);
    return t;
  }
};

}  // namespace

const Topology& bjt_follower() {
  static const BjtFollower t;
  return t;
}

}  // namespace shelfstage::stages
