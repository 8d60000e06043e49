// Shared closed-form pieces of the stage evaluators: bias solutions, corner finders,
// and the small helpers every topology file uses. Private to the stages layer.
#pragma once
#include <array>
#include <cmath>
#include <complex>
#include <initializer_list>
#include <numbers>
#include <span>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages::detail {

/// JFET bias (N frame): gate at vg_v through a DC-free gate path, source resistor rs_ohm
/// to ground, drain resistor rd_ohm to vdd_v. Square law with lambda (by fixed point on VDS).
struct JfetBias {
  bool conducts = false;
  double id_a = 0, vgs_v = 0, vgst_v = 0, vs_v = 0, vd_v = 0, vds_v = 0;
  double beta_eff = 0;  ///< BETA * (1 + lambda*VDS): the square-law factor at this VDS
  double gm_s = 0, ro_ohm = 0;
  bool saturated() const { return conducts && vds_v >= vgst_v; }
};
JfetBias jfet_bias(const devices::JfetInstance& q, double vg_v, double rs_ohm, double rd_ohm, double vdd_v);

/// The last answer of a bias solve on this thread, by its inputs: a draft asks for the same
/// operating point twice in a row (its capacitors are sized from it, then the stage is
/// evaluated with them, and capacitors do not move the DC), and the second is a copy. One entry
/// per call site (the lambda's type) and thread; inputs compared exactly, so that a hit is the
/// answer the solve would give.
template <std::size_t N, class Solve>
auto last_solved(const std::array<double, N>& inputs, const Solve& solve) -> decltype(solve()) {
  thread_local std::array<double, N> last_inputs{};
  thread_local decltype(solve()) last{};
  thread_local bool held = false;
  if (held && inputs == last_inputs) return last;
  last = solve();
  last_inputs = inputs;
  held = true;
  return last;
}

/// BJT bias (NPN frame): base fed from a Thevenin source vth_v behind rth_ohm, emitter
/// resistor re_ohm, collector resistor rc_ohm to vcc_v. Exponential law with Early effect,
/// solved by Newton on VBE.
struct BjtBias {
  bool conducts = false;
  double ic_a = 0, ib_a = 0, ie_a = 0, vbe_v = 0, vb_v = 0, ve_v = 0, vc_v = 0, vce_v = 0;
  double gm_s = 0, rpi_ohm = 0, ro_ohm = 0, beta_ac = 0;
};
BjtBias bjt_bias(const devices::BjtInstance& q, double vth_v, double rth_ohm, double re_ohm, double rc_ohm,
                 double vcc_v);
/// Where a bias solve's Newton on VBE starts: the VBE of ic0_a, the current the loop would
/// carry with 0.65 V across the junction (a few iterations fewer than from 0.65 V itself; the
/// same root), kept within 0.3..0.9 V; 0.65 V when that current is none.
double newton_start_vbe(const devices::BjtInstance& q, double ic0_a);

/// A low-frequency section of the response: a high-pass pole (zero at DC), or a shelf
/// (a pole with a zero above DC, as a bypassed resistor makes).
struct LfSection {
  double pole_rad = 0;  ///< rad/s
  double zero_rad = 0;  ///< rad/s; 0: a zero at DC (coupling capacitor)
};
/// The -3 dB frequency (Hz) of the product of the sections, relative to their product at
/// high frequency. 0 when there are none.
double lf_corner_hz(std::span<const LfSection> sections);

/// Small-signal hybrid-pi model of one transistor stage above the coupling corners:
/// base (gate) fed from a Thevenin source through 1/g_src, emitter (source) to ground
/// through g_e, collector (drain) to ground through g_c; gpi, cpi between base and
/// emitter, cmu between base and collector, gm*vbe from collector to emitter, go across
/// collector-emitter. A JFET has gpi = 0. An AC-grounded terminal has a huge conductance.
struct HybridPi {
  double g_src = 0, gpi = 0, cpi = 0, cmu = 0, gm = 0, go = 0, g_e = 0, g_c = 0;
  double g_f = 0;               ///< base (gate) to collector (drain): a feedback resistor
  double c_load = 0;            ///< capacitance across the load (Conditions::load_farads)
  bool out_at_emitter = false;  ///< followers take the output at the emitter (source)
  /// With a load capacitance: the output coupling capacitor it hangs behind (0: on the output
  /// node itself) and the load's own conductance (part of g_c or g_e). Above the band the two
  /// capacitors divide: the load takes COUT / (COUT + CL) of the node's voltage, which a cable
  /// of tens of nanofarads behind a microfarad or two makes a loss of its own.
  double c_out = 0, g_load = 0;
};
/// The load behind the output coupling capacitor at angular frequency w > 0: the admittance
/// the output node sees, and the share of its voltage the load gets. Without c_out (or at
/// w = 0) the load hangs on the node: g_load + j w c_load, and all of it.
struct LoadBranch {
  std::complex<double> y, share;
};
LoadBranch load_branch(double g_load, double c_load, double c_out, double w);
/// The capacitance looking into the base (gate) of the network at angular frequency w: the
/// imaginary part of the device's input admittance over w (Cpi, and Cmu multiplied by the
/// gain across it: the Miller effect), farads.
double hybrid_pi_input_capacitance(const HybridPi& m, double w);
/// |output / Thevenin source| at angular frequency w (rad/s), by a 3x3 complex solve.
double hybrid_pi_gain(const HybridPi& m, double w);
/// The same at zero frequency (capacitances open), by a real 3x3 solve.
double hybrid_pi_dc_gain(const HybridPi& m);
/// The upper -3 dB frequency (Hz) of that response, relative to its low-frequency value.
double hybrid_pi_corner_hz(const HybridPi& m);
/// Sets the band-edge losses of p (always), its input capacitance (always), and f_low, f_high
/// (Detail::full only: the -3 dB searches cost more than everything else in an evaluation)
/// from the low-frequency sections and the hybrid-pi model with the load's capacitance, which
/// hangs behind the output coupling capacitor c_out (0: none, the load on the output node).
void finish_response(Performance& p, std::span<const LfSection> lf, const HybridPi& m, const Conditions& c,
                     double c_out, Detail detail);
/// The loss (dB >= 0) at f_hz of the product of the low-frequency sections, relative to their
/// product at high frequency.
double lf_loss_db(std::span<const LfSection> sections, double f_hz);
/// Capacitance that puts a first-order corner at f_hz through r_ohm.
double cap_for(double r_ohm, double f_hz);

/// Whether a screen's floors (Conditions::least_clip_v, most_current_a, least_zin_ohm) rule
/// the stage out already, its clipping point (swing_peak_v, the distortion off), supply
/// current and input impedance in p being final: then p is marked cut short.
bool screened_out(Performance& p, const Conditions& c);
/// Conductance of a resistor that may be absent (0 ohms: a short, given a huge conductance).
inline double g_of(double r_ohm) { return r_ohm > 0 ? 1.0 / r_ohm : 1e9; }

/// The output excursion a at which a JFET leaves saturation when its drain-source voltage
/// falls by k*a while its current rises by a/r_ac: the smaller root of
/// beta*(1 + lambda*VDS)*(vds0 - k*a)^2 = id0 + a/r_ac at VDS = vds0 - k*a (the triode edge
/// VDS = VGS - VP of the square law; beta is BETA without the lambda factor, which is
/// taken at the edge: with several volts of swing it differs from its value at the bias).
double triode_edge_excursion(double beta, double lambda_per_v, double id0, double vds0, double k, double r_ac);
/// The output excursion at which VGS reaches 0 (gate conduction) under the same load line:
/// beta*VP^2*(1 + lambda*(vds0 - k*a)) = id0 + a/r_ac, solved for a (>= 0).
double gate_conduction_excursion(double beta, double lambda_per_v, double vp_abs_v, double id0, double vds0, double k,
                                 double r_ac);

/// The -3 dB frequency (Hz) of a high-pass response given as below3db(w): true when the
/// response at w (rad/s) is more than 3 dB down. The bracket [lo, hi] is widened until it
/// holds the crossing, then halved in log w.
template <class Below>
double lf_crossing_hz(Below below3db, double lo, double hi) {
  for (int i = 0; i < 40 && !below3db(lo); ++i) lo *= 0.25;
  for (int i = 0; i < 40 && below3db(hi); ++i) hi *= 4.0;
  for (int i = 0; i < 32; ++i) {
    const double m = std::sqrt(lo * hi);
    (below3db(m) ? lo : hi) = m;
  }
  return std::sqrt(lo * hi) / (2 * std::numbers::pi);
}

/// Depletion capacitances of a JFET at a bias (N frame voltages).
double cgs_at(const devices::JfetInstance& q, double vgs_v);
double cgd_at(const devices::JfetInstance& q, double vgd_v);
double cbe_at(const devices::BjtInstance& q, double vbe_v);
double cbc_at(const devices::BjtInstance& q, double vbc_v);

/// The operating-point part of a JFET stage's figures: valid when it conducts, active in
/// saturation (the problem said otherwise), the drain and supply current. Returns whether it
/// conducts.
bool jfet_operating_point(Performance& p, const JfetBias& b);
/// A JFET follower's swing into the AC load r_ac on its source: down until the current
/// reaches zero; up until VDS meets VGS - VP or the gate reaches the source.
void jfet_follower_swing(Performance& p, const devices::JfetInstance& j, const JfetBias& b, double r_ac);

/// Thermal noise density squared of a resistor, V^2/Hz.
double thermal_v2(double r_ohm, double celsius);

/// The netlist scaffold shared by every stage: supply VDD on "vdd" (at -supply on a negative
/// rail), signal source VSIG (AC 1) on "sig", RSIG from "sig" to "in", load RL on "out".
circuit::Circuit bench(const Conditions& c);
/// Adds a role's part if present (value > 0), with its designator.
void add_role(circuit::Circuit& net, std::span<const Role> roles, const Values& v, std::size_t role,
              const std::string& a, const std::string& b);
/// The stress line of a resistor dissipating power_w.
inline Stress res_stress(std::size_t role, double power_w) {
  Stress s;
  s.role = role;
  s.power_w = power_w;
  return s;
}
/// The stress line of a capacitor whose pos end sits dc_n_v above its neg end in the N frame
/// (negative dc_n_v: the other way round); pos and neg name the netlist's nets of those ends
/// when they differ from the role's pos_net and neg_net. Topology::evaluate puts it on the rail.
Stress cap_stress(std::size_t role, double dc_n_v, std::string_view pos = {}, std::string_view neg = {});
/// A stage's part stress, starting with these, with room for every role: one allocation
/// where pushing role by role took three or four (a search evaluates hundreds of thousands).
inline std::vector<Stress> stress_list(std::initializer_list<Stress> first = {}) {
  std::vector<Stress> st;
  st.reserve(kMaxRoles);
  st.insert(st.end(), first);
  return st;
}
/// Polarity of the device: +1 N/NPN, -1 P/PNP.
inline double pol(const Transistor& q) { return devices::polarity(q.kind); }

}  // namespace shelfstage::stages::detail

namespace shelfstage::stages::detail {

/// The JFET common-source stage with any gate bias: what both CS topologies share.
struct CsCircuit {
  double vg_v = 0;        ///< DC gate voltage (N frame): 0 for self-bias, the divider tap otherwise
  double r_gate_ohm = 0;  ///< AC resistance from gate to ground (RG, or R1 || R2)
  double rd = 0, rs1 = 0, rs2 = 0, cs = 0, cin = 0, cout = 0;
  double bias_network_a = 0;  ///< supply current of the gate network (divider)
};
/// Evaluates it; `bias` receives the operating point (for the topology's stress list).
Performance jfet_cs(const CsCircuit& s, const devices::JfetInstance& q, const Conditions& c, Detail detail,
                    JfetBias& bias);

}  // namespace shelfstage::stages::detail

namespace shelfstage::stages::detail {

/// Ways to split a source or emitter leg of about r_total ohms into an unbypassed part
/// (first) and a bypassed part (second; 0: none): fully bypassed, fully unbypassed, and a
/// few splits in between, each on values the shelf can make.
std::vector<std::pair<double, double>> leg_splits(const ValueSource& shelf, double r_total);

/// The drain or collector resistor that gives an internal gain a_int (gate or base to the
/// load) with transconductance gm and unbypassed degeneration r_deg into load_ohm:
/// RL' = a_int * (1/gm + r_deg), RD = 1 / (1/RL' - 1/load). When RL' would reach the load,
/// returns the largest sensible value (RL' = 0.9 load) so the search learns how close it got.
double load_resistor_for_gain(double a_int, double gm, double r_deg, double load_ohm);

/// Gate resistors to try for an input impedance of at least zin_min_ohm (5 % parts at
/// their low end still above it): the shelf's values from there up to 10M, spread on a log
/// scale, and the one nearest 1M (the bench's usual choice).
std::vector<double> gate_resistors(const ValueSource& shelf, double zin_min_ohm);

/// Whether a stage whose gain cannot exceed `most` misses the request's window (a tenth of
/// slack for the models). A probe keeps every proposal. Counted in Goal::left_out.
bool short_of_gain(const Goal& g, double most);

/// The drain or collector resistors to try: the shelf's nearest to the one that gives the
/// internal gain a_int (load_resistor_for_gain), when the headroom allows it (room_ohm: the
/// largest resistor the headroom allows); when probing, the largest the headroom allows.
/// Those with which the output cannot rise by the swing carrying most_current_a
/// (short_of_swing_up) are left out, and those with which the gain cannot reach the request's
/// window (short_of_gain): from the control terminal the gain is at most
/// gm (R || RL) / (1 + gm r_deg), rising with gm, and gm_most is the most the stage's bias
/// allows (its current at its most; the output resistance and the input's own loading only
/// lower it).
std::vector<double> load_resistors(const ValueSource& shelf, const Goal& g, double a_int, double gm, double r_deg,
                                   double load_ohm, double room_ohm, double most_current_a, double gm_most);

/// The least design current at which a class-A stage may carry the request's swing into the
/// load at all (0: no bound). Its output's excursion away from the device (a collector or
/// drain rising as it turns off, an emitter or source falling) is at most the quiescent
/// current through the pull and the load in parallel, below the current times load_ohm. The
/// drafted current can land away from the design's (the shelf's nearest values), so a current
/// is given up only when a third of the swing is beyond it; a probe (how close the stages
/// come) keeps every current.
double least_swing_current(const Goal& g, double load_ohm);

/// Whether a class-A output pulled up through pull_ohm, carrying at most most_current_a,
/// falls short of the swing on its way up: as the device turns off the output rises by the
/// quiescent current times the pull-up in parallel with the load (less where feedback loads
/// it too), and the request's screen credits the stage with Goal::swing_credit of its swing.
/// A probe keeps every resistor. Counted in Goal::left_out.
bool short_of_swing_up(const Goal& g, double most_current_a, double pull_ohm, double load_ohm);

/// The largest drain resistor a JFET common source's headroom allows: the drain above the
/// triode edge by the requested swing and half a volt.
double jfet_drain_room(const JfetBias& b, const Goal& g, const Conditions& c);

/// The common-source design step both JFET CS topologies share: with the gate at vg_v and a
/// source leg of about rs_total_ohm, every split of the leg (leg_splits) and every drain
/// resistor for the internal gain a_int within the headroom (load_resistors), handed to
/// emit(rd, rs1, rs2).
template <class Emit>
void jfet_cs_legs(const ValueSource& shelf, const Goal& g, const Conditions& c, const devices::JfetInstance& j,
                  double vg_v, double rs_total_ohm, double a_int, Emit emit) {
  const JfetBias b = jfet_bias(j, vg_v, rs_total_ohm, 0.0, c.supply_v);
  if (!b.conducts) return;
  for (auto [rs1, rs2] : leg_splits(shelf, rs_total_ohm)) {
    // The split's own current and transconductance, at their most (no drain resistor to take
    // VDS, and with it the channel-length factor, down): the nominal piece's screen sees this
    // leg and gate exactly.
    // (gm = 2 sqrt(BETA (1 + lambda VDS) ID): at its most there as well.)
    const JfetBias most = jfet_bias(j, vg_v, rs1 + rs2, 0.0, c.supply_v);
    for (double rd :
         load_resistors(shelf, g, a_int, b.gm_s, rs1, c.load_ohm, jfet_drain_room(b, g, c), most.id_a, most.gm_s))
      emit(rd, rs1, rs2);
  }
}

/// Distinct values, in order.
void unique_values(std::vector<double>& v);

/// A design step's own choices: all of them, or the narrow few when the search is narrower
/// (Goal::breadth below 1: a chain's stage pools).
inline std::vector<double> choices(const Goal& g, std::initializer_list<double> all,
                                   std::initializer_list<double> narrow) {
  return g.breadth < 1.0 ? std::vector<double>(narrow) : std::vector<double>(all);
}

}  // namespace shelfstage::stages::detail

namespace shelfstage::stages::detail {

/// The roles of a common source or emitter stage that the shared steps below fill in.
struct CommonRoles {
  std::size_t load, leg1, leg2, bypass, cin, cout;  ///< RD/RC, RS1/RE1, RS2/RE2, CS/CE, CIN, COUT
};

/// The output side of a common source or emitter stage, as every such topology wires it: the
/// load resistor from the supply to the main terminal (`main`), the split leg (leg1 from the
/// common terminal to x, leg2 from x to ground, the bypass across leg2; one part alone runs
/// from the common terminal to ground) and the output coupling. Returns the net the device's
/// common terminal goes to: `common`, or ground without a leg.
std::string wire_common_leg(circuit::Circuit& net, std::span<const Role> roles, const Values& v, const CommonRoles& r,
                            const std::string& main, const std::string& common);

/// The load lines of a common source or emitter stage with a split, partly bypassed leg.
LoadLine common_load_line(const CommonRoles& r, const Values& v, const Conditions& c);

/// A split leg of about r_total for a reference design: the unbypassed part k.degeneration
/// of it, the rest bypassed by a capacitor sized for k.f_corner_hz against what it looks
/// into (r_look: 1/gm or the emitter's own resistance, beside the unbypassed part).
void reference_leg(Values& v, const CommonRoles& r, double r_total, double r_look, const ReferenceKnobs& k);

/// The JFET common-source reference design both CS topologies share, with the gate at vg_v
/// behind r_gate_ohm: the drain halfway between the triode edge and the supply.
void jfet_cs_reference(Values& v, const CommonRoles& r, const devices::JfetInstance& j, const Conditions& c,
                       const ReferenceKnobs& k, double vg_v, double r_gate_ohm);

/// The BJT reference designs' base divider (stiff: ten times the base current below the
/// base) for an emitter at ve_v, and the coupling capacitors; zout_ohm is the output's own
/// resistance.
void bjt_divider_reference(Values& v, std::size_t r1, std::size_t r2, std::size_t cin, std::size_t cout,
                           const devices::BjtInstance& b, const Conditions& c, const ReferenceKnobs& k, double ve_v,
                           double zout_ohm);

}  // namespace shelfstage::stages::detail
