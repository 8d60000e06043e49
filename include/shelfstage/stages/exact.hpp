// The exact evaluation of a stage: its netlist solved by the MNA solver, giving the same
// Performance figures as the fast evaluator, so the two can be compared.
#pragma once
#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages {

/// Solves the stage's netlist: DC operating point, AC corners and mid-band gain, Zin (from
/// the signal current), Zout (from the open-circuit and loaded outputs), input noise, and
/// the output swing from a quasi-static large-signal sweep (coupling and bypass capacitors
/// held at their DC voltages, the input stepped until the output leaves its linear range).
/// Throws InfeasibleError if the operating point does not converge.
Performance evaluate_exact(const Topology& t, const Values& values, const Transistor& q, const Conditions& c,
                           Detail detail = Detail::full);

}  // namespace shelfstage::stages
