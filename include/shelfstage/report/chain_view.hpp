// A chain of stages for people and for ngspice: the figures stage by stage and of the whole
// chain, and the whole chain as one SPICE netlist.
#pragma once
#include <string>

#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

/// One line per stage (topology, device, the load it sees, gain into that load, Zin, Zout,
/// bias, swing, supply current), then the whole chain: the exact solver's figures beside the
/// fast cascade's, and the worst-case gain range. Candidate evaluated (chain_corners).
std::string chain_figures_text(const synth::Candidate& chain, const synth::Spec& spec);

/// The whole chain as one SPICE netlist for ngspice (nominal pieces, nominal supply), with a
/// .control block printing the operating point of every transistor node, the supply current,
/// the mid-band gain and the -3 dB corners. InputError for a candidate that is not a chain.
std::string chain_spice(const synth::Candidate& chain);

}  // namespace shelfstage::report
