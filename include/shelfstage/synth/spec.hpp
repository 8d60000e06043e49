// The design request: what the stage must do, in SI units, and its validation.
#pragma once
#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "shelfstage/devices/spread.hpp"

namespace shelfstage::synth {

/// A request as `shelfstage design` takes it (options: docs/interface.md), every value in SI.
struct Spec {
  double gain = 0;  ///< |V/V| from the source to the load
  double load_ohm = 0;
  double load_farads = 0;  ///< capacitance across the load (a cable); 0: none
  double supply_lo_v = 0;  ///< supply range, magnitudes; equal ends for a fixed supply
  double supply_hi_v = 0;
  /// A negative supply (`--supply -9`): ground at the battery's + terminal. Every stage is
  /// placed on the rail as stages::Rail says; node voltages come out negative.
  bool negative_rail = false;
  /// A split supply (`--split`): rails at +supply and -supply with ground between. Op-amp
  /// stages built for it (stages::SupplyForm::split) are offered beside every single-rail
  /// stage, which takes the + rail and ground.
  bool split_supply = false;
  /// Which JFET pieces the worst case and the Monte Carlo cover (DeviceSpread).
  devices::SpreadModel spread = devices::SpreadModel::correlated;
  double zin_min_ohm = 0;
  double source_ohm = 0;
  std::optional<std::pair<double, double>> band_hz;  ///< flat within 1 dB across it
  std::optional<double> swing_vpp;                   ///< output swing at every corner
  /// Without swing_vpp: the room before clipping a stage must keep at every corner, as a
  /// fraction of the lowest supply, peak to peak (docs/worst-case.md "Swing and
  /// distortion"; common practice). 0 for a pass that does not look at the swing.
  double least_swing = 0.1;
  /// The distortion an output may have and still count as undistorted: total harmonic
  /// distortion, a fraction (default 1 %, the level at which audio and instrument makers
  /// commonly rate an output; common practice). The swing delivered must stay within it at
  /// every corner, and a design's rated output is the largest level that does.
  double max_thd = 0.01;
  /// The least phase margin a feedback stage's loop may have at any corner, degrees (common
  /// practice: 45; 60 and more for a step response without overshoot). A stage short of it
  /// gets a compensation capacitor from the shelf where its topology offers one (across the
  /// feedback resistor), and is not listed when none brings the margin up.
  double least_margin_deg = 45.0;
  /// What to rank by beside the gain error: nothing more (accuracy), or the distortion at
  /// the requested level as well (distortion: ten points per percent of worst-case THD).
  enum class Prefer { accuracy, distortion } prefer = Prefer::accuracy;
  std::optional<double> max_current_a;              ///< supply current limit
  std::optional<std::pair<double, double>> temp_c;  ///< ambient range
  int copies = 1;
  std::vector<std::string> topologies;  ///< empty: all
  std::vector<std::string> devices;     ///< empty: every stocked type
  std::optional<std::string> piece;     ///< design for this measured piece only
  int top = 5;
  /// Stages in a row: single stages when stages_min is 1; chains of up to stages_max stages
  /// when no single stage meets the request within the gain window at every corner (or
  /// always, when stages_min >= 2).
  /// The search's breadth: families of designs (one-resistor variants of each other) that
  /// get the full corner pass per topology and device, and variants per family.
  int search_families = 24;
  int search_variants = 12;
  /// Fraction of the shelf's nearby values the design equations are offered per question
  /// (1: all they ask for; chains' stage pools use less).
  double search_breadth = 1.0;
  int stages_min = 1;
  int stages_max = 3;
  int combine = 2;         ///< parts per achievable value: 1, 2 (pairs) or 3 (triples)
  double gain_tol = 0.10;  ///< gain window that counts as meeting the spec in the yield
  std::uint64_t seed = 1;  ///< Monte Carlo seed
  int mc_samples = 500;
  /// When nothing fits, find the binding constraint by searching again with each one relaxed
  /// (diagnose.cpp), and the smallest purchase that would help (purchases.cpp). The probe
  /// searches of a diagnosis set it false: they only ask whether anything fits.
  bool explain_failure = true;
  /// Score points per piece not on the shelf (Candidate::purchases). 0 for designs from the
  /// shelf; the search for what to buy sets it high, so that its own pruning keeps the designs
  /// that buy least (fewest pieces first, then the gain error).
  double purchase_points = 0;

  double supply_nominal_v() const { return 0.5 * (supply_lo_v + supply_hi_v); }
  /// The rail's sign: +1, or -1 for a negative supply.
  double rail_sign() const { return negative_rail ? -1.0 : 1.0; }
  double temp_nominal_c() const;
  /// The lowest frequency the capacitors are sized for: the band's lower edge, else 20 Hz.
  double f_low_target_hz() const { return band_hz ? band_hz->first : 20.0; }
};

/// Checks a request for nonsense (negative load, band upside down, zero copies, NaN ...).
/// Throws InputError naming the field and its value.
void validate(const Spec& spec);

}  // namespace shelfstage::synth
