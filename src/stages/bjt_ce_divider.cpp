// bjt-ce-divider: BJT common emitter, divider bias, split emitter resistor.
#include <algorithm>
#include <complex>
#include <fmt/format.h>
#include <numbers>

#include "common.hpp"
#include "distortion.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { R1, R2, RC, RE1, RE2, CE, CIN, COUT };

constexpr Role kRoles[] = {
    {"R1", "R1", 'R', false, false, "", "", "supply to base: upper divider leg", {13, 6, true, 'l'}},
    {"R2", "R2", 'R', false, false, "", "", "base to ground: lower divider leg", {13, 19, true, 'l'}},
    {"RC",
     "R3",
     'R',
     false,
     false,
     "",
     "",
     "supply to collector: the load the gain develops across",
     {19, 6, true, 'l'}},
    {"RE1", "R4", 'R', true, false, "", "", "emitter to x, unbypassed: sets the gain", {19, 17, true, 'l'}},
    {"RE2", "R5", 'R', true, false, "", "", "x to ground, bypassed: adds bias only", {19, 23, true, 'l'}},
    {"CE", "C2", 'C', true, true, "x", "0", "bypass across RE2", {22, 23, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "base", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "collector", "out", "output coupling", {23, 9, false, 'a'}},
};
constexpr InnerNet kInner[] = {{"x", "RE1\u2013RE2 junction", 4, "RE1"}};
constexpr detail::CommonRoles kCommon{RC, RE1, RE2, CE, CIN, COUT};

// The low-frequency response solved as one network: the input coupling, the emitter bypass
// and the output coupling interact through the transistor (as the bypass fails, the emitter
// impedance Ze rises, and with it the base's input impedance and the device's output
// resistance). Independent sections miss that by 5-15 % on f_low when the corners sit close
// together. The hybrid-pi with ro, complex impedances throughout (Zc = 1/(s C)):
//   Ze = RE1 + RE2/(1 + s CE RE2), Rc = RC || (RL + Zc_out),
//   Rib = rpi + Ze*((beta + 1)*ro + Rc)/(ro + Ze + Rc), Zp = RTh || Rib,
//   H = Zp/(Rsig + Zc_in + Zp) * -(beta - (Rib - rpi)/ro)*(Rc || ro)/Rib * RL/(RL + Zc_out)
// (the mid-band gain of evaluate() is H with every Zc = 0 and CE a short).
struct CeLowResponse {
  double beta = 0, rpi = 0, rth = 0, rsig = 0, re1 = 0, re2 = 0, ce = 0, cin = 0, rc = 0, rl = 0, cout = 0;
  double ro = 0;  ///< infinite: no Early effect

  using cd = std::complex<double>;
  cd transfer(cd ze, cd z_cin, cd z_cout) const {
    const cd rcl = rc * (rl + z_cout) / (rc + rl + z_cout);
    cd rib, av;
    if (std::isinf(ro)) {
      rib = rpi + (beta + 1.0) * ze;
      av = -beta * rcl / rib;
    } else {
      rib = rpi + ze * ((beta + 1.0) * ro + rcl) / (ro + ze + rcl);
      av = -(beta - (rib - rpi) / ro) * (rcl * ro / (rcl + ro)) / rib;
    }
    const cd zp = rth * rib / (rth + rib);
    return zp / (rsig + z_cin + zp) * av * rl / (rl + z_cout);
  }
  cd emitter(cd s) const { return re1 + (ce > 0 ? re2 / (1.0 + s * ce * re2) : cd(re2)); }
  cd mid() const { return transfer(ce > 0 ? cd(re1) : cd(re1 + re2), 0.0, 0.0); }
  /// |H(jw)|^2 relative to mid-band (ref = mid()).
  double h2(double w, cd ref) const {
    const cd s(0.0, w);
    return std::norm(transfer(emitter(s), 1.0 / (s * cin), 1.0 / (s * cout)) / ref);
  }
  /// The -3 dB frequency, Hz: bracketed by the sections' poles (the corner lies between the
  /// largest and their sum), then bisection in log w.
  double corner_hz() const {
    const cd ref = mid();
    const double p_in = 1.0 / (cin * (rsig + rth)), p_out = 1.0 / (cout * rl);
    const double p_e =
        (ce > 0 && re2 > 0) ? 1.0 / (ce * (re2 * (re1 + rpi / (beta + 1.0)) / (re2 + re1 + rpi / (beta + 1.0)))) : 0.0;
    return detail::lf_crossing_hz([&](double w) { return h2(w, ref) < 0.5; }, 0.25 * std::max({p_in, p_out, p_e}),
                                  4.0 * (p_in + p_out + p_e));
  }
};

// The bias point the divider sets.
detail::BjtBias divider_bias(const Values& v, const devices::BjtInstance& t, const Conditions& c) {
  const double vth = c.supply_v * v[R2] / (v[R1] + v[R2]);
  const double rth = par(v[R1], v[R2]);
  const double re_dc = v[RE1] + v[RE2];
  return detail::bjt_bias(t, vth, rth, re_dc, v[RC], c.supply_v);
}

// The DC figures: bias current, node voltages, supply current; active unless saturated.
void set_operating_point(Performance& p, const detail::BjtBias& b, const Values& v, const devices::BjtInstance& t,
                         const Conditions& c) {
  p.valid = true;
  p.bias_current_a = b.ic_a;
  p.v_in = b.vb_v;
  p.v_common = b.ve_v;
  p.v_out = b.vc_v;
  const double idiv = (c.supply_v - b.vb_v) / v[R1];  // current in the upper leg
  p.supply_current_a = b.ic_a + idiv;
  p.active = b.vce_v > t.vce_sat_v;
  if (!p.active) p.problem = fmt::format("saturated: VCE {:.2f} V", b.vce_v);
}

// The small-signal view of a conducting stage that the figures are worked from.
struct CeSignal {
  detail::BjtBias b;
  double rth = 0;    // the divider's Thevenin resistance
  double r_deg = 0;  // unbypassed emitter resistance
  double gm = 0, rpi = 0, beta = 0, ro = 0;
  double rs2 = 0;    // the base's source resistance
  double rl_ac = 0;  // the collector's AC load
};

CeSignal ce_signal(const detail::BjtBias& b, const Values& v, const Conditions& c) {
  CeSignal s;
  s.b = b;
  s.rth = par(v[R1], v[R2]);
  s.r_deg = v[RE1] + (v[CE] > 0 ? 0.0 : v[RE2]);
  s.gm = b.gm_s;
  s.rpi = b.rpi_ohm;
  s.beta = s.gm * s.rpi;
  const double rsig = c.source_ohm > 0 ? c.source_ohm : 1e-3;
  s.rs2 = par(rsig, s.rth);
  s.rl_ac = par(v[RC], c.load_ohm);
  s.ro = b.ro_ohm;
  return s;
}

// Mid-band input impedance, gain and output impedance.
void set_mid_band(Performance& p, const CeSignal& s, const Values& v, const Conditions& c) {
  const double rpi = s.rpi, beta = s.beta, ro = s.ro, r_deg = s.r_deg, rl_ac = s.rl_ac, rs2 = s.rs2;
  // Resistance into the base with ro carrying part of the emitter current, from the
  // hybrid-pi model with ro (the usual form for the common emitter with an emitter
  // resistance):
  // Rib = rpi + (beta + 1)*Rdeg*(ro + RL'/(beta + 1))/(ro + Rdeg + RL').
  const double rib = std::isinf(ro) ? rpi + (beta + 1.0) * r_deg
                                    : rpi + (beta + 1.0) * r_deg * (ro + rl_ac / (beta + 1.0)) / (ro + r_deg + rl_ac);
  p.zin_ohm = par(s.rth, rib);
  // Output resistance of the degenerated transistor with a source resistance Rs'' at the
  // base: ro*(1 + gm*Re'*rpi/(rpi + Rs'')) + Re', Re' = Rdeg || (rpi + Rs'') (the base
  // moves with the emitter through Rs'', which takes back part of the feedback).
  const double r_e = r_deg > 0 ? par(r_deg, rpi + rs2) : 0.0;
  const double r_dev = ro * (1.0 + s.gm * r_e * rpi / (rpi + rs2)) + r_e;
  const double divider = p.zin_ohm / (p.zin_ohm + c.source_ohm);
  // Base to collector, exact for the hybrid-pi with ro at mid-band:
  // vc/vb = -(beta - (Rib - rpi)/ro)*(RL' || ro)/Rib.
  const double av_base = std::isinf(ro) ? -beta * rl_ac / rib : -(beta - (rib - rpi) / ro) * par(rl_ac, ro) / rib;
  p.gain = divider * av_base;
  p.zout_ohm = par(v[RC], r_dev);
}

// Swing: up to cut-off (IC*RAC); down to the edge of saturation, the emitter moving
// with the signal current through RE1.
void set_swing(Performance& p, const CeSignal& s, const devices::BjtInstance& t) {
  p.swing_up_v = s.b.ic_a * s.rl_ac;
  p.swing_down_v = std::max(0.0, (s.b.vce_v - t.vce_sat_v) / (1.0 + s.r_deg / s.rl_ac));
  p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
}

// The hybrid-pi network (base, emitter, collector) at mid-band, for the high corner and
// the distortion.
detail::HybridPi hybrid_pi(const CeSignal& s, const devices::BjtInstance& t) {
  detail::HybridPi m;
  m.g_src = 1.0 / s.rs2;
  m.gpi = 1.0 / s.rpi;
  m.cpi = detail::cbe_at(t, s.b.vbe_v);
  m.cmu = detail::cbc_at(t, s.b.vb_v - s.b.vc_v);
  m.gm = s.gm;
  m.go = std::isinf(s.b.ro_ohm) ? 0.0 : 1.0 / s.b.ro_ohm;
  m.g_e = detail::g_of(s.r_deg);
  m.g_c = 1.0 / s.rl_ac;
  return m;
}

// The low corner and the loss at the band's low edge: the couplings and the bypass
// interact through the transistor, so one network (CeLowResponse).
void set_low_response(Performance& p, const CeSignal& s, const Values& v, const Conditions& c, Detail d) {
  const CeLowResponse lr{s.beta, s.rpi, s.rth,      c.source_ohm, v[RE1], v[RE2], v[RE2] > 0 ? v[CE] : 0.0,
                         v[CIN], v[RC], c.load_ohm, v[COUT],      s.ro};
  if (d == Detail::full) p.f_low_hz = lr.corner_hz();
  if (c.band_lo_hz > 0)
    p.loss_lo_db = std::max(0.0, -10.0 * std::log10(lr.h2(2 * std::numbers::pi * c.band_lo_hz, lr.mid())));
}

// Input-referred noise density: the source and divider, collector and base shot noise, RE1,
// and RC with the load.
double input_noise(const CeSignal& s, const Values& v, const Conditions& c) {
  const double gm = s.gm, rpi = s.rpi, rs2 = s.rs2, r_deg = s.r_deg;
  const double kt4 = detail::thermal_v2(1.0, c.celsius);
  const double q2 = 2.0 * devices::kCharge;
  const double dd = 1.0 + (rs2 + r_deg) / rpi + gm * r_deg;
  double v2 = kt4 * rs2;  // source and divider
  const double kc = (1.0 + (rs2 + r_deg) / rpi) / gm;
  v2 += q2 * s.b.ic_a * kc * kc;                                         // collector shot
  v2 += q2 * s.b.ib_a * (rs2 + r_deg) * (rs2 + r_deg);                   // base shot
  v2 += kt4 * r_deg;                                                     // RE1
  v2 += kt4 * (1.0 / v[RC] + 1.0 / c.load_ohm) * (dd / gm) * (dd / gm);  // RC and the load
  const double dth = s.rth / (s.rth + c.source_ohm);
  return std::sqrt(v2) / dth;
}

// Power in each resistor present, DC across each capacitor.
std::vector<Stress> part_stress(const detail::BjtBias& b, const Values& v, const Conditions& c) {
  const double i1 = (c.supply_v - b.vb_v) / v[R1], i2 = b.vb_v / v[R2];
  std::vector<Stress> st =
      detail::stress_list({detail::res_stress(R1, i1 * i1 * v[R1]), detail::res_stress(R2, i2 * i2 * v[R2]),
                           detail::res_stress(RC, b.ic_a * b.ic_a * v[RC])});
  if (v[RE1] > 0) st.push_back(detail::res_stress(RE1, b.ie_a * b.ie_a * v[RE1]));
  if (v[RE2] > 0) st.push_back(detail::res_stress(RE2, b.ie_a * b.ie_a * v[RE2]));
  if (v[CE] > 0) st.push_back(detail::cap_stress(CE, b.ie_a * v[RE2], v[RE1] > 0 ? "x" : "emitter"));
  st.push_back(detail::cap_stress(CIN, b.vb_v));
  st.push_back(detail::cap_stress(COUT, b.vc_v));
  return st;
}

class BjtCeDivider final : public Topology {
 public:
  std::string_view name() const override { return "bjt-ce-divider"; }
  std::string_view summary() const override {
    return "BJT common emitter, divider bias: high gain, moderate input impedance";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_bjt(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"base", "emitter", "collector"}; }
  std::span<const InnerNet> inner_nets() const override { return kInner; }
  LoadLine load_line(const Values& v, const Conditions& c) const override {
    return detail::common_load_line(kCommon, v, c);
  }
  // The emitter at a tenth of the supply (at least 0.6 V), the collector halfway between
  // saturation and the supply.
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    const auto& b = q.bjt;
    const double hfe = k.nominal_hfe > 0 ? k.nominal_hfe : b.bf;
    const double ie = k.current_a * (1.0 + 1.0 / hfe);
    const double ve = std::max(0.1 * c.supply_v, 0.6);
    const double vc = 0.5 * (c.supply_v + ve + 0.2);
    Values v;
    v[RC] = (c.supply_v - vc) / k.current_a;
    detail::reference_leg(v, kCommon, ve / ie, b.vt_v / k.current_a, k);
    detail::bjt_divider_reference(v, R1, R2, CIN, COUT, b, c, k, ve, v[RC]);
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "base", "in");
    detail::add_role(net, kRoles, v, R1, "vdd", "base");
    detail::add_role(net, kRoles, v, R2, "base", "0");
    const std::string common = detail::wire_common_leg(net, kRoles, v, kCommon, "collector", "emitter");
    net.bjt("Q1", "collector", "base", common, q.bjt);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    Performance p;
    const auto& t = q.bjt;
    const detail::BjtBias b = divider_bias(v, t, c);
    if (!b.conducts) {
      p.problem = "cut off: the base divider does not reach VBE";
      return p;
    }
    set_operating_point(p, b, v, t, c);
    const CeSignal s = ce_signal(b, v, c);
    set_mid_band(p, s, v, c);
    set_swing(p, s, t);
    if (detail::screened_out(p, c)) return p;
    // High corner: the hybrid-pi network solved exactly. The low-frequency side comes from
    // CeLowResponse, not from separate sections.
    const detail::HybridPi m = hybrid_pi(s, t);
    detail::finish_response(p, {}, m, c, v[COUT], d);
    set_low_response(p, s, v, c, d);
    // Third-order expansion of the exponential law with the Early effect on the mid-band
    // network (HD2 to first order: Vo/(4*IC*RL'*(1 + gm*(Rdeg + Rs''/(beta + 1))))).
    detail::finish_distortion(
        p, c, [&] { return detail::transfer(m, detail::bjt_orders(b.ic_a, b.ib_a, t.vt_v, b.ro_ohm)); });
    if (d != Detail::core) {
      if (d == Detail::full) p.noise_v_rthz = input_noise(s, v, c);
      p.stress = part_stress(b, v, c);
    }
    return p;
  }

  // Design (bench rules, common practice): emitter at about a tenth of the supply and at
  // least 1 V; the divider carrying ten (or twenty) times the base current, or less when the
  // input impedance asks for it; RE1 and RC from the gain, re = VT/IC included.
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    const auto& t = q.bjt;
    // A heavy load wants a collector current several times its peak current (common
    // practice): beyond the usual few milliamperes then too.
    std::vector<double> currents{0.2e-3, 0.5e-3, 1e-3, 2e-3, 4e-3};
    const double i_load = 8.0 * g.swing_peak_v / c.load_ohm;
    if (i_load > currents.back()) currents.insert(currents.end(), {i_load, 2.0 * i_load});
    // The emitter at a tenth or a sixth of the supply as usual; higher (a stiffer bias, the
    // current set by RE far more than by VBE) where the collector still has room for the
    // swing above it.
    const double ve_room = c.supply_v - 2.0 * g.swing_peak_v - t.vce_sat_v - 1.0;
    // A narrower search takes every other emitter voltage and divider current.
    const double ve1 = std::max(1.0, 0.1 * c.supply_v), ve2 = std::max(1.2, 0.16 * c.supply_v);
    const double ve3 = 0.35 * c.supply_v, ve4 = 0.6 * c.supply_v;
    const auto ves = detail::choices(g, {ve1, ve2, ve3, ve4}, {ve1, ve3});
    const auto ks = detail::choices(g, {20.0, 10.0, 4.0, 1.5}, {10.0, 1.5});
    for (double ic : currents) {
      if (ic < detail::least_swing_current(g, c.load_ohm)) continue;
      const double ib = ic / t.bf;
      for (double ve : ves) {
        if (ve > c.supply_v / 3 && ve > ve_room) continue;
        const double vbe = t.vt_v * std::log(ic / t.is_a);
        const double vb = ve + vbe;
        for (double k : ks) {
          const double idiv = k * ib;
          if (g.max_current_a > 0 && ic + idiv > g.max_current_a) continue;
          std::vector<double> r1s, r2s, re_tot;
          shelf.nearest((c.supply_v - vb) / (idiv + ib), 1, r1s);
          shelf.nearest(vb / idiv, 1, r2s);
          shelf.nearest(ve / (ic + ib), 1, re_tot);
          if (re_tot.empty()) continue;
          // The nearest total; on a sparse shelf (nothing within 5 %) the single parts either
          // side as well, since the current then moves with the choice.
          const double re_want = ve / (ic + ib);
          if (std::abs(re_tot[0] / re_want - 1.0) <= 0.05) re_tot.resize(1);
          detail::unique_values(re_tot);
          const double gm = ic / t.vt_v;
          std::vector<std::pair<double, double>> splits;
          for (double total : re_tot) {
            const auto more = detail::leg_splits(shelf, total);
            splits.insert(splits.end(), more.begin(), more.end());
          }
          for (double r1 : r1s) {
            for (double r2 : r2s) {
              const double rth = par(r1, r2);
              for (auto [re1, re2] : splits) {
                const double zin = par(rth, t.bf * (1.0 / gm + re1));
                if (zin < g.zin_min_ohm * 1.02) continue;
                const double a_int = g.gain * (zin + c.source_ohm) / zin;
                // The stage's own current at its most (no collector resistor to take VCE, and
                // with it the Early factor, down), and with it its transconductance: the nominal
                // piece's screen sees this divider and leg exactly.
                const double most_a =
                    detail::bjt_bias(t, c.supply_v * r2 / (r1 + r2), rth, re1 + re2, 0.0, c.supply_v).ic_a;
                // The collector above saturation by the swing and a few tenths.
                const double room = (c.supply_v - ve - t.vce_sat_v - g.swing_peak_v - 0.3) / ic;
                const auto rcs =
                    detail::load_resistors(shelf, g, a_int, gm, re1, c.load_ohm, room, most_a, most_a / t.vt_v);
                for (double x : rcs) {
                  Values v;
                  v[R1] = r1;
                  v[R2] = r2;
                  v[RC] = x;
                  v[RE1] = re1;
                  v[RE2] = re2;
                  emit(v);
                }
              }
            }
          }
        }
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    Values t = v;
    const auto& d = q.bjt;
    const double rth = par(v[R1], v[R2]);
    const detail::BjtBias b =
        detail::bjt_bias(d, c.supply_v * v[R2] / (v[R1] + v[R2]), rth, v[RE1] + v[RE2], v[RC], c.supply_v);
    const double gm = b.conducts ? b.gm_s : 1e-3;
    const double zin = par(rth, d.bf * (1.0 / gm + v[RE1]));
    t[CIN] = detail::cap_for(c.source_ohm + zin, f / 6);
    t[COUT] = detail::cap_for(v[RC] + c.load_ohm, f / 6);
    const double look = v[RE1] + (d.bf / gm + par(c.source_ohm > 0 ? c.source_ohm : 1e-3, rth)) / (d.bf + 1.0);
    t[CE] = v[RE2] > 0 ? detail::cap_for(par(v[RE2], look), f / 4) : 0.0;
    return t;
  }
};

}  // namespace

const Topology& bjt_ce_divider() {
  static const BjtCeDivider t;
  return t;
}

}  // namespace shelfstage::stages
