// The series-feedback pair the pair topologies share (bjt-fb-pair, jfet-fb-pair,
// bjt-fb-pair-same): a common source or emitter input device Q1 whose main terminal drives the
// base of a common-emitter Q2, the output taken at Q2's collector and fed back through RF to
// Q1's common terminal, which returns to ground through a split leg (RE1 unbypassed, RE2
// bypassed); an optional CF across RF (compensation). Private to the stages layer.
//
// The circuit in the N frame (an N-channel or NPN Q1):
//   control pin g: DC from a Thevenin source (vth behind rth: the BJT's base divider; the
//     JFET's gate resistor to ground, vth 0), coupled in through CIN;
//   Q1: g, common e, main d;  R1 (RC1 or RD) from the rail to d;
//   the complementary form: Q2 a PNP, base d, emitter on the rail, collector o; RC2 from o to
//     ground;
//   the same-polarity form: Q2 an NPN, base d, emitter e2, collector o; RE3 from e2 to ground
//     bypassed by CE3, RC2 from the rail to o;
//   RF from o to e (CF across it);  RE1 from e to x, RE2 from x to ground, CE across RE2;
//   COUT from o to the load.
// Equations:
//   DC: two unknowns, u (Q1's control voltage, VBE or VGS) and w (Q2's VEB); every node
//     follows from them (g from the Thevenin source less the base current, e = g - u,
//     d = rail - w, o from KCL at o); KCL at e and at d are solved by Newton. The device
//     laws are devices::bjt_eval and jfet_eval, the exact solver's own.
//   Mid-band: the hybrid-pi of both devices on the nodes (g, e, d, o), CIN, COUT and CE
//     shorts: gain, Zin, Zout. For a large loop gain the gain is 1 + RF / RE1 (the series-
//     shunt feedback amplifier's rule: Sedra and Smith, Microelectronic Circuits, on the
//     series-shunt feedback pair; from memory), and the DC gain from e to o is
//     1 + RF / (RE1 + RE2), which holds the operating point.
//   Below mid-band: the same network with CIN, CE and COUT folded in; above it, the device
//     capacitances and the load's (complex; 4 nodes, 5 in the same-polarity form).
//   Swing: the mid-band solution extended in a straight line until a device leaves its
//     active region (saturation, cut-off, a JFET's triode edge or gate conduction).
//   Distortion: the static transfer from the DC equations with the capacitors holding their
//     DC, at eight Chebyshev nodes, interpolated by a degree-7 polynomial.
#pragma once
#include <functional>

#include "common.hpp"

namespace shelfstage::stages::detail {

/// The roles of a pair, in this order (names by topology: RB1 or RG1 ...): the complementary
/// form has the first eleven, the same-polarity form all thirteen (RE3: Q2's emitter resistor,
/// CE3 its bypass).
enum PairRole : std::size_t {
  kTop,
  kBottom,
  kR1,
  kRC2,
  kRF,
  kLeg1,
  kLeg2,
  kBypass,
  kCin,
  kCout,
  kCf,
  kRE3,
  kCe3,
  kPairRoles
};

/// The compensation capacitor every pair offers across RF (C4, optional, not polarised):
/// `common` names Q1's common terminal's net ("emitter" or "source").
constexpr Role pair_cf_role(std::string_view common) {
  return {kRoleCompensation,
          "C4",
          'C',
          true,
          false,
          "collector2",
          common,
          "across RF: compensation, where the loop's phase margin is short",
          {22, 12, false, 'a'}};
}

/// A control pin's divider to ground: TOP || BOTTOM, or BOTTOM alone without TOP (top 0).
inline double divider_ohm(double top, double bottom) { return top > 0 ? par(top, bottom) : bottom; }

/// The pair's parts (ohms, farads) in the N frame; 0: absent (top, leg2, bypass only).
struct PairParts {
  bool same = false;           ///< the same-polarity form (Q2's emitter on RE3, RC2 to the rail)
  double vcc = 0;              ///< the rail
  double top = 0, bottom = 0;  ///< the control pin's divider: rail to pin (0: none), pin to ground
  double r1 = 0;               ///< rail to Q1's main terminal (Q2's base)
  double rc2 = 0, rf = 0, re1 = 0, re2 = 0, ce = 0, cin = 0, cout = 0;
  double cf = 0;   ///< across RF (0: none)
  double re3 = 0;  ///< Q2's emitter to ground (the same-polarity form)
  double ce3 = 0;  ///< ... and its bypass (0: none)
  bool bypassed3() const { return same && re3 > 0 && ce3 > 0; }
  double vth() const { return top > 0 ? vcc * bottom / (top + bottom) : 0.0; }  ///< the divider's Thevenin volts
  double rth() const { return divider_ohm(top, bottom); }                       ///< ... and ohms
  bool bypassed() const { return re2 > 0 && ce > 0; }
};
PairParts pair_parts(const Values& v, double vcc, bool same);

/// Q1 and Q2 as the pair takes them.
struct PairDevices {
  bool jfet = false;
  devices::JfetInstance j;  ///< Q1 when a JFET
  devices::BjtInstance b;   ///< Q1 when bipolar
  devices::BjtInstance b2;  ///< Q2
};
PairDevices pair_devices(const Transistor& q);

/// Both devices' small-signal parameters at the operating point.
struct PairGains {
  double gm1 = 0, gpi1 = 0, go1 = 0, gm2 = 0, gpi2 = 0, go2 = 0;
  double gbce1 = 0, gbce2 = 0;  ///< base current per volt of VCE (pair.cpp, bjt_small_signal)
};

/// The operating point of the pair (N frame) and its small-signal parameters.
struct PairBias : PairGains {
  bool solved = false;
  double u = 0, w = 0;  ///< Q1's VBE or VGS; Q2's VEB (VBE in the same-polarity form)
  double i1 = 0, ib1 = 0, ic2 = 0, ib2 = 0;
  double vg = 0, ve = 0, vx = 0, vd = 0, vo = 0;
  double ve2 = 0;  ///< Q2's emitter (the rail in the complementary form)
  double vce2() const { return ve2 > vo ? ve2 - vo : vo - ve2; }
};
/// The DC operating point (Newton on u and w).
PairBias pair_bias(const PairParts& s, const PairDevices& d);

/// Every figure of the pair (N frame), as Topology::evaluate_n gives them, the stress list
/// included (by PairRole); `bias` receives the operating point.
Performance pair_evaluate(const PairParts& s, const PairDevices& d, const Conditions& c, Detail detail, PairBias& bias);

/// The capacitors the pair needs for f_low_hz (CIN, the bypasses and COUT at their PairRole
/// indices in the Values returned, the resistors as given); Q2's emitter bypass (the same-
/// polarity form) is sized from the operating point with the nominal piece q.
Values pair_capacitors(const Values& v, const Transistor& q, const Conditions& c, double f_low_hz, bool same);

/// The shelf's one value nearest to target (0 when it has none).
double nearest_one(const ValueSource& shelf, double target);

/// What a pair's design equations fix before the feedback legs: Q1's current i1, its common
/// terminal's DC ve, the output's DC vo, and Q2's base drive: in the complementary form Q2's
/// VEB (veb2; R1 = veb2 / i1), in the same-polarity form Q1's main terminal vd (R1 carries
/// i1 and Q2's base current down to it, RE3 puts Q2's emitter a VBE (vbe2) below it).
struct PairPlan {
  double i1 = 0, ve = 0, vo = 0;
  double veb2 = 0;          ///< complementary form
  bool same = false;        ///< same-polarity form:
  double vd = 0, vbe2 = 0;  ///< ... Q1's main terminal, Q2's VBE
  double q2_hfe = 100;      ///< ... Q2's nominal hFE (its base current out of R1's)
};

/// The gate or base divider's resistance to ground, TOP || BOTTOM (BOTTOM alone without TOP):
/// at mid-band the pair's input impedance is at most this (a JFET gate draws nothing; a base
/// adds its path to an emitter that the feedback moves with it).
double input_divider_ohm(const Values& v);

/// The design step the pairs share, once the plan is fixed: R1 and Q2's legs (RC2, and RE3
/// in the same-polarity form) for Q2 at one to ten milliamperes, RF for its share of the
/// current, RE1 for the gain (1 + RF/RE1, and a ratio above it for the finite loop gain) and
/// RE1 + RE2 from KCL at the common terminal; each from the shelf, into v (the divider roles
/// left as given), handed to emit.
void pair_feedback_legs(Values v, const ValueSource& shelf, const Goal& g, const Conditions& c, const PairPlan& plan,
                        const std::function<void(const Values&)>& emit);

/// The design equations of a pair with a bipolar Q1 (bjt-fb-pair, bjt-fb-pair-same): the
/// base divider and the plan for pair_feedback_legs, in the form asked.
void propose_bjt_pair(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf, bool same,
                      const std::function<void(const Values&)>& emit);

/// A reference design for a pair (Topology::reference): the topology's own design equations
/// on ideal values for a gain of 10 (knobs: degeneration 0 asks for 3, 1 for 30), of the
/// active proposals the one nearest the gain with the stiffest loop, its capacitors for
/// corners at k.f_corner_hz.
Values pair_reference(const Topology& t, const Transistor& q, const Conditions& c, const ReferenceKnobs& k);

/// Everything both pairs share as a Topology: roles by PairRole, wiring, the closed form,
/// capacitor sizing, the loop's break point. A pair topology adds its name, its Q1, its
/// reference design and its design equations.
class FeedbackPair : public Topology {
 public:
  FeedbackPair(std::span<const Role> roles, std::array<std::string_view, 3> nodes,
               SecondDevice form = SecondDevice::complement)
      : roles_(roles), nodes_(nodes), form_(form) {}
  std::span<const Role> roles() const override { return roles_; }
  std::array<std::string_view, 3> node_names() const override { return nodes_; }
  std::span<const InnerNet> inner_nets() const override;
  SecondDevice second_device() const override { return form_; }
  /// The loop: Q2's collector, RF, Q1's common terminal, Q1, Q2, back; broken at RF's output
  /// end (the output's low impedance drives RF's far higher one).
  std::optional<LoopBreak> feedback_loop() const override { return LoopBreak{roles_[kRF].name, "collector2"}; }
  LoadLine load_line(const Values& values, const Conditions& c) const override;
  Values capacitor_targets(const Values& values, const Transistor& q, const Conditions& c,
                           double f_low_hz) const override;

 protected:
  circuit::Circuit wire(const Values& values, const Transistor& q, const Conditions& c) const override;
  Performance evaluate_n(const Values& values, const Transistor& q, const Conditions& c, Detail detail) const override;

 private:
  std::span<const Role> roles_;
  std::array<std::string_view, 3> nodes_;
  SecondDevice form_;
  bool same() const { return form_ == SecondDevice::same; }
};

}  // namespace shelfstage::stages::detail
