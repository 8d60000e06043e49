// Designs for people: the request on one line, and the ranked candidates as a table a
// bench engineer can scan (figures on one line, the recipes under them).
#pragma once
#include <array>
#include <string>

#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

/// "gain 10.0 (20.0 dB) into 10kΩ from 1kΩ, +12V rail, ground at the battery's - terminal,
/// Zin ≥ 100kΩ, band 20Hz..20kHz, swing 2 Vpp, THD ≤ 1 %, 1 copy, correlated spread (...)"
std::string spec_line(const synth::Spec& spec);
/// The supply as the user wired it: "+9V rail, ground at the battery's - terminal",
/// "-7..-9.6V rail, ground at the battery's + terminal".
std::string rail_words(const synth::Spec& spec);
/// Which spread model made the worst case, for people.
std::string spread_words(const synth::Spec& spec);

/// The ranked candidates: rank, id, topology, device, gain nominal and worst range, bias
/// current, undistorted swing in Vpp (nominal and worst), worst-case THD at the requested
/// level, band (-3 dB corners), yield, pieces; then each
/// role with its recipe ("RD 10k+150  RS2 2k2||6k8").
std::string candidates_table(const synth::DesignResult& r);

/// A word under the table when listed candidates leave the gain window (Spec::gain_tol) at
/// some corner (they are ranked by their worst error, not refused for it): which, and the
/// window; empty when every one holds it at every corner.
std::string gain_window_note(const synth::DesignResult& r);

/// The roles of one candidate with their recipes on one line.
std::string recipe_line(const synth::Candidate& c);
/// The device for people: "SJ-101 [bag 3]", or each stage's for a chain: "SJ-101 > KB-547".
std::string device_text(const synth::Candidate& c);

/// A feedback stage's loop gain (or each such stage's, in a chain) for people: where the loop
/// is broken, its size at mid-band, the crossover and the phase margin over the corners.
/// Empty when no stage has a feedback loop.
std::string loop_text(const synth::Candidate& c);

/// Why nothing fits, and the purchases that would help, as lines for stderr.
std::string diagnosis_text(const synth::DesignResult& r);

/// Whether a topology's device is an op-amp (U1) rather than a transistor (Q1).
bool opamp_stage(const stages::Topology& t);
/// The keys of a stage's three device nodes in JSON, in the order of Performance's v_in,
/// v_common, v_out: the topology's terminal nets for a transistor ("gate", "source",
/// "drain"), the pins for an op-amp ("plus", "minus", "output": its nets differ from stage
/// to stage, and a buffer's - input is its output).
std::array<std::string, 3> node_keys(const stages::Topology& t);
/// The same nodes for people: "V(gate)" ..., or "V(U1 +in)", "V(U1 -in)", "V(U1 out)".
std::array<std::string, 3> node_labels(const stages::Topology& t);
/// What the device's current (Performance::bias_current_a) is called: "drain current",
/// "collector current", or an op-amp's own "U1 supply current (quiescent)".
std::string device_current_name(const stages::Topology& t);

/// An upper -3 dB corner for a table: ">1GHz" beyond the models' validity, else the value.
std::string upper_corner(double f_hz);

/// Three significant figures in plain decimals, for gains: "10.0", "-2.35", "0.998"; a
/// figure of four or more digits keeps them all ("4568").
std::string fixed3(double v);

}  // namespace shelfstage::report
