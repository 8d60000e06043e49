// The pieces a stage's worst case and Monte Carlo cover: one device's spread, or for a stage
// with two devices (a feedback pair) both spreads together, each piece of the first with each
// piece of the second.
#pragma once
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "shelfstage/devices/spread.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::synth {

/// One possible build's devices: Q1's figures, and Q2's when the stage has two.
struct StagePiece {
  devices::PieceFigures first;
  std::optional<devices::PieceFigures> second;
  std::string tag;  ///< "corner 2 (...)", or "Q1 corner 2 (...), Q2 corner 1 (...)" for a pair
};

class StageSpread {
 public:
  explicit StageSpread(devices::DeviceSpread first, std::optional<devices::DeviceSpread> second = std::nullopt);
  const devices::DeviceSpread& first() const { return first_; }
  const devices::DeviceSpread* second() const { return second_ ? &*second_ : nullptr; }
  /// Both nominal pieces.
  const StagePiece& nominal() const { return nominal_; }
  /// Every corner of Q1 with every corner of Q2 (and each with the other's nominal piece):
  /// the worst case of a pair may sit at any pairing.
  const std::vector<StagePiece>& corners() const { return corners_; }
  /// n builds drawn from both models (independent draws, reproducible for a seed).
  std::vector<StagePiece> samples(std::size_t n, std::uint64_t seed) const;
  /// For people: the first device's description, and the second's after "; Q2: ".
  std::string description() const;

 private:
  devices::DeviceSpread first_;
  std::optional<devices::DeviceSpread> second_;
  StagePiece nominal_;
  std::vector<StagePiece> corners_;
};

/// The devices of a build at a temperature, as a stage takes them.
stages::Transistor make_transistor(const StageSpread& spread, const StagePiece& piece, double celsius);

}  // namespace shelfstage::synth
