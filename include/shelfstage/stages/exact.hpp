// The exact evaluation of a stage: its netlist solved by the MNA solver, giving the same
// Performance figures as the fast evaluator, so the two can be compared.
#pragma once
#include <span>
#include <utility>

#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages {

/// Solves the stage's netlist: DC operating point, AC corners and mid-band gain, Zin (from
/// the signal current), Zout (from the open-circuit and loaded outputs), input noise, and
/// the output swing from a quasi-static large-signal sweep (coupling and bypass capacitors
/// held at their DC voltages, the input stepped until the output leaves its linear range).
/// As with the closed form, the -3 dB corners, HD2, noise and part stress need Detail::full.
/// Throws InfeasibleError if the operating point does not converge.
Performance evaluate_exact(const Topology& t, const Values& values, const Transistor& q, const Conditions& c,
                           Detail detail = Detail::full);

/// The -3 dB points alone of any stage-shaped circuit (as evaluate_circuit finds them, without
/// its other figures): {f_low, f_high}, 0 where the response does not fall that far.
/// Throws InfeasibleError if the operating point does not converge.
std::pair<double, double> band_of_circuit(const circuit::Circuit& net, const Conditions& c);

/// The same figures for any stage-shaped circuit (nets "sig", "in", "out", supply first among
/// the sources, the signal source "VSIG", the load "RL"), e.g. a chain of stages: qs are its
/// transistors in element order. Node voltages and bias current are the first transistor's;
/// active means every transistor is in its linear region. No part stress (no topology roles).
/// The operating point is returned through op_out when given.
Performance evaluate_circuit(const circuit::Circuit& net, std::span<const Transistor> qs, const Conditions& c,
                             Detail detail = Detail::full, circuit::OperatingPoint* op_out = nullptr);

}  // namespace shelfstage::stages
