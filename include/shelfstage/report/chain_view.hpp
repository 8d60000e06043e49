// A chain of stages for people and for ngspice: the analysis of each stage as the chain
// builds it, the figures stage by stage and of the whole chain, and the whole chain as one
// SPICE netlist.
#pragma once
#include <string>
#include <vector>

#include "shelfstage/report/analysis.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

/// The analysis of each stage of a chain as the chain builds it (analyze_stage with the
/// stage's own device spread). After the first stage the previous stage's COUT couples the
/// stage: its CIN is left out of the parts. InputError for a candidate that is not a chain.
std::vector<Analysis> analyze_chain(const synth::Candidate& chain);

/// The warnings of every stage's analysis, each led by its stage: "stage 2: ...".
std::vector<std::string> chain_warnings(const std::vector<Analysis>& stages);

/// One line per stage (topology, device, the load it sees, gain into that load, Zin, Zout,
/// bias, swing, supply current), then the whole chain: the exact solver's figures beside the
/// fast cascade's, and the worst-case gain range. Candidate evaluated (chain_corners).
std::string chain_figures_text(const synth::Candidate& chain, const synth::Spec& spec);

/// The whole chain as one SPICE netlist for ngspice (nominal pieces, nominal supply), with a
/// .control block printing the operating point of every transistor node, the supply current,
/// the mid-band gain and the -3 dB corners. InputError for a candidate that is not a chain.
std::string chain_spice(const synth::Candidate& chain);

}  // namespace shelfstage::report
