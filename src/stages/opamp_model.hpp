// The op-amp's macro-model in a stage's netlist: standard SPICE elements (sources, a VCCS, a
// VCVS, resistors, capacitors and two clamp diodes) built from one op-amp piece, so that the
// exact solver and ngspice both run the same circuit. docs/physics.md draws it.
#pragma once
#include <string>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/devices/opamp.hpp"

namespace shelfstage::stages::detail {

/// The nets an op-amp's pins go to.
struct OpampPins {
  std::string plus, minus, out, v_pos, v_neg;
};

/// The current through a clamp diode above which the output counts as clipped: 1 µA, a
/// thousandth of the input stage's full current, where the loop has lost a millivolt of its
/// input to the clamp.
inline constexpr double kClampOnsetA = 1e-6;

/// Adds the macro-model of piece q as the elements "<designator>.<name>" (U1.G1, U1.R1 ...),
/// all with role kRoleDeviceModel, its inner nets "<designator>.<name>" as well:
///  - the inputs: bias currents Ib+ and Ib- drawn from the pins (current sources), the
///    offset Vos in series with the + input, and the noise densities en and in from
///    resistors' thermal noise through controlled sources (none when the record gives none);
///  - the gain: a VCCS of 1 mS from the input difference into R1 || C1, R1 = Aol / 1 mS and
///    C1 putting the dominant pole at GBW / Aol; a second pole as a unity-gain VCCS into
///    R2 || C2 when the record gives one;
///  - the output: a unity VCVS behind the output resistance (output_ohm), clamped at the
///    dominant-pole node by a diode to a source hung from each rail, which holds the output
///    the record's headroom short of that rail (out_drop_hi_v, out_drop_lo_v) at the clamp's
///    onset current kClampOnsetA;
///  - the supply current Iq from the + rail to the - rail.
/// The model's resistors are noiseless but for the noise generators'. Not modelled: slew
/// rate (the closed form's full-power bandwidth covers it), the output current limit and
/// the input common-mode range (the closed form checks both; the exact solver checks the
/// common-mode range on its operating points).
void add_opamp_model(circuit::Circuit& net, const std::string& designator, const OpampPins& pins,
                     const devices::OpampInstance& q, double celsius);

/// Where an op-amp's model sits in a circuit: its designator and the nets of its pins.
struct OpampModelAt {
  std::string designator;
  std::size_t plus = 0, minus = 0, out = 0, v_pos = 0, v_neg = 0;
};
/// Every op-amp model in the circuit, in the order they were added.
std::vector<OpampModelAt> opamp_models(const circuit::Circuit& net);
/// The current through the model's clamp diodes (the larger), amperes: above kClampOnsetA
/// the output is clipped.
double clamp_current(const circuit::OperatingPoint& op, const OpampModelAt& m);

}  // namespace shelfstage::stages::detail
