// The analysis of one stage as built: both evaluators side by side, part stress against
// ratings, cautions and the device's corner pieces; as data, as JSON and as text for people.
#pragma once
#include <cstddef>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json_fwd.hpp>

#include "shelfstage/devices/spread.hpp"
#include "shelfstage/stages/loop.hpp"
#include "shelfstage/stages/topology.hpp"

namespace shelfstage::report {

using Json = nlohmann::ordered_json;

/// What is known about the part that fills a role, beyond its value (all optional).
struct PartInfo {
  std::string role;             ///< RD, CIN ... (the topology's role name)
  std::string designator;       ///< empty: the topology's default designator
  std::string recipe;           ///< "10k+150"; empty: the value alone
  std::string tol;              ///< "5%"; empty: not known
  std::string dielectric;       ///< capacitors; empty: not known
  double rating = 0;            ///< W for resistors, V for capacitors; 0: not stated
  bool polarised = false;       ///< electrolytic or tantalum
  std::string fitted_plus_net;  ///< polarised: the net its + lead is fitted to; empty: not known
  /// Capacitors: the DC across from the + lead (or the end higher at nominal) as the design
  /// verified it over the nominal build and every corner (synth::RolePart::dc): when given,
  /// the analysis takes the part's DC and polarity from it instead of from its own operating
  /// point (a chain's coupling capacitor sits between two stages, not on the stage's load).
  bool dc_known = false;
  double dc_min_v = 0, dc_max_v = 0;
};

/// A stage to analyse: topology, role values, the transistor piece and the conditions.
struct StageUnderTest {
  const stages::Topology* topology = nullptr;
  stages::Values values;          ///< ohms and farads by role index; 0: optional role left out
  stages::Transistor transistor;  ///< the piece, already at conditions.celsius
  stages::Conditions conditions;  ///< hd2_peak_v <= 0: the analysis picks it (see analyze_stage)
  std::string device;             ///< type name for people ("SJ-101"); may be empty
  std::string piece;              ///< measured piece label; empty: a nominal piece
  std::vector<PartInfo> parts;    ///< extra facts per role; roles not listed have none
};

/// Whether two figures differ by more than 1 % of the larger magnitude (and by more than
/// `floor`, in the figure's unit, so that 0 V against 2 µV is not a difference).
bool differs(double a, double b, double floor = 0);

/// What a part must withstand at the operating point, and how that meets its rating.
struct PartStress {
  std::size_t role = 0;  ///< index into the topology's roles
  std::string name;      ///< role name
  std::string designator;
  char kind = 'R';
  double value = 0;  ///< ohms or farads
  PartInfo info;
  double power_w = 0;         ///< resistors: I^2 R from the exact solution (else the closed form)
  double power_closed_w = 0;  ///< resistors: the closed form's figure
  double dc_v = 0;            ///< capacitors: DC across, >= 0 (the largest, when a range is known)
  double dc_closed_v = 0;
  bool dc_range = false;  ///< capacitors: dc_min_v..dc_max_v hold the verified range (PartInfo)
  double dc_min_v = 0, dc_max_v = 0;
  double peak_v = 0;     ///< capacitors: signal peak taken on top of the DC (the output swing peak)
  std::string plus_net;  ///< capacitors: the net at the higher DC voltage (where a + lead goes)
  /// Share of what the part may take: resistors P / (rating / 2) (common practice: at most half
  /// the rating), capacitors (DC + peak) / (rating / 1.25) (a quarter of margin, as the
  /// synthesizer asks). Above 1: a warning. 0 when no rating is stated.
  double use = 0;
  bool over = false;      ///< `use` above 1
  bool reversed = false;  ///< a polarised part fitted with its + lead at the lower DC voltage
};

/// The fast evaluator's figures at one of the device's corner pieces.
struct CornerFigures {
  devices::PieceFigures piece;
  std::optional<devices::PieceFigures> piece2;  ///< a pair's Q2 piece, when its spread is given
  stages::Performance performance;              ///< Detail::core
  /// A feedback stage's loop gain at this piece (stages::loop_gain, read at Analysis::loop_f_mid_hz);
  /// empty without a loop or when its operating point does not converge.
  std::optional<stages::LoopGain> loop;
};

/// Everything the analysis found.
struct Analysis {
  StageUnderTest stage;                      ///< with hd2_peak_v filled in
  stages::Performance closed_form;           ///< Topology::evaluate, Detail::full
  std::optional<stages::Performance> exact;  ///< evaluate_exact, Detail::full; empty if it failed
  std::string exact_problem;                 ///< why `exact` is empty
  std::vector<PartStress> parts;             ///< every role present, in the topology's order
  std::vector<std::string> warnings;         ///< ratings exceeded, polarity reversed, not amplifying
  std::vector<std::string> cautions;         ///< hazardous supply, polarised parts, unstated ratings
  std::vector<CornerFigures> corners;        ///< filled when a spread is given
  std::string spread;                        ///< DeviceSpread::description(), when given
  /// A feedback stage's loop gain at the nominal piece (stages/loop.hpp: broken at the part and
  /// net the topology names, read at the middle of the closed form's band on a log scale).
  std::optional<stages::LoopGain> loop;
  std::string loop_broken_at;  ///< "R5 (RF) at the Q2 collector"; empty without a loop
  std::string loop_problem;    ///< why `loop` is empty for a stage that has a loop
  double loop_f_mid_hz = 0;

  /// The exact figures when the solver converged, else the closed form.
  const stages::Performance& best() const { return exact ? *exact : closed_form; }
};

/// Role values from (name, value) pairs as a person gives them. Role names match without
/// regard to case. Throws InputError for an unknown role (listing the topology's roles), a
/// role given twice, a value that is not positive and finite, a missing required role
/// (naming it and listing the roles), and an optional part the stage cannot place without
/// its partner (a bypass capacitor without the resistor it bypasses).
stages::Values role_values(const stages::Topology& t, const std::vector<std::pair<std::string, double>>& given);

/// The topology's roles for people: "RG RD [RS1] [RS2] [CS] CIN COUT" (optional in brackets).
std::string role_list(const stages::Topology& t);

/// Analyses a stage: the closed form (Detail::full) and the exact solver, the stress of every
/// part against its rating, warnings and cautions, and with a spread the closed form at each
/// of its corner pieces (at the same temperature). When conditions.hd2_peak_v <= 0, HD2 is
/// given at 1 V peak, or at half the closed form's swing peak when that is smaller.
/// Throws InputError when the topology does not take the transistor's kind or a required
/// role is missing; never for a stage that does not work (that is a warning).
/// With a pair's Q2 spread (spread2) as well, the corners are every pairing of Q1's corner
/// pieces with Q2's.
Analysis analyze_stage(const StageUnderTest& stage, const devices::DeviceSpread* spread = nullptr,
                       const devices::DeviceSpread* spread2 = nullptr);

/// {"schema":1,"topology","device":{name,kind,piece,model},"conditions":{...},"exact":{...}|null,
///  "closed_form":{...},"differs":[keys],"parts":[...],"warnings","cautions","spread","corners"}.
/// Figures use the keys of a design's nominal figures (gain, bias_current, nodes, zin, zout,
/// f_low, f_high, swing_peak, supply_current) plus gain_db, swing_up, swing_down,
/// loss_low_db, loss_high_db, clip_peak, hd2, hd3, thd, noise (V/√Hz), c_in, valid, active,
/// problem; a corner not found is null. Every key: docs/interface.md.
Json analysis_json(const Analysis& a);

/// The bias point and the signal figures as a table: the exact figure, and the closed form
/// beside it where the two differ by more than 1 %.
std::string figures_text(const Analysis& a);
/// A feedback stage's loop at the nominal piece in one line (empty without a loop); the end
/// of figures_text.
std::string loop_text(const Analysis& a);
/// The parts: value, recipe, tolerance, stress, rating, share of the rating, + lead.
std::string parts_text(const Analysis& a);
/// The closed form at the device's corner pieces (empty when no spread was given).
std::string corners_text(const Analysis& a);

/// The .control block the exported netlists end with: the operating point (print_nodes: the
/// " v(x) v(y)" to print), the supply current, the mid-band gain and the -3 dB corners.
std::vector<std::string> spice_run_lines(const std::string& print_nodes);

/// The stage's test bench as a SPICE netlist for ngspice, with a .control block that prints
/// the operating point and the supply current, sweeps 0.1 Hz .. 1 GHz and measures the
/// mid-band gain (dB) and the -3 dB corners (f_low, f_high).
std::string stage_spice(const StageUnderTest& stage);

}  // namespace shelfstage::report
