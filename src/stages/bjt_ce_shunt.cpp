// bjt-ce-shunt: BJT common emitter with collector-to-base (shunt) feedback. RF from the
// collector to the base both biases the base and feeds the output back; RIN in series with
// the input turns the feedback into a ratio: for a large loop gain the stage is an inverting
// amplifier of gain -RF / (Rsig + RIN) whatever the transistor's hFE, with an input impedance
// of about RIN. Fed by the base current alone, RF must be about hFE times the collector's
// resistance, and the loop gain (about hFE RL' / RF) stays near one; an optional RB from base
// to ground carries a current well above the base current through RF, so that RF can be small
// (the collector then sits at VB (1 + RF / RB)), the loop gain large and the bias steady. An
// optional split emitter leg (RE1 unbypassed, RE2 bypassed by CE) steadies the bias further.
// Its equations (NPN frame, no DC through RIN: CIN blocks it):
//   DC: IRF = IB + VB / RB, VC = VB + IRF RF, VCC - VC = (IC + IRF) RC, VB = VBE + IE RE.
//   Mid-band (capacitors shorts, CE across RE2): the hybrid-pi with a conductance 1/RF from
//   base to collector, fed from Rsig + RIN with RB across the base; gain vc/vsig,
//   Zin = RIN + vb / i_in, Zout from a current driven into the collector, the source at rest.
//   For a large loop gain: gain -> -RF / (Rsig + RIN), the base a virtual ground (the
//   inverting amplifier's rule; Sedra and Smith, Microelectronic Circuits, on shunt-shunt
//   feedback; from memory).
#include <Eigen/Dense>
#include <algorithm>
#include <complex>
#include <fmt/format.h>
#include <numbers>

#include "common.hpp"
#include "distortion.hpp"
#include "shelfstage/circuit/complex_pivot.hpp"

namespace shelfstage::stages {
namespace {

enum : std::size_t { RIN, RF, RB, RC, RE1, RE2, CE, CIN, COUT };

constexpr Role kRoles[] = {
    {"RIN", "R1", 'R', false, false, "", "", "input to base: with RF, sets the gain", {12, 18, false, 'b'}},
    {"RF", "R2", 'R', false, false, "", "", "collector to base: feedback and bias", {14, 9, true, 'l'}},
    {"RB", "R3", 'R', true, false, "", "", "base to ground: carries RF's bias current", {14, 22, true, 'l'}},
    {"RC",
     "R4",
     'R',
     false,
     false,
     "",
     "",
     "supply to collector: the load the gain develops across",
     {19, 5, true, 'r'}},
    {"RE1",
     "R5",
     'R',
     true,
     false,
     "",
     "",
     "emitter to x, unbypassed: steadies the bias and the gain",
     {19, 17, true, 'l'}},
    {"RE2", "R6", 'R', true, false, "", "", "x to ground, bypassed: adds bias only", {19, 23, true, 'l'}},
    {"CE", "C2", 'C', true, true, "x", "0", "bypass across RE2", {22, 23, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "xin", "in", "input coupling", {8, 16, true, 'r'}},
    {"COUT", "C3", 'C', false, true, "collector", "out", "output coupling", {23, 9, false, 'a'}},
};
constexpr InnerNet kInner[] = {{"x", "RE1\u2013RE2 junction", 4, "RE1"},
                               {"xin", "CIN\u2013RIN junction", 2.5, {}, 1.5}};
constexpr detail::CommonRoles kCommon{RC, RE1, RE2, CE, CIN, COUT};

// The bias the feedback sets: Newton on VBE (exponential law, Early effect), as
// detail::bjt_bias does for a divider, with the base fed from the collector through RF and
// returned to ground through RB (rb 0: absent). At a given VBE the rest is linear: VCB is RF's
// drop, RF carries the base current and RB's (vb / RB), and vb rises with IC through RE, so the
// Early factor at that VBE is one division (early_at), and Newton's slope carries its change
// (exact Newton: 3.7 steps on average where the factor taken from the step before took 10.4).
detail::BjtBias solve_feedback_bias(const devices::BjtInstance& q, const Values& v, double vcc) {
  const double inv_vaf = (q.vaf_v > 0 && std::isfinite(q.vaf_v)) ? 1.0 / q.vaf_v : 0.0;
  const double rf = v[RF], rc = v[RC], re = v[RE1] + v[RE2], g_rb = v[RB] > 0 ? 1.0 / v[RB] : 0.0;
  // early = 1 + k (ib + g_rb (vbe + (ic + ib) re)) with ic = is_e early, k = RF / VAF; and its
  // slope in VBE (dis: d is_e / d VBE). At the solution RF's drop is positive and below the
  // rail, so the factor lies between 1 and 1 + vcc / VAF: a step far from it is held there.
  const double k = rf * inv_vaf, most = 1.0 + vcc * inv_vaf;
  auto early_at = [&](double vbe, double is_e, double dis, double& slope) {
    slope = 0.0;
    if (!(k > 0)) return 1.0;
    const double ib = is_e / q.bf, den = 1.0 - k * g_rb * re * is_e;
    const double early = (1.0 + k * (ib + g_rb * (vbe + ib * re))) / den;
    if (!(den > 0) || !(early < most)) return most;
    if (!(early > 1.0)) return 1.0;
    slope = (k * (dis / q.bf + g_rb * (1.0 + dis / q.bf * re)) + early * k * g_rb * re * dis) / den;
    return early;
  };
  // Newton's start: KVL from the rail through RC and RF is linear in IC with 0.65 V across
  // the junction.
  double vbe = detail::newton_start_vbe(
      q, (vcc - 0.65 - 0.65 * g_rb * (rc + rf)) / (rc + (rc + rf) / q.bf + re + re * g_rb * (rc + rf)));
  for (int it = 0; it < 80; ++it) {
    const double e = std::exp(vbe / q.vt_v), is_e = q.is_a * (e - 1.0), dis = q.is_a * e / q.vt_v;
    double d_early = 0;
    const double early = early_at(vbe, is_e, dis, d_early);
    const double ib = is_e / q.bf, ic = is_e * early;
    const double vb = vbe + (ic + ib) * re, irf = ib + vb * g_rb;
    const double f = (ic + irf) * rc + irf * rf + vb - vcc;
    const double dib = dis / q.bf, dic = dis * early + is_e * d_early, dvb = 1.0 + (dic + dib) * re,
                 dirf = dib + dvb * g_rb;
    const double step = std::clamp(f / ((dic + dirf) * rc + dirf * rf + dvb), -0.1, 0.1);
    vbe -= step;
    if (std::abs(step) < 1e-10) break;
  }
  detail::BjtBias b;
  const double e = std::exp(vbe / q.vt_v), is_e = q.is_a * (e - 1.0);
  double unused = 0;
  const double early = early_at(vbe, is_e, q.is_a * e / q.vt_v, unused);
  b.vbe_v = vbe;
  b.ib_a = is_e / q.bf;
  b.ic_a = is_e * early;
  b.ie_a = b.ic_a + b.ib_a;
  b.ve_v = b.ie_a * re;
  b.vb_v = b.ve_v + vbe;
  b.vc_v = b.vb_v + (b.ib_a + b.vb_v * g_rb) * rf;
  b.vce_v = b.vc_v - b.ve_v;
  b.conducts = b.ic_a > 1e-9 && b.vb_v > 0.3;
  b.gm_s = b.ic_a / q.vt_v;
  b.beta_ac = q.bf * early;
  b.rpi_ohm = q.bf / (std::max(is_e, 1e-30) / q.vt_v);
  b.ro_ohm = inv_vaf > 0 ? q.vaf_v / std::max(is_e, 1e-30) : std::numeric_limits<double>::infinity();
  return b;
}

detail::BjtBias feedback_bias(const devices::BjtInstance& q, const Values& v, double vcc) {
  return detail::last_solved(std::array{q.is_a, q.bf, q.vaf_v, q.vt_v, v[RF], v[RC], v[RE1], v[RE2], v[RB], vcc},
                             [&] { return solve_feedback_bias(q, v, vcc); });
}

/// RF's current: the base current and RB's.
double rf_current(const detail::BjtBias& b, const Values& v) { return b.ib_a + (v[RB] > 0 ? b.vb_v / v[RB] : 0.0); }

// The small-signal view of a conducting stage.
struct ShuntSignal {
  detail::BjtBias b;
  double r_deg = 0;  // unbypassed emitter resistance
  double r_src = 0;  // Rsig + RIN: what drives the base at mid-band
  double g_s = 0;    // 1 / r_src (the hybrid-pi's g_src adds RB: the Thevenin at the base)
  double rl_ac = 0;  // RC || RL
  detail::HybridPi m;
};

ShuntSignal shunt_signal(const detail::BjtBias& b, const Values& v, const devices::BjtInstance& t,
                         const Conditions& c) {
  ShuntSignal s;
  s.b = b;
  s.r_deg = v[RE1] + (v[CE] > 0 ? 0.0 : v[RE2]);
  s.r_src = (c.source_ohm > 0 ? c.source_ohm : 1e-3) + v[RIN];
  s.rl_ac = par(v[RC], c.load_ohm);
  detail::HybridPi& m = s.m;
  s.g_s = 1.0 / s.r_src;
  m.g_src = s.g_s + (v[RB] > 0 ? 1.0 / v[RB] : 0.0);
  m.gpi = 1.0 / b.rpi_ohm;
  m.cpi = detail::cbe_at(t, b.vbe_v);
  m.cmu = detail::cbc_at(t, b.vb_v - b.vc_v);
  m.gm = b.gm_s;
  m.go = std::isinf(b.ro_ohm) ? 0.0 : 1.0 / b.ro_ohm;
  m.g_e = detail::g_of(s.r_deg);
  m.g_c = 1.0 / s.rl_ac;
  m.g_f = 1.0 / v[RF];
  return s;
}

// The mid-band nodal matrix of (base, emitter, collector), capacitances open.
Eigen::Matrix3d mid_matrix(const detail::HybridPi& m) {
  Eigen::Matrix3d a;
  a << m.g_src + m.gpi + m.g_f, -m.gpi, -m.g_f,           //
      -m.gpi - m.gm, m.gpi + m.gm + m.go + m.g_e, -m.go,  //
      m.gm - m.g_f, -m.gm - m.go, m.go + m.g_c + m.g_f;
  return a;
}

// Mid-band gain, input and output impedance from the same network; returns the node voltages
// (base, emitter, collector) per volt of the source.
Eigen::Vector3d set_mid_band(Performance& p, const ShuntSignal& s, const Values& v) {
  const Eigen::Matrix3d a = mid_matrix(s.m);
  const Eigen::PartialPivLU<Eigen::Matrix3d> lu(a);
  const Eigen::Vector3d x = lu.solve(Eigen::Vector3d(s.g_s, 0.0, 0.0));  // a 1 V source behind r_src
  p.gain = x(2);
  // The current into the base node from the input branch, over the base's voltage.
  const double i_in = (1.0 - x(0)) * s.g_s;
  p.zin_ohm = v[RIN] + x(0) / i_in;
  // Output: 1 A into the collector, the source at rest, the load taken off.
  detail::HybridPi bare = s.m;
  bare.g_c = 1.0 / v[RC];
  const Eigen::Vector3d y = mid_matrix(bare).partialPivLu().solve(Eigen::Vector3d(0.0, 0.0, 1.0));
  p.zout_ohm = y(2);
  return x;
}

// Swing, from the mid-band solution x extended in a straight line (the quasi-static picture):
// up until the collector current, which moves by gm vbe + go vce per volt of source, has
// fallen by IC (cut-off); down until VCE, which moves by vc - ve, reaches saturation.
void set_swing(Performance& p, const ShuntSignal& s, const Eigen::Vector3d& x, const devices::BjtInstance& t) {
  const double ic_per_v = s.m.gm * (x(0) - x(1)) + s.m.go * (x(2) - x(1));
  p.swing_up_v = s.b.ic_a * std::abs(x(2) / ic_per_v);
  p.swing_down_v = std::max(0.0, s.b.vce_v - t.vce_sat_v) * std::abs(x(2) / (x(2) - x(1)));
  p.swing_peak_v = std::min(p.swing_up_v, p.swing_down_v);
}

// Below mid-band, the three capacitors together through the transistor and RF: a 4-node
// complex network (x after CIN, base, emitter, collector), the device's capacitances open.
struct ShuntLowResponse {
  double rsig = 0, rin = 0, rf = 0, g_rb = 0, rc = 0, rl = 0, re1 = 0, re2 = 0, ce = 0, cin = 0, cout = 0;
  double gpi = 0, gm = 0, go = 0;
  using cd = std::complex<double>;

  // vout / vsig at s (mid: every capacitor a short).
  cd transfer(cd s, bool mid) const {
    const cd ys = mid ? cd(1.0 / rsig) : 1.0 / (rsig + 1.0 / (s * cin));
    cd ze = re1 + re2;
    if (re2 > 0 && ce > 0) ze = mid ? cd(re1) : re1 + re2 / (1.0 + s * ce * re2);
    const cd ye = std::abs(ze) > 0 ? 1.0 / ze : cd(1e9);
    const cd zo = mid ? cd(rl) : rl + 1.0 / (s * cout);
    const cd yo = 1.0 / zo;
    const double gin = 1.0 / rin, gf = 1.0 / rf, gc = 1.0 / rc;
    Eigen::Matrix4cd a;
    a << ys + gin, -gin, 0.0, 0.0,                //
        -gin, gin + g_rb + gpi + gf, -gpi, -gf,   //
        0.0, -gpi - gm, gpi + gm + go + ye, -go,  //
        0.0, gm - gf, -gm - go, go + gc + gf + yo;
    const Eigen::Vector4cd x = a.partialPivLu().solve(Eigen::Vector4cd(ys, 0.0, 0.0, 0.0));
    return x(3) * rl * yo;
  }
  double h2(double w, cd ref) const { return std::norm(transfer(cd(0.0, w), false) / ref); }
  double corner_hz(cd ref, double zin, double zout) const {
    const double p_in = 1.0 / (cin * (rsig + zin)), p_out = 1.0 / (cout * (rl + zout));
    const double p_e = (ce > 0 && re2 > 0) ? 1.0 / (ce * par(re2, re1 + 1.0 / gm)) : 0.0;
    return detail::lf_crossing_hz([&](double w) { return h2(w, ref) < 0.5; }, 0.25 * std::max({p_in, p_out, p_e}),
                                  4.0 * (p_in + p_out + p_e));
  }
};

void set_low_response(Performance& p, const ShuntSignal& s, const Values& v, const Conditions& c, Detail d) {
  const ShuntLowResponse lr{c.source_ohm > 0 ? c.source_ohm : 1e-3,
                            v[RIN],
                            v[RF],
                            v[RB] > 0 ? 1.0 / v[RB] : 0.0,
                            v[RC],
                            c.load_ohm,
                            v[RE1],
                            v[RE2],
                            v[RE2] > 0 ? v[CE] : 0.0,
                            v[CIN],
                            v[COUT],
                            s.m.gpi,
                            s.m.gm,
                            s.m.go};
  const auto ref = lr.transfer({}, true);
  if (d == Detail::full) p.f_low_hz = lr.corner_hz(ref, p.zin_ohm, p.zout_ohm);
  if (c.band_lo_hz > 0)
    p.loss_lo_db = std::max(0.0, -10.0 * std::log10(lr.h2(2 * std::numbers::pi * c.band_lo_hz, ref)));
}

// Input-referred noise density: every source's current into the mid-band network, its share
// at the output summed in power, over the gain. Sources: Rsig and RIN (in series), RF, RB, RC,
// the load, the unbypassed emitter resistance, collector and base shot noise.
double input_noise(const ShuntSignal& s, const Values& v, const Conditions& c, double gain) {
  const Eigen::PartialPivLU<Eigen::Matrix3d> lu(mid_matrix(s.m));
  const double kt4 = detail::thermal_v2(1.0, c.celsius), q2 = 2.0 * devices::kCharge;
  enum { B, E, C, G };                // nodes; G: ground
  auto out = [&](int from, int to) {  // |vc| per ampere driven from `from` into `to`
    Eigen::Vector3d rhs = Eigen::Vector3d::Zero();
    if (from != G) rhs(from) -= 1.0;
    if (to != G) rhs(to) += 1.0;
    return lu.solve(rhs)(C);
  };
  auto add = [](double& sum, double psd, double z) { sum += psd * z * z; };
  double v2 = 0;
  add(v2, kt4 / s.r_src, out(G, B));
  if (v[RB] > 0) add(v2, kt4 / v[RB], out(G, B));
  add(v2, kt4 / v[RF], out(C, B));
  add(v2, kt4 / v[RC], out(G, C));
  add(v2, kt4 / c.load_ohm, out(G, C));
  if (s.r_deg > 0) add(v2, kt4 / s.r_deg, out(G, E));
  add(v2, q2 * s.b.ic_a, out(C, E));
  add(v2, q2 * s.b.ib_a, out(B, E));
  return std::sqrt(v2) / std::abs(gain);
}

// Power in each resistor present, DC across each capacitor.
std::vector<Stress> part_stress(const detail::BjtBias& b, const Values& v) {
  const double irf = rf_current(b, v), irc = b.ic_a + irf;
  std::vector<Stress> st = detail::stress_list({detail::res_stress(RIN, 0.0), detail::res_stress(RF, irf * irf * v[RF]),
                                                detail::res_stress(RC, irc * irc * v[RC])});
  if (v[RB] > 0) st.push_back(detail::res_stress(RB, b.vb_v * b.vb_v / v[RB]));
  if (v[RE1] > 0) st.push_back(detail::res_stress(RE1, b.ie_a * b.ie_a * v[RE1]));
  if (v[RE2] > 0) st.push_back(detail::res_stress(RE2, b.ie_a * b.ie_a * v[RE2]));
  if (v[CE] > 0) st.push_back(detail::cap_stress(CE, b.ie_a * v[RE2], v[RE1] > 0 ? "x" : "emitter"));
  st.push_back(detail::cap_stress(CIN, b.vb_v));
  st.push_back(detail::cap_stress(COUT, b.vc_v));
  return st;
}

// Two bounds on this stage's gain for detail::short_of_gain. The collector's transconductance
// is at most 1/RE1, so the gain from the base is at most (RC || RL || RF) / RE1, and the loop
// can only lower it. With the base drawing nothing, the gain from the source is
// A RF / (RF + Rsum + A Rsum) for a gain A from the base and Rsum = Rs + RIN, below
// RF / Rsum (the base's own current and RB only lower it).
using detail::short_of_gain;

// How a proposal sets its gain: by the ratio RF / (Rs + RIN) (the emitter leg split any way
// leg_splits offers), or by the emitter leg against the collector load, RF then mostly
// biasing (RE1 for the gain, unbypassed or over the rest of the leg bypassed).
enum class GainBy { ratio, leg };

// The emitter legs of one proposal (see GainBy): pairs of RE1, RE2.
std::vector<std::pair<double, double>> emitter_legs(GainBy by, const Goal& g, const Conditions& c,
                                                    const ValueSource& shelf, double rc, double gm, double re_total) {
  if (!(re_total > 0)) return {{0.0, 0.0}};
  if (by == GainBy::ratio) return detail::leg_splits(shelf, re_total);
  std::vector<std::pair<double, double>> legs;
  const double re1_gain = par(rc, c.load_ohm) / g.gain - 1.0 / gm;
  if (!(re1_gain > 10.0)) return legs;
  std::vector<double> re1s;
  shelf.nearest(re1_gain, 1, re1s);
  for (double re1 : re1s) {
    legs.emplace_back(re1, 0.0);
    if (re_total > 1.5 * re1) {
      std::vector<double> re2s;
      shelf.nearest(re_total - re1, 1, re2s);
      for (double re2 : re2s) legs.emplace_back(re1, re2);
    }
  }
  return legs;
}

// The last design step: with the collector at vc and RF carrying irf, RC to the supply from
// the shelf and the emitter leg (none, or about ve, as GainBy says), each set to emit.
void emit_legs(Values v, GainBy by, const Goal& g, const Conditions& c, const ValueSource& shelf,
               const devices::BjtInstance& t, double ic, double ve, double vc, double irf,
               const std::function<void(const Values&)>& emit) {
  // The collector a volt above the emitter at least (and the swing above saturation): RF
  // close to a short leaves a diode-connected transistor, not an amplifier.
  if (vc - ve < std::max(1.0, t.vce_sat_v + g.swing_peak_v + 0.3) || vc >= c.supply_v - 0.2) return;
  if (g.max_current_a > 0 && ic + irf > g.max_current_a) return;
  std::vector<double> rcs;
  shelf.nearest((c.supply_v - vc) / (ic + irf), 1, rcs);
  double re_total = 0;
  if (ve > 0) {
    std::vector<double> re;
    shelf.nearest(ve / (ic + ic / t.bf), 1, re);
    if (re.empty()) return;
    re_total = re[0];
  }
  std::vector<std::pair<double, double>> legs;
  if (by == GainBy::ratio) legs = emitter_legs(by, g, c, shelf, 0, ic / t.vt_v, re_total);
  for (double rc : rcs) {
    // The collector current moves with RC through the feedback, so the drafted one lands near
    // the design's but not at it: a collector resistor is given up only when twice the design
    // current could not carry the swing (over the bench's requests and stocks no draft that
    // passes is lost).
    if (detail::short_of_swing_up(g, 2.0 * ic, rc, c.load_ohm)) continue;
    if (by == GainBy::leg) legs = emitter_legs(by, g, c, shelf, rc, ic / t.vt_v, re_total);
    for (auto [re1, re2] : legs) {
      if (short_of_gain(g, par(par(rc, c.load_ohm), v[RF]) / re1)) continue;
      v[RC] = rc;
      v[RE1] = re1;
      v[RE2] = re2;
      emit(v);
    }
  }
}

class BjtCeShunt final : public Topology {
 public:
  std::string_view name() const override { return "bjt-ce-shunt"; }
  std::string_view summary() const override {
    return "BJT common emitter, collector-to-base feedback: gain set by RF/RIN, little hFE in it";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_bjt(k); }
  std::span<const Role> roles() const override { return kRoles; }
  std::array<std::string_view, 3> node_names() const override { return {"base", "emitter", "collector"}; }
  // The loop: collector, RF, base, the transistor, back to the collector; broken at RF's
  // collector end (the collector drives RF's far higher resistance).
  std::optional<LoopBreak> feedback_loop() const override { return LoopBreak{"RF", "collector"}; }
  std::span<const InnerNet> inner_nets() const override { return kInner; }
  LoadLine load_line(const Values& v, const Conditions& c) const override {
    LoadLine l = detail::common_load_line(kCommon, v, c);
    l.r_ac_ohm = par(l.r_ac_ohm, v[RF]);
    return l;
  }
  // The emitter at a tenth of the supply (at least 0.6 V), the collector halfway between
  // saturation and the supply; RF at most 100k and carrying ten times the base current, RB
  // taking the rest of it; RIN a tenth of RF (a gain of ten from a stiff source).
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    const auto& b = q.bjt;
    const double hfe = k.nominal_hfe > 0 ? k.nominal_hfe : b.bf;
    const double ic = k.current_a, ib = ic / hfe, ie = ic + ib;
    const double ve = std::max(0.1 * c.supply_v, 0.6);
    const double vb = ve + b.vt_v * std::log(ic / b.is_a);
    const double vc = 0.5 * (c.supply_v + ve + 0.2);
    Values v;
    v[RF] = std::min(100e3, (vc - vb) / (10.0 * ib));
    const double irf = (vc - vb) / v[RF];
    v[RB] = vb / (irf - ib);
    v[RC] = (c.supply_v - vc) / (ic + irf);
    v[RIN] = v[RF] / 10.0;
    detail::reference_leg(v, kCommon, ve / ie, b.vt_v / ic, k);
    v[CIN] = detail::cap_for(c.source_ohm + v[RIN], k.f_corner_hz);
    v[COUT] = detail::cap_for(c.load_ohm + v[RC], k.f_corner_hz);
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    detail::add_role(net, kRoles, v, CIN, "xin", "in");
    detail::add_role(net, kRoles, v, RIN, "xin", "base");
    detail::add_role(net, kRoles, v, RF, "collector", "base");
    detail::add_role(net, kRoles, v, RB, "base", "0");
    const std::string common = detail::wire_common_leg(net, kRoles, v, kCommon, "collector", "emitter");
    net.bjt("Q1", "collector", "base", common, q.bjt);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override {
    Performance p;
    const auto& t = q.bjt;
    const detail::BjtBias b = feedback_bias(t, v, c.supply_v);
    if (!b.conducts) {
      p.problem = "cut off: the feedback does not reach VBE";
      return p;
    }
    p.valid = true;
    p.bias_current_a = b.ic_a;
    p.v_in = b.vb_v;
    p.v_common = b.ve_v;
    p.v_out = b.vc_v;
    p.supply_current_a = b.ic_a + rf_current(b, v);
    p.active = b.vce_v > t.vce_sat_v;
    if (!p.active) p.problem = fmt::format("saturated: VCE {:.2f} V", b.vce_v);
    const ShuntSignal s = shunt_signal(b, v, t, c);
    const Eigen::Vector3d x = set_mid_band(p, s, v);
    set_swing(p, s, x, t);
    if (detail::screened_out(p, c)) return p;
    detail::finish_response(p, {}, s.m, c, v[COUT], d);
    set_low_response(p, s, v, c, d);
    detail::finish_distortion(
        p, c, [&] { return detail::transfer(s.m, detail::bjt_orders(b.ic_a, b.ib_a, t.vt_v, b.ro_ohm)); });
    if (d != Detail::core) {
      if (d == Detail::full) p.noise_v_rthz = input_noise(s, v, c, p.gain);
      p.stress = part_stress(b, v);
    }
    return p;
  }

  // Design (the inverting amplifier's rule, common practice): RIN from the input impedance
  // asked, RF from the gain (a few per cent above the ratio for the finite loop gain); the
  // collector either where RF's base current alone puts it (no RB) or halfway up the room with
  // RB taking RF's current beyond the base's; RC from there to the supply; the emitter at
  // ground or lifted half a volt or a tenth of the supply for a steadier bias. Gains below
  // one are left to other stages (an attenuation is a divider's job, not a feedback loop's).
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    if (g.gain < 1.0 && !g.probe) return;
    const auto& t = q.bjt;
    // RIN from well under the input impedance asked (the base and its feedback add to it;
    // the evaluation checks the sum) to ten times it.
    const double rin_lo = std::max(g.zin_min_ohm * 1.05, 100.0);
    std::vector<double> rins;
    shelf.spread(std::max(0.3 * rin_lo, 100.0), rin_lo * 10.0, 4, rins);
    // A heavy load wants a collector current a few times its peak current (common practice):
    // beyond the usual few milliamperes then too.
    std::vector<double> currents{0.1e-3, 0.3e-3, 1e-3, 3e-3};
    const double i_load = 4.0 * g.swing_peak_v / c.load_ohm;
    if (i_load > currents.back()) currents.insert(currents.end(), {i_load, 2.0 * i_load});
    for (double ic : currents) {
      if (ic < detail::least_swing_current(g, c.load_ohm)) continue;
      const double ib = ic / t.bf, vbe = t.vt_v * std::log(ic / t.is_a);
      for (double rin : rins) {
        // RF for the gain (the ratio), and RF for the bias alone (a few base currents through
        // it, the collector near the middle of its range), the gain then set by the leg.
        std::vector<std::pair<double, GainBy>> rfs;
        std::vector<double> found;
        shelf.nearest(1.05 * g.gain * (c.source_ohm + rin), 2, found);
        for (double rf : found) rfs.emplace_back(rf, GainBy::ratio);
        found.clear();
        shelf.nearest((0.5 * c.supply_v - vbe) / (4.0 * ib), 1, found);
        for (double rf : found)
          if (!short_of_gain(g, rf / (c.source_ohm + rin))) rfs.emplace_back(rf, GainBy::leg);
        for (auto [rf, by] : rfs)
          for (double ve : {0.0, std::max(0.5, 0.1 * c.supply_v)}) {
            if (by == GainBy::leg && ve == 0.0) continue;  // the leg sets the gain: it needs one
            Values v;
            v[RIN] = rin;
            v[RF] = rf;
            const double vb = ve + vbe;
            emit_legs(v, by, g, c, shelf, t, ic, ve, vb + ib * rf, ib, emit);  // RF fed by the base alone
            const double irf = (0.5 * (c.supply_v + ve + t.vce_sat_v + g.swing_peak_v) - vb) / rf;
            if (irf < 3.0 * ib) continue;
            std::vector<double> rbs;
            shelf.nearest(vb / (irf - ib), 1, rbs);
            for (double rb : rbs) {
              v[RB] = rb;
              emit_legs(v, by, g, c, shelf, t, ic, ve, vb + (ib + vb / rb) * rf, ib + vb / rb, emit);
            }
          }
      }
    }
  }

  Values capacitor_targets(const Values& v, const Transistor& q, const Conditions& c, double f) const override {
    Values t = v;
    const auto& d = q.bjt;
    const detail::BjtBias b = feedback_bias(d, v, c.supply_v);
    const double gm = b.conducts ? b.gm_s : 1e-3;
    t[CIN] = detail::cap_for(c.source_ohm + v[RIN], f / 6);
    t[COUT] = detail::cap_for(v[RC] + c.load_ohm, f / 6);
    const double look =
        v[RE1] + (d.bf / gm + par(par(c.source_ohm + v[RIN], v[RF]), v[RB] > 0 ? v[RB] : INFINITY)) / (d.bf + 1.0);
    t[CE] = v[RE2] > 0 ? detail::cap_for(par(v[RE2], look), f / 4) : 0.0;
    return t;
  }
};

}  // namespace

const Topology& bjt_ce_shunt() {
  static const BjtCeShunt t;
  return t;
}

}  // namespace shelfstage::stages
