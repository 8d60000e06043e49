// The JFET common-source evaluator shared by the self-biased and divider-biased topologies.
#include <algorithm>
#include <fmt/format.h>
#include <numbers>

#include "common.hpp"
#include "distortion.hpp"

namespace shelfstage::stages::detail {

namespace {

/// The small-signal figures the evaluator's phases share.
struct CsSignal {
  double gm = 0, ro = 0;
  double r_deg = 0;    ///< source resistance not bypassed (RS1, and RS2 without CS)
  double rl_ac = 0;    ///< RD || RL
  double divider = 0;  ///< the gate resistor against the source resistance
};

/// The bias point's currents and voltages.
void bias_figures(const CsCircuit& s, const JfetBias& b, Performance& p) {
  p.valid = true;
  p.bias_current_a = b.id_a;
  p.v_in = s.vg_v;
  p.v_common = b.vs_v;
  p.v_out = b.vd_v;
  p.supply_current_a = b.id_a + s.bias_network_a;
}

/// Mid-band gain, input and output impedance.
void mid_band(const CsCircuit& s, const Conditions& c, CsSignal& g, Performance& p) {
  const double gm = g.gm, ro = g.ro, rl_ac = g.rl_ac, r_deg = g.r_deg;
  // Degenerated common source with output resistance (exact small-signal result):
  // Av = -gm*ro*RL' / (RL' + ro + (1 + gm*ro)*Rdeg).
  const double av_gate =
      std::isinf(ro) ? -gm * rl_ac / (1.0 + gm * r_deg) : -gm * ro * rl_ac / (rl_ac + ro + (1.0 + gm * ro) * r_deg);
  g.divider = s.r_gate_ohm / (s.r_gate_ohm + c.source_ohm);
  p.gain = av_gate * g.divider;
  p.zin_ohm = s.r_gate_ohm;
  const double r_dev = std::isinf(ro) ? ro : ro + (1.0 + gm * ro) * r_deg;
  p.zout_ohm = par(s.rd, r_dev);
}

/// Swing each way, and whether the bias leaves the device in its linear region.
void swing(const devices::JfetInstance& q, const JfetBias& b, const CsSignal& g, Performance& p) {
  const double r_deg = g.r_deg, rl_ac = g.rl_ac;
  // Up: the current falls to zero, the drain rises by ID*(RD||RL).
  p.swing_up_v = b.id_a * rl_ac;
  // Down: the drain falls by a, the current grows by a/RL', the source rises by that
  // current through Rdeg; stop where VDS meets VGS - VP (triode) or VGS reaches 0 (gate
  // conduction).
  const double kd = 1.0 + r_deg / rl_ac;  // VDS falls by kd per volt of output
  const double down = triode_edge_excursion(q.beta(), q.lambda_per_v, b.id_a, b.vds_v, kd, rl_ac);
  const double gate_limit = gate_conduction_excursion(q.beta(), q.lambda_per_v, q.vp_abs_v, b.id_a, b.vds_v, kd, rl_ac);
  p.swing_down_v = std::max(0.0, std::min(down, gate_limit));
  p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
  p.active = b.saturated() && b.vgs_v <= 0.0;
  if (!b.saturated())
    p.problem = fmt::format("in the triode region: VDS {:.2f} V < VGS-VP {:.2f} V", b.vds_v, b.vgst_v);
  if (b.vgs_v > 0.0) p.problem = fmt::format("gate forward-biased: VGS {:+.2f} V", b.vgs_v);
}

struct LowCorners {
  LfSection lf[3];
  std::size_t n = 0;
};

/// Low corners: input and output coupling, and the source bypass shelf.
LowCorners low_corners(const CsCircuit& s, const Conditions& c, const CsSignal& g, double zout_ohm) {
  const double gm = g.gm, ro = g.ro, rl_ac = g.rl_ac;
  LowCorners k;
  if (s.cin > 0) k.lf[k.n++] = {1.0 / (s.cin * (c.source_ohm + s.r_gate_ohm)), 0.0};
  if (s.cout > 0) k.lf[k.n++] = {1.0 / (s.cout * (zout_ohm + c.load_ohm)), 0.0};
  if (s.cs > 0 && s.rs2 > 0) {
    const double look = s.rs1 + 1.0 / gm + (std::isinf(ro) ? 0.0 : (rl_ac / (gm * ro)));
    k.lf[k.n++] = {1.0 / (s.cs * par(s.rs2, look)), 1.0 / (s.cs * s.rs2)};
  }
  return k;
}

/// High corner: the hybrid-pi network (gate, source, drain) solved exactly.
HybridPi hybrid_pi(const CsCircuit& s, const devices::JfetInstance& q, const JfetBias& b, const Conditions& c,
                   const CsSignal& g) {
  HybridPi m;
  m.g_src = 1.0 / par(c.source_ohm > 0 ? c.source_ohm : 1e-3, s.r_gate_ohm);
  m.cpi = cgs_at(q, b.vgs_v);
  m.cmu = cgd_at(q, b.vgs_v - b.vds_v);
  m.gm = g.gm;
  m.go = std::isinf(g.ro) ? 0.0 : 1.0 / g.ro;
  m.g_e = g_of(g.r_deg);
  m.g_c = 1.0 / g.rl_ac;
  return m;
}

/// Input-referred noise density, V/sqrt(Hz).
double input_noise(const CsCircuit& s, const Conditions& c, const CsSignal& g) {
  const double gm = g.gm, r_deg = g.r_deg;
  const double deg = 1.0 + gm * r_deg;
  const double kt4 = thermal_v2(1.0, c.celsius);  // 4kT
  const double rsig = c.source_ohm > 0 ? c.source_ohm : 1e-3;
  double v2 = kt4 * par(rsig, s.r_gate_ohm);                  // source and gate resistors
  v2 += (2.0 / 3.0) * kt4 / gm;                               // channel: 8kT/(3 gm)
  v2 += kt4 * r_deg;                                          // unbypassed source resistor
  const double back = deg / gm;                               // drain current to gate voltage
  v2 += kt4 * (1.0 / s.rd + 1.0 / c.load_ohm) * back * back;  // RD and the load
  return std::sqrt(v2) / g.divider;
}

}  // namespace

Performance jfet_cs(const CsCircuit& s, const devices::JfetInstance& q, const Conditions& c, Detail detail,
                    JfetBias& b) {
  Performance p;
  const double vdd = c.supply_v;
  CsSignal g;
  // An unbypassed RS2 (no CS) degenerates like RS1.
  g.r_deg = s.rs1 + (s.cs > 0 ? 0.0 : s.rs2);
  const double rs_dc = s.rs1 + s.rs2;
  b = jfet_bias(q, s.vg_v, rs_dc, s.rd, vdd);
  if (!b.conducts) {
    p.problem = "cut off: the gate sits beyond pinch-off";
    return p;
  }
  bias_figures(s, b, p);
  g.gm = b.gm_s;
  g.ro = b.ro_ohm;
  g.rl_ac = par(s.rd, c.load_ohm);
  mid_band(s, c, g, p);
  swing(q, b, g, p);
  if (screened_out(p, c)) return p;
  const LowCorners lf = low_corners(s, c, g, p.zout_ohm);
  const HybridPi m = hybrid_pi(s, q, b, c, g);
  finish_response(p, std::span<const LfSection>(lf.lf, lf.n), m, c, s.cout, detail);

  // Third-order expansion of ID = BETA*(Vov + vgs)^2*(1 + lambda*VDS) on the mid-band
  // network (distortion.hpp). To second order, in closed form, with vgs = v - Rdeg*i and
  // vds = -(RL' + Rdeg)*i: i = g1*v + g2*v^2, g1 = gm/D, D = 1 + gm*Rdeg + gds*(RL' + Rdeg),
  // h = 1 - Rdeg*g1, g2 = (BETA*(1 + lambda*VDS)*h^2 - 2*BETA*Vov*lambda*(RL' + Rdeg)*g1*h)/D,
  // and HD2 = |g2|*Vo/(2*g1^2*RL'). Without lambda this is Vo/(8*ID*RL'*(1 + gm*Rdeg)); the
  // lambda cross term (the drain swing modulating the channel) lowers it by roughly
  // 4*lambda*ID*RL', tens of percent for common parts.
  finish_distortion(p, c, [&] { return transfer(m, jfet_orders(q, b.vgst_v, b.vds_v)); });
  if (detail == Detail::full) p.noise_v_rthz = input_noise(s, c, g);
  return p;
}

}  // namespace shelfstage::stages::detail
