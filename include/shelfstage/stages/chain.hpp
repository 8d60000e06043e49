// Stages in a row: the output of stage i drives the input of stage i+1. The whole chain as
// one circuit (for the exact solver and the SPICE writer) and a fast evaluation that takes
// each stage into the next stage's input impedance.
#pragma once
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages {

/// One stage of a chain: its topology, values and transistor piece.
struct ChainStage {
  const Topology* topology = nullptr;
  Values values;
  Transistor q;
};

/// One capacitor between stages (common practice): a stage after the first has no input
/// capacitor of its own; the previous stage's COUT drives its gate or base network. Its
/// closed form takes CIN as this many farads (no pole: the coupling pole is the previous
/// COUT's, into this stage's input impedance).
inline constexpr double kLinkedCin = 1.0;
/// The input coupling role ("CIN") of a topology, or roles().size() when it has none.
std::size_t input_coupling_role(const Topology& t);

/// The net a stage's COUT takes the signal from (its end away from "out"): "drain",
/// "collector", "source", "emitter", or a pair's "collector2".
std::string_view output_node(const Topology& t);
/// Which DC of a Performance is the output node's: 'm' v_out (the main terminal), 'c'
/// v_common (a follower), '2' v_out2 (a pair's Q2 collector).
char output_dc_field(const Topology& t);
/// That DC from a Performance.
double output_dc(const Topology& t, const Performance& p);

/// The designator a stage's part carries in a chain: stage index (from 0) k and the stage's
/// own designator "R3" give "R" + (100 (k + 1) + 3), i.e. "R103", "R203", "Q101" (common
/// practice on multi-stage boards: the hundreds say which stage a part belongs to); an
/// element of a device's model goes with its device: "U1.G1" gives "U101.G1".
std::string chain_designator(std::size_t stage, std::string_view designator);

/// The net a stage's own net becomes in the chain: "in" of the first stage stays "in"; "out"
/// of the last stays "out"; between stages k and k+1 the net is "link<k+1>"; supply, ground
/// and the signal keep their names; every other net gets the stage number ("drain2").
std::string chain_net(std::size_t stage, std::size_t count, std::string_view net);

/// The whole chain as one test bench: the supply and the signal source (behind
/// c.source_ohm) once, every stage's parts and transistor (designators renamed by
/// chain_designator; the input capacitor of every stage after the first left out, see
/// kLinkedCin), the load c.load_ohm on the last stage's output. All stages share one
/// supply and one ground; N and P stages mix, each placed on the rail as Rail says.
circuit::Circuit chain_netlist(std::span<const ChainStage> stages, const Conditions& c);

/// One stage of a chain as its own test bench (supply, a source standing for what drives it,
/// the load it sees in c), with the chain's designators (R203, Q201) and, after the first
/// stage, no input capacitor: for drawing and analysing a stage as the chain builds it.
circuit::Circuit chain_stage_netlist(const ChainStage& stage, std::size_t k, const Conditions& c);

/// The fast evaluation of a chain. Each stage sees the next stage's input impedance and input
/// capacitance (Miller included) as its load (evaluated from the last stage back to the first), and is driven from the
/// previous stage's output node (source 0; the first stage from c.source_ohm), so the mid-band gain is the product of
/// the stage gains (each stage's Zout is taken with the previous stage's output impedance as its source). Whole-chain
/// figures: gain, Zin (first stage), Zout (last), supply current (sum), swing (the smallest output peak any stage
/// allows, referred to the output), band-edge losses (sum of the stages' in dB), the -3 dB corners where the stages'
/// losses add up to 3 dB (Detail::full; the coarser details give the usual approximation
/// f_low = sqrt(sum f_low_i^2), 1/f_high = sqrt(sum 1/f_high_i^2)),
/// distortion (each stage's HD2 and HD3 at the level it carries, added as if in phase; the
/// undistorted peak where their sum reaches Conditions::max_thd), and the input noise of the
/// first stage.
struct ChainPerformance {
  Performance whole;
  std::vector<Performance> each;       ///< per stage, in its chain conditions
  std::vector<Conditions> conditions;  ///< the conditions each stage was evaluated in
};
ChainPerformance evaluate_chain(std::span<const ChainStage> stages, const Conditions& c, Detail detail = Detail::core);

/// The chain's loss at f_hz relative to mid-band (dB >= 0, the stages' losses summed, each in
/// its chain conditions): on the low side of the band when `low`, else the high side.
double chain_loss_at(std::span<const ChainStage> stages, const Conditions& c, double f_hz, bool low);
/// One -3 dB corner of the chain (the low one when `low`), as evaluate_chain at Detail::full
/// finds it but without the stages' own corners and distortion: sought from from_hz, which
/// should be near it (another corner of the same chain). 0 when the chain has none.
double chain_band_edge(std::span<const ChainStage> stages, const Conditions& c, bool low, double from_hz);
/// The transistors of a chain circuit in element order (for evaluate_circuit).
std::vector<Transistor> chain_transistors(std::span<const ChainStage> stages);

}  // namespace shelfstage::stages
