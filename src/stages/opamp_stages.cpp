// The op-amp stages: non-inverting, inverting and unity-gain buffer, each on a single supply
// (the inputs biased at a reference from a divider with its decoupling capacitor, input and
// output coupled through capacitors) and on a split supply (referred to ground, the output
// DC-coupled). Six topologies of one shape, so they share this one file: each is an
// OpampStage with its wiring, its supply and its role table.
//
// N frame (topology.hpp): "vdd" the + rail, "0" ground, "vee" the - rail of a split supply;
// "ref" the divider's tap (single supply); "plus", "minus" and "opout" the op-amp's pins
// (the output pin is "out" itself on a split supply); "g" the junction of RG with its
// capacitor (CG of the non-inverting stage, CIN of the inverting one).
#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <numbers>

#include "common.hpp"
#include "opamp_core.hpp"
#include "opamp_model.hpp"

namespace shelfstage::stages {
namespace {

using detail::OpampWiring;

enum class Form { non_inverting, inverting, buffer };

constexpr std::string_view kRbWhat = "+ input to the reference: sets the input impedance";
constexpr std::string_view kRfWhat = "feedback, output to - input: with RG sets the gain";
constexpr std::string_view kRa1What = "reference divider to the + rail";
constexpr std::string_view kRa2What = "reference divider to ground";
constexpr std::string_view kCrefWhat = "reference decoupling: keeps the supply's ripple and the divider's noise off";
constexpr std::string_view kCoutWhat = "output coupling: blocks the reference's DC from the load";

constexpr Role kNonInv1[] = {
    {"RB", "R1", 'R', false, false, "", "", kRbWhat, {13, 17.5, true, 'l'}},
    {"RF", "R2", 'R', false, false, "", "", kRfWhat, {20.5, 23, false, 'b'}},
    {"RG", "R3", 'R', false, false, "", "", "- input to CG: with RF sets the gain", {15.5, 21, true, 'l'}},
    {"RA1", "R4", 'R', false, false, "", "", kRa1What, {8, 7, true, 'r'}},
    {"RA2", "R5", 'R', false, false, "", "", kRa2What, {8, 22, true, 'r'}},
    {"CIN", "C1", 'C', false, true, "plus", "in", "input coupling", {11, 14, false, 'a'}},
    {"CG",
     "C2",
     'C',
     false,
     true,
     "g",
     "0",
     "holds the gain to one at DC, so the reference is not amplified",
     {15.5, 25, true, 'l'}},
    {"CREF", "C3", 'C', false, true, "ref", "0", kCrefWhat, {5, 22, true, 'l'}},
    {"COUT", "C4", 'C', false, true, "opout", "out", kCoutWhat, {26, 16, false, 'b'}},
};
constexpr Role kNonInv2[] = {
    {"RB", "R1", 'R', false, false, "", "", "+ input to ground: sets the input impedance", {13, 17.5, true, 'l'}},
    {"RF", "R2", 'R', false, false, "", "", kRfWhat, {20.5, 23, false, 'b'}},
    {"RG", "R3", 'R', false, false, "", "", "- input to ground: with RF sets the gain", {15.5, 21, true, 'l'}},
    {"CIN",
     "C1",
     'C',
     false,
     false,
     "plus",
     "in",
     "input coupling (no DC across it: non-polarised)",
     {11, 14, false, 'a'}},
};
constexpr Role kInv1[] = {
    {"RG",
     "R1",
     'R',
     false,
     false,
     "",
     "",
     "input resistor: sets the input impedance and, with RF, the gain",
     {15, 14, false, 'a'}},
    {"RF", "R2", 'R', false, false, "", "", kRfWhat, {20.5, 10, false, 'a'}},
    {"RA1", "R3", 'R', false, false, "", "", kRa1What, {8, 7, true, 'r'}},
    {"RA2", "R4", 'R', false, false, "", "", kRa2What, {8, 22, true, 'r'}},
    {"CIN", "C1", 'C', false, true, "g", "in", "input coupling", {11, 14, false, 'a'}},
    {"CREF", "C2", 'C', false, true, "ref", "0", kCrefWhat, {5, 22, true, 'l'}},
    {"COUT", "C3", 'C', false, true, "opout", "out", kCoutWhat, {26, 16, false, 'b'}},
};
constexpr Role kInv2[] = {
    {"RG",
     "R1",
     'R',
     false,
     false,
     "",
     "",
     "input resistor: sets the input impedance and, with RF, the gain",
     {15, 14, false, 'a'}},
    {"RF", "R2", 'R', false, false, "", "", kRfWhat, {20.5, 10, false, 'a'}},
    {"CIN",
     "C1",
     'C',
     false,
     false,
     "g",
     "in",
     "input coupling (no DC across it: non-polarised)",
     {11, 14, false, 'a'}},
};
constexpr Role kBuffer1[] = {
    {"RB", "R1", 'R', false, false, "", "", kRbWhat, {13, 17.5, true, 'l'}},
    {"RA1", "R2", 'R', false, false, "", "", kRa1What, {8, 7, true, 'r'}},
    {"RA2", "R3", 'R', false, false, "", "", kRa2What, {8, 22, true, 'r'}},
    {"CIN", "C1", 'C', false, true, "plus", "in", "input coupling", {11, 14, false, 'a'}},
    {"CREF", "C2", 'C', false, true, "ref", "0", kCrefWhat, {5, 22, true, 'l'}},
    {"COUT", "C3", 'C', false, true, "opout", "out", kCoutWhat, {26, 16, false, 'b'}},
};
constexpr Role kBuffer2[] = {
    {"RB", "R1", 'R', false, false, "", "", "+ input to ground: sets the input impedance", {13, 17.5, true, 'l'}},
    {"CIN",
     "C1",
     'C',
     false,
     false,
     "plus",
     "in",
     "input coupling (no DC across it: non-polarised)",
     {11, 14, false, 'a'}},
};

constexpr InnerNet kRefNet = {"ref", "reference (divider tap)", 3.5, {}, 1.5};
constexpr InnerNet kGNetNonInv = {"g", "RG\u2013CG junction", 4, {}, 2.5};
constexpr InnerNet kGNetInv = {"g", "CIN\u2013RG junction", 2, {}, 1.5};
constexpr InnerNet kNonInv1Nets[] = {kRefNet, kGNetNonInv};
constexpr InnerNet kInv1Nets[] = {kRefNet, kGNetInv};
constexpr InnerNet kInv2Nets[] = {kGNetInv};
constexpr InnerNet kBuffer1Nets[] = {kRefNet};

// The roles a stage shape has, by index into its table: -1 where it has none.
struct Layout {
  int rb = -1, rf = -1, rg = -1, ra1 = -1, ra2 = -1, cin = -1, cg = -1, cref = -1, cout = -1;
};

Layout layout_of(std::span<const Role> roles) {
  auto find = [&](std::string_view name) {
    for (std::size_t i = 0; i < roles.size(); ++i)
      if (roles[i].name == name) return static_cast<int>(i);
    return -1;
  };
  return {find("RB"),  find("RF"), find("RG"),   find("RA1"), find("RA2"),
          find("CIN"), find("CG"), find("CREF"), find("COUT")};
}

// A role's value, 0 when the shape has no such role.
double at(const Values& v, int i) { return i >= 0 ? v[static_cast<std::size_t>(i)] : 0.0; }

// The shelf's resistors for the + input's bias (the input impedance): at or above the
// request's least Zin, up to a few times it or a megohm (larger ones only add offset and
// noise through the bias current).
std::vector<double> bias_resistors(const ValueSource& shelf, double zin_min_ohm, double breadth) {
  const double lo = std::max(zin_min_ohm * 1.06, 10e3);
  std::vector<double> out;
  shelf.spread(lo, std::max(4 * lo, 1e6), breadth < 1 ? 3 : 5, out);
  std::erase_if(out, [&](double r) { return r < lo * 0.999; });
  detail::unique_values(out);
  return out;
}

class OpampStage final : public Topology {
 public:
  OpampStage(Form form, SupplyForm supply, std::string_view name, std::string_view summary, std::span<const Role> roles,
             std::span<const InnerNet> nets)
      : form_(form),
        supply_(supply),
        name_(name),
        summary_(summary),
        roles_(roles),
        nets_(nets),
        r_(layout_of(roles)) {}

  std::string_view name() const override { return name_; }
  std::string_view summary() const override { return summary_; }
  bool accepts(devices::DeviceKind k) const override { return k == devices::DeviceKind::opamp; }
  bool is_buffer() const override { return form_ == Form::buffer; }
  SupplyForm supply_form() const override { return supply_; }
  std::optional<LoopBreak> feedback_loop() const override {
    if (form_ == Form::buffer) return std::nullopt;  // a wire: the closed form checks its loop
    return LoopBreak{"RF", out_pin()};
  }
  std::span<const Role> roles() const override { return roles_; }
  std::span<const InnerNet> inner_nets() const override { return nets_; }
  // In the order of Performance's v_in, v_common and v_out, as a transistor's (control,
  // common, main) terminals: the + input, the - input, the output.
  std::array<std::string_view, 3> node_names() const override { return {plus_pin(), minus_pin(), out_pin()}; }

  LoadLine load_line(const Values& v, const Conditions& c) const override {
    // The output pin: no DC load on a single supply (COUT), the load on a split one.
    LoadLine l;
    l.r_ac_ohm = par(c.load_ohm, at(v, r_.rf) + at(v, r_.rg));
    return l;
  }

  Values reference(const Transistor& /*q*/, const Conditions& c, const ReferenceKnobs& k) const override {
    Values v;
    set(v, r_.rb, 100e3);
    set(v, r_.rf, form_ == Form::buffer ? 0.0 : 47e3);
    set(v, r_.rg, form_ == Form::inverting ? 10e3 : (form_ == Form::buffer ? 0.0 : 4.7e3));
    set(v, r_.ra1, 47e3);
    set(v, r_.ra2, 47e3);
    const double zin = form_ == Form::inverting ? at(v, r_.rg) : at(v, r_.rb);
    set(v, r_.cin, detail::cap_for(zin + c.source_ohm, k.f_corner_hz));
    set(v, r_.cg, detail::cap_for(at(v, r_.rg), k.f_corner_hz));
    set(v, r_.cref, detail::cap_for(par(at(v, r_.ra1), at(v, r_.ra2)), k.f_corner_hz));
    set(v, r_.cout, detail::cap_for(c.load_ohm, k.f_corner_hz));
    return v;
  }

  circuit::Circuit wire(const Values& v, const Transistor& q, const Conditions& c) const override {
    auto net = detail::bench(c);
    const bool split = supply_ == SupplyForm::split;
    if (split) net.vsource("VEE", "supply", std::string(kNetNegativeSupply), "0", -c.supply_v);
    const std::string ref = split ? "0" : "ref";
    const std::string out = std::string(out_pin()), plus = std::string(plus_pin()), minus = std::string(minus_pin());
    auto add = [&](int role, const std::string& a, const std::string& b) {
      if (role >= 0) detail::add_role(net, roles_, v, static_cast<std::size_t>(role), a, b);
    };
    add(r_.ra1, "vdd", "ref");
    add(r_.ra2, "ref", "0");
    add(r_.cref, "ref", "0");
    add(r_.rb, plus, ref);
    if (form_ == Form::inverting) {
      add(r_.cin, "g", "in");
      add(r_.rg, "g", minus);
    } else {
      add(r_.cin, plus, "in");
      add(r_.rg, minus, split ? "0" : "g");
      add(r_.cg, "g", "0");
    }
    add(r_.rf, out, minus);
    add(r_.cout, out, "out");
    detail::add_opamp_model(net, "U1", {plus, minus, out, "vdd", split ? std::string(kNetNegativeSupply) : "0"},
                            q.opamp, c.celsius);
    return net;
  }

  Performance evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const override;

  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override;

  Values capacitor_targets(const Values& v, const Transistor& /*q*/, const Conditions& c, double f) const override {
    Values t = v;
    set(t, r_.cin, detail::cap_for(c.source_ohm + input_resistance(v), f / 6));
    set(t, r_.cg, detail::cap_for(at(v, r_.rg), f / 6));
    set(t, r_.cref, detail::cap_for(par(at(v, r_.ra1), at(v, r_.ra2)), f / 10));
    set(t, r_.cout, detail::cap_for(c.load_ohm, f / 6));
    return t;
  }

 private:
  static void set(Values& v, int i, double x) {
    if (i >= 0) v[static_cast<std::size_t>(i)] = x;
  }
  bool split() const { return supply_ == SupplyForm::split; }
  std::string_view out_pin() const { return split() ? kNetOut : std::string_view("opout"); }
  std::string_view plus_pin() const {
    if (form_ != Form::inverting) return "plus";
    return split() ? "0" : "ref";
  }
  std::string_view minus_pin() const { return form_ == Form::buffer ? out_pin() : std::string_view("minus"); }
  // The divider's tap as a fraction of the supply (single supply), and its resistance.
  double tap(const Values& v) const {
    const double a1 = at(v, r_.ra1), a2 = at(v, r_.ra2);
    return a1 + a2 > 0 ? a2 / (a1 + a2) : 0.0;
  }
  double r_ref(const Values& v) const { return split() ? 0.0 : par(at(v, r_.ra1), at(v, r_.ra2)); }
  // The input resistance the source sees behind CIN at mid-band (CREF a short there).
  double input_resistance(const Values& v) const { return form_ == Form::inverting ? at(v, r_.rg) : at(v, r_.rb); }
  detail::OpampCircuit circuit_of(const Values& v, const Conditions& c) const;

  Form form_;
  SupplyForm supply_;
  std::string_view name_, summary_;
  std::span<const Role> roles_;
  std::span<const InnerNet> nets_;
  Layout r_;
};

detail::OpampCircuit OpampStage::circuit_of(const Values& v, const Conditions& c) const {
  detail::OpampCircuit s;
  s.wiring = form_ == Form::inverting ? OpampWiring::inverting : OpampWiring::non_inverting;
  s.rf = at(v, r_.rf);
  s.rg = at(v, r_.rg);
  s.r_plus = form_ == Form::inverting ? r_ref(v) : at(v, r_.rb) + r_ref(v);
  s.r_plus_ac = form_ == Form::inverting ? 0.0 : at(v, r_.rb);  // CREF holds the reference
  s.source_ohm = c.source_ohm;
  // RG cut off at DC: by CG (non-inverting, one supply) or by CIN in series with it (inverting).
  s.rg_ac_coupled = r_.cg >= 0 || form_ == Form::inverting;
  s.load_ohm = c.load_ohm;
  s.load_farads = c.load_farads;
  s.v_pos = c.supply_v;
  s.v_neg = split() ? -c.supply_v : 0.0;
  s.v_ref = split() ? 0.0 : c.supply_v * tap(v);
  return s;
}

Performance OpampStage::evaluate_n(const Values& v, const Transistor& q, const Conditions& c, Detail d) const {
  Performance p;
  const devices::OpampInstance& a = q.opamp;
  const detail::OpampCircuit s = circuit_of(v, c);
  p.valid = true;
  p.active = true;
  // The DC: the reference plus the offset's and bias currents' error at the output.
  const double v_plus = s.v_ref - a.ib_plus_a * s.r_plus;
  p.v_in = v_plus;
  // The output sets itself where the input difference Vout/Aol (the open-loop gain taken from
  // ground, as the macro-model has it) times the DC noise gain is taken off the ideal DC.
  const double ng_dc = s.rg_ac_coupled ? 1.0 : detail::opamp_loop(s).noise_gain;
  p.v_out = (s.v_ref + detail::opamp_dc_error(s, a)) / (1.0 + ng_dc / a.aol);
  p.v_common = v_plus + a.vos_v - p.v_out / a.aol;
  p.bias_current_a = a.iq_a;
  const double divider_a = split() ? 0.0 : c.supply_v / (at(v, r_.ra1) + at(v, r_.ra2));
  p.supply_current_a = a.iq_a + divider_a + (split() ? std::abs(p.v_out) / c.load_ohm : 0.0);
  // The output pin's DC: the load on a split supply (COUT blocks it on one supply) and RF
  // down to the - input (which carries on through RG to ground on a split non-inverting
  // stage; elsewhere a capacitor stops it and RF carries the bias current alone).
  p.out_current_a =
      (split() ? p.v_out / c.load_ohm : 0.0) + (at(v, r_.rf) > 0 ? (p.v_out - p.v_common) / at(v, r_.rf) : 0.0);

  // Mid-band: the loop at DC (the op-amp's poles open, every coupling capacitor a short).
  const detail::OpampLoop l = detail::opamp_loop(s);
  const double t0 = std::real(detail::loop_gain(s, a, 0.0));
  const double zin = input_resistance(v);
  const double source_divider = form_ == Form::inverting ? 1.0 : zin / (zin + c.source_ohm);
  p.gain = l.ideal_gain * t0 / (1.0 + t0) * source_divider;
  p.zin_ohm = zin;
  p.zout_ohm = detail::output_ohm(a) / (1.0 + t0);
  {
    // In the band the loop gain falls from the dominant pole up: Rout / |1 + A(w) beta|.
    const double w_top = 2 * std::numbers::pi * (c.band_hi_hz > 0 ? c.band_hi_hz : 20e3);
    p.zout_band_ohm = detail::output_ohm(a) / std::abs(1.0 + detail::open_loop(a, w_top) * l.beta);
  }

  // The band: the coupling sections below it, the closed loop above it.
  detail::LfSection lf[4];
  std::size_t n_lf = 0;
  const double cin = at(v, r_.cin), cref = at(v, r_.cref), rref = r_ref(v);
  if (cin > 0 && form_ != Form::inverting && cref > 0 && rref > 0) {
    // CIN into RB and the reference, whose decoupled impedance R' || C' adds a capacitive
    // part below its corner: v+/v = (RB + Zref) / (Rs + 1/(s CIN) + RB + Zref), second order:
    // s (s + z) / ((s + p1)(s + p2)) times the mid-band divider, z = (RB + R') / (RB R' C'),
    // p1 p2 the roots of k2 s^2 + k1 s + 1 with k2 = CIN (Rs + RB) R' C', k1 = CIN (Rs + RB)
    // + R' C' + CIN R'.
    const double rb = at(v, r_.rb), rs_rb = c.source_ohm + rb;
    const double k2 = cin * rs_rb * rref * cref, k1 = cin * rs_rb + rref * cref + cin * rref;
    const double root = std::sqrt(std::max(0.0, k1 * k1 - 4 * k2));
    lf[n_lf++] = {(k1 - root) / (2 * k2), 0.0};
    lf[n_lf++] = {(k1 + root) / (2 * k2), (rb + rref) / (rb * rref * cref)};
  } else if (cin > 0) {
    lf[n_lf++] = {1.0 / (cin * (c.source_ohm + zin)), 0.0};
  }
  if (r_.cout >= 0 && at(v, r_.cout) > 0) lf[n_lf++] = {1.0 / (at(v, r_.cout) * (c.load_ohm + p.zout_ohm)), 0.0};
  if (r_.cg >= 0 && at(v, r_.cg) > 0)  // the noise gain's shelf: NG from one at DC
    lf[n_lf++] = {1.0 / (at(v, r_.cg) * s.rg), 1.0 / (at(v, r_.cg) * (s.rg + s.rf))};
  const std::span<const detail::LfSection> lfs(lf, n_lf);
  const double two_pi = 2 * std::numbers::pi;
  const double g0 = std::abs(detail::closed_loop(s, a, 0.0));
  if (d == Detail::full) {
    p.f_low_hz = detail::lf_corner_hz(lfs);
    p.f_high_hz = detail::closed_loop_f_high(s, a);
  }
  if (c.band_lo_hz > 0) p.loss_lo_db = detail::lf_loss_db(lfs, c.band_lo_hz);
  if (c.band_hi_hz > 0)
    p.loss_hi_db = std::max(0.0, -20.0 * std::log10(std::abs(detail::closed_loop(s, a, two_pi * c.band_hi_hz)) / g0));

  // Swing: the output's headroom at each rail with the load's current, the current limit,
  // the inputs' common-mode range, and (with a band) the slew rate at its top edge.
  double swing = detail::opamp_swing_peak(s, a, p.v_out);
  const double gain_in = std::abs(p.gain) > 0 ? std::abs(p.gain) / source_divider : 1.0;
  const double cm_room = detail::opamp_cm_room(s, a, 0.0);
  if (cm_room < 0) {
    p.active = false;
    p.problem = fmt::format("the inputs sit {:.2f} V outside the op-amp's common-mode range", -cm_room);
  } else if (form_ != Form::inverting) {
    swing = std::min(swing, cm_room * gain_in);  // the + input follows the signal
  }
  if (c.band_hi_hz > 0) swing = std::min(swing, detail::full_power_hz(a, 1.0) / c.band_hi_hz);
  if (swing <= 0 && p.active) {
    p.active = false;
    p.problem = fmt::format("the output's DC ({:.2f} V) leaves no room within the op-amp's swing", p.v_out);
  }
  p.swing_up_v = p.swing_down_v = p.clip_peak_v = p.swing_peak_v = std::max(0.0, swing);

  // The loop's stability with the load's capacitance.
  const detail::OpampMargin m = detail::opamp_margin(s, a);
  if (m.f_cross_hz > 0 && m.margin_deg < c.least_margin_deg && p.active) {
    p.active = false;
    p.problem = fmt::format("phase margin {:.0f}\u00b0 at {:.3g} Hz, under {:.0f}\u00b0", m.margin_deg, m.f_cross_hz,
                            c.least_margin_deg);
  }

  // Within its swing the op-amp's own distortion is far below what these figures resolve:
  // the transfer is taken as linear up to clipping.
  p.transfer.o[1] = p.gain;
  if (d != Detail::core) {
    if (d == Detail::full) p.noise_v_rthz = detail::opamp_input_noise(s, a, c.celsius) / source_divider;
    const double vm = p.v_common;  // the - input's DC
    p.stress = detail::stress_list();
    auto res = [&](int role, double volts) {
      if (role >= 0 && at(v, role) > 0)
        p.stress.push_back(detail::res_stress(static_cast<std::size_t>(role), volts * volts / at(v, role)));
    };
    auto cap = [&](int role, double dc) {
      if (role >= 0 && at(v, role) > 0) p.stress.push_back(detail::cap_stress(static_cast<std::size_t>(role), dc));
    };
    res(r_.rb, a.ib_plus_a * at(v, r_.rb));
    res(r_.rf, p.v_out - vm);
    res(r_.rg, r_.cg >= 0 || form_ == Form::inverting ? 0.0 : vm);
    res(r_.ra1, c.supply_v - s.v_ref);
    res(r_.ra2, s.v_ref);
    cap(r_.cin, form_ == Form::inverting ? vm : v_plus);
    cap(r_.cg, vm);
    cap(r_.cref, s.v_ref);
    cap(r_.cout, p.v_out);
  }
  return p;
}

void OpampStage::propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
                         const std::function<void(const Values&)>& emit) const {
  const devices::OpampInstance& a = q.opamp;
  // The reference: mid-rail, and the middle of the output's window when the record's
  // headroom differs between the rails (an output that reaches ground but not the + rail).
  std::vector<std::pair<double, double>> dividers;  // (RA1, RA2)
  if (!split()) {
    std::vector<double> fracs = {0.5};
    const double centre = 0.5 * (c.supply_v - a.out_drop_hi_v + a.out_drop_lo_v) / c.supply_v;
    if (std::abs(centre - 0.5) > 0.02 && centre > 0.1 && centre < 0.9) fracs.push_back(centre);
    std::vector<double> lowers;
    shelf.spread(10e3, 100e3, g.breadth < 1 ? 2 : 3, lowers);
    for (double frac : fracs)
      for (double ra2 : lowers) {
        std::vector<double> uppers;
        shelf.nearest(ra2 * (1 - frac) / frac, 1, uppers);
        for (double ra1 : uppers) dividers.emplace_back(ra1, ra2);
      }
    if (dividers.empty()) return;
  } else {
    dividers.emplace_back(0.0, 0.0);
  }
  auto emit_with = [&](Values v) {
    for (const auto& [ra1, ra2] : dividers) {
      set(v, r_.ra1, ra1);
      set(v, r_.ra2, ra2);
      emit(v);
    }
  };
  const std::size_t rg_count = g.breadth < 1 ? 4 : 7;
  if (form_ == Form::inverting) {
    // |gain| = RF / (RG + Rs): RG at or above the least input impedance.
    const double lo = std::max(g.zin_min_ohm * 1.02, 1e3);
    std::vector<double> rgs;
    shelf.spread(lo, std::max(lo * 20, 47e3), rg_count, rgs);
    std::erase_if(rgs, [&](double r) { return r < lo * 0.999; });
    for (double rg : rgs) {
      std::vector<double> rfs;
      shelf.nearest(g.gain * (rg + c.source_ohm), 2, rfs);
      for (double rf : rfs) {
        // Common practice: RF from about 1k (below it the output spends its current in the
        // feedback network) to 10M (above it bias current and stray capacitance take over).
        if (rf > 10e6 || rf < 1e3) continue;
        Values v;
        set(v, r_.rg, rg);
        set(v, r_.rf, rf);
        emit_with(v);
      }
    }
    return;
  }
  for (double rb : bias_resistors(shelf, g.zin_min_ohm, g.breadth)) {
    Values v;
    set(v, r_.rb, rb);
    if (form_ == Form::buffer) {
      emit_with(v);
      continue;
    }
    // The noise gain 1 + RF/RG that gives the gain behind the source's divider.
    const double zin = rb;
    const double ng = g.gain * (zin + c.source_ohm) / zin;
    if (ng < 1.05) continue;  // a buffer's job
    std::vector<double> rgs;
    shelf.spread(1e3, 22e3, rg_count, rgs);
    for (double rg : rgs) {
      std::vector<double> rfs;
      shelf.nearest(rg * (ng - 1), 2, rfs);
      for (double rf : rfs) {
        set(v, r_.rg, rg);
        set(v, r_.rf, rf);
        emit_with(v);
      }
    }
  }
}

}  // namespace

const Topology& opamp_noninv() {
  static const OpampStage t(Form::non_inverting, SupplyForm::single, "opamp-noninv",
                            "op-amp non-inverting stage on one supply: gain 1 + RF/RG, inputs at a mid-rail reference",
                            kNonInv1, kNonInv1Nets);
  return t;
}

const Topology& opamp_inv() {
  static const OpampStage t(Form::inverting, SupplyForm::single, "opamp-inv",
                            "op-amp inverting stage on one supply: gain -RF/RG, + input at a mid-rail reference", kInv1,
                            kInv1Nets);
  return t;
}

const Topology& opamp_buffer() {
  static const OpampStage t(Form::buffer, SupplyForm::single, "opamp-buffer",
                            "op-amp unity-gain buffer on one supply: + input at a mid-rail reference", kBuffer1,
                            kBuffer1Nets);
  return t;
}

const Topology& opamp_noninv_split() {
  static const OpampStage t(Form::non_inverting, SupplyForm::split, "opamp-noninv-split",
                            "op-amp non-inverting stage on a split supply: gain 1 + RF/RG, output DC-coupled", kNonInv2,
                            {});
  return t;
}

const Topology& opamp_inv_split() {
  static const OpampStage t(Form::inverting, SupplyForm::split, "opamp-inv-split",
                            "op-amp inverting stage on a split supply: gain -RF/RG, output DC-coupled", kInv2,
                            kInv2Nets);
  return t;
}

const Topology& opamp_buffer_split() {
  static const OpampStage t(Form::buffer, SupplyForm::split, "opamp-buffer-split",
                            "op-amp unity-gain buffer on a split supply: output DC-coupled", kBuffer2, {});
  return t;
}

}  // namespace shelfstage::stages
