// The loop gain of a feedback stage, measured on its netlist by the exact solver the way the
// trade measures it on a bench or in a simulator: the loop broken at one point by a series
// voltage injection and, with the loop closed, a shunt current injection at the same point,
// the two combined into the loop gain (the double injection of Middlebrook and of Tian and
// others; docs/physics.md, "Feedback loops"). From the loop gain over frequency: its size at
// mid-band, where it falls through one, and the phase margin there.
#pragma once
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"
#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages {

/// A loop's figures at one build. The loop gain T is signed so that negative feedback is
/// positive at mid-band (T = -1 is the edge of oscillation); the closed-loop gain is the
/// ideal one times T / (1 + T).
struct LoopGain {
  double mid = 0;            ///< |T| at the mid-band frequency asked for
  double mid_phase_deg = 0;  ///< arg T there (near 0 for negative feedback)
  /// Where |T| last falls through one, going up in frequency (the unity-gain crossover); 0
  /// when |T| stays below one over the whole sweep (0.1 Hz to 10 GHz): no crossover, the loop
  /// cannot oscillate.
  double f_cross_hz = 0;
  /// 180 degrees plus arg T at the crossover (the phase unwrapped from mid-band upward); 0
  /// without a crossover.
  double phase_margin_deg = 0;
  bool crosses() const { return f_cross_hz > 0; }
};

/// Loops measured so far, for a run of measurements on builds of one circuit (a design's
/// corner pieces): a build whose broken loop has the same small-signal system as one measured
/// (every conductance, capacitance and source within a billionth of the largest in its row:
/// an op-amp's pieces that differ only in offset and bias currents, a supply's two ends where
/// the devices' small-signal figures do not move) is given that one's figures instead of a
/// sweep of its own. Each build's operating point also starts the next build's solve
/// (circuit::solve_dc_next: a corner away, a few Newton steps).
class LoopMemo {
 public:
  struct Seen;
  LoopMemo();
  ~LoopMemo();
  LoopMemo(const LoopMemo&) = delete;
  LoopMemo& operator=(const LoopMemo&) = delete;
  std::size_t measured() const;  ///< sweeps made
  std::size_t reused() const;    ///< measurements answered from an earlier sweep

 private:
  friend LoopGain loop_gain_of_circuit(const circuit::Circuit&, const std::string&, const std::string&, double, double,
                                       LoopMemo*);
  std::vector<Seen> seen_;
  std::size_t reused_ = 0;
  circuit::OperatingPoint last_;  ///< the last build's broken loop, solved
};

/// The loop gain of any stage-shaped circuit (stages::Topology::netlist, a chain stage's
/// netlist) broken at the end of the part `designator` on net `end_net`. Throws InputError
/// when the part or net is not there, InfeasibleError when the operating point does not
/// converge.
LoopGain loop_gain_of_circuit(const circuit::Circuit& net, const std::string& designator, const std::string& end_net,
                              double celsius, double f_mid_hz, LoopMemo* memo = nullptr);

/// The loop gain of a stage of topology t (nullopt when t has no feedback loop).
std::optional<LoopGain> loop_gain(const Topology& t, const Values& values, const Transistor& q, const Conditions& c,
                                  double f_mid_hz, LoopMemo* memo = nullptr);

}  // namespace shelfstage::stages
