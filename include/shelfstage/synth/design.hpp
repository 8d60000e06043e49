// The synthesizer: complete stages from what is on the shelf, evaluated at nominal and at
// the worst-case corners of device spread, part tolerances, supply and temperature, ranked.
#pragma once
#include <cstdint>
#include <array>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "shelfstage/devices/record.hpp"
#include "shelfstage/devices/spread.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/stages/loop.hpp"
#include "shelfstage/stages/topology.hpp"
#include "shelfstage/store/part.hpp"
#include "shelfstage/synth/shelf.hpp"
#include "shelfstage/synth/spec.hpp"
#include "shelfstage/synth/stage_spread.hpp"

namespace shelfstage::synth {

/// What the shelf holds, as the synthesizer reads it.
struct Inventory {
  std::vector<store::Part> parts;              ///< every stock line (R, C and transistors)
  std::vector<devices::DeviceRecord> devices;  ///< device records
  std::vector<devices::MeasuredPiece> pieces;  ///< measured pieces
};

/// [min, max] over the corners.
struct Range {
  double min = 0, max = 0;
  void add(double v);
  bool empty = true;
};

/// One role of a candidate and the parts that fill it.
struct RolePart {
  std::string role;        ///< RD, RS1, CIN ...
  std::string designator;  ///< R2, C1 ...
  char kind = 'R';
  Combo combo;                 ///< value, bounds and recipe (groups index Shelf::groups())
  std::string recipe;          ///< "10k+150"
  std::vector<double> values;  ///< nominal value of each piece
  /// For each piece of the recipe: the stock lines (ids) that hold it, in bin order.
  std::vector<std::vector<std::int64_t>> lines;
  units::Tolerance tol;    ///< of the combination, from its bounds
  double rating = 0;       ///< W or V of the combination; 0 unknown
  std::string dielectric;  ///< capacitors
  bool polarised = false;
  std::string plus_net;   ///< polarised capacitors: the net the + lead goes to
  std::string minus_net;  ///< capacitors: the stage's net at the other lead (from the design's analysis)
  int stage = 0;          ///< in a chain's part list: the stage (1, 2, 3); 0 for a single stage
  /// Capacitors: the DC across the part, from its + lead (a non-polarised part: the end at the
  /// higher voltage at nominal) to the other, over the nominal build and every corner, from
  /// the exact solver (detail::verify_polarity): the one figure every output reads. Empty
  /// until verified.
  Range dc;
  std::string plus_node, minus_node;  ///< the exported netlist's nets of the two leads
};

struct Worst {
  Range gain, bias_current, swing_peak, v_in, v_common, v_out, zin, zout, f_low, f_high, supply_current;
  Range loss_lo_db, loss_hi_db;
  Range v_out2;  ///< a pair's Q2 collector (its output terminal)
  Range thd;     ///< total harmonic distortion at the requested level (at 1 V peak without one)
  /// Capacitors, by role index: the DC across from the fitted + lead (a non-polarised part:
  /// the end higher at nominal), over every point evaluated with part stress.
  std::array<Range, stages::kMaxRoles> cap_dc;
  /// The transistor, over every point evaluated with part stress (DeviceStress).
  Range device_v, device_rev, device_p, device_p_allowed;
  Range device2_v, device2_p;  ///< a pair's Q2: volts it may hold, its dissipation
  int evaluations = 0;
};

/// What a stage's transistor must withstand at one operating point, magnitudes.
/// NOTES: voltage: the supply's upper end, which the device holds whole when it is cut off
/// (at power-up, overdriven, or a piece that does not conduct); reverse: a JFET's gate-source
/// DC plus the input's signal peak (the clipping peak over the gain), and, where the source or
/// emitter is bypassed, the DC the bypass capacitor holds there when the supply goes and the
/// gate or base falls to 0 V (a BJT's emitter-base junction is reverse-biased only then);
/// dissipation: the DC across the main terminals times the bias current (class A into a
/// resistive load dissipates most with no signal); allowed: the rating derated to the ambient.
/// An op-amp (U1): voltage: the supply span V+ - V- at the supply's upper end (the supply on
/// one rail, twice it on a split supply), against its absolute maximum total supply and its
/// record's operating range (OpampParams::vs_min_v..vs_max_v, the span at the supply's lower
/// end against vs_min_v); reverse: the differential input voltage, |V(-) - V(+)| at the DC
/// operating point (the offset, about 0 in linear operation); dissipation: the span times
/// the supply current, plus the output stage's drop (from the rail it sources from, or to
/// the one it sinks to) times the output pin's DC current (Performance::out_current_a).
struct DeviceStress {
  double v_main = 0;       ///< volts the device may hold between drain and source (collector and emitter)
  double v_rev = 0;        ///< reverse volts on the gate-source (emitter-base) junction
  double p_w = 0;          ///< dissipation
  double p_allowed_w = 0;  ///< the rating at this ambient (0: not stated)
  double v_low = 0;        ///< an op-amp: the supply span at the supply's lower end
};
/// Common practice: a semiconductor's voltages at most 80 % of its absolute maximum, its
/// dissipation at most half its rating derated to the ambient (as for resistors).
inline constexpr double kDeviceVoltageShare = 0.8;
/// The share of an op-amp's absolute maximum supply its span may reach: all of it when the
/// record states an operating range (the maker's derated span, which the span must keep to
/// as well), kDeviceVoltageShare when it states none.
inline double opamp_span_share(const devices::OpampParams& o) { return o.vs_max_v > 0 ? 1.0 : kDeviceVoltageShare; }
inline constexpr double kDevicePowerShare = 0.5;

/// A feedback stage's loop gain (stages/loop.hpp) at nominal and over its corners: every
/// corner piece of the device and the nominal one, at both supply ends and both temperature
/// ends, the parts at nominal (their tolerances move |T| by about as much, the crossover and
/// margin far less), in the conditions the stage works in (a chain stage: into the next).
struct LoopFigures {
  std::string broken_at;         ///< where the loop is broken, for people: "R2 (RF) at the collector"
  double f_mid_hz = 0;           ///< the mid-band frequency |T| is read at
  stages::LoopGain nominal;      ///< at the nominal piece and supply
  Range mid;                     ///< |T| at f_mid over the corners (nominal included)
  Range f_cross;                 ///< the unity-gain crossover over the corners that have one
  Range margin_deg;              ///< the phase margin there
  double least_margin_deg = 45;  ///< the request's least margin (Spec::least_margin_deg)
  int corners = 0;               ///< builds solved
  int crossing = 0;              ///< ... of which the loop gain reaches one
};
/// Common practice: a feedback loop's phase margin at least 45 degrees (60 for a response
/// without peaking); below it the stage rings, and near 0 it oscillates.
inline constexpr double kLeastPhaseMarginDeg = 45.0;

/// One designed stage.
struct Candidate {
  int rank = 0;
  std::string id;
  const stages::Topology* topology = nullptr;
  devices::DeviceRecord device;
  /// A stage with two devices (a feedback pair): the second, Q2 (always bipolar).
  std::optional<devices::DeviceRecord> device2;
  std::optional<devices::MeasuredPiece> piece;
  devices::SpreadModel spread_model = devices::SpreadModel::correlated;  ///< which pieces the worst case covers
  stages::Transistor nominal_device;                                     ///< the nominal piece at nominal temperature
  std::vector<RolePart> parts;                                           ///< roles present, in the topology's order
  stages::Values values;
  stages::Conditions conditions;  ///< nominal supply, load, source, temperature
  stages::Performance nominal;    ///< fast evaluator at nominal, Detail::full
  Worst worst;
  double score = 0;
  double error_nominal = 0;     ///< |gain|/G - 1 at nominal
  double error_worst = 0;       ///< the largest |gain/G - 1| over the corners
  std::optional<double> yield;  ///< Monte Carlo fraction meeting the spec (top K only)
  int pieces = 0;               ///< parts per copy, transistor included
  int purchases = 0;            ///< pieces to buy for all copies (searches on a shelf with purchases only)
  std::vector<std::string> cautions;
  /// A feedback stage's loop (finished candidates only; a chain's stages carry their own).
  std::optional<LoopFigures> loop;
  /// A chain: its stages, in signal order, each a whole single-stage candidate evaluated into
  /// the next stage's input (its conditions say the load and source it sees; its designators
  /// carry the stage in the hundreds: R103, Q201). The chain itself has no topology; its
  /// parts are every stage's parts, its device the first stage's, its nominal figures those
  /// of the exact solver on the whole chain, its worst gain the product of the stages' ranges.
  std::vector<Candidate> stages;
  bool is_chain() const { return !stages.empty(); }
  /// "jfet-follower > jfet-cs-self" for a chain, the topology's name for a stage.
  std::string topology_name() const;
};

/// Why nothing fits, and what would help.
struct Diagnosis {
  std::string binding;                   ///< the constraint that eliminated the most candidates ("gain", "swing", ...)
  std::string detail;                    ///< one or two sentences for people
  std::vector<std::string> suggestions;  ///< purchases: "buy 2 x 6.8k 5% (RS2 of jfet-cs-self)"
  std::optional<Candidate> with_purchases;  ///< the best design if those were bought
};

struct DesignResult {
  Spec spec;
  std::vector<Candidate> candidates;  ///< best first, at most spec.top
  Diagnosis diagnosis;                ///< filled when candidates is empty
  long proposals = 0;                 ///< stages proposed by the design equations
  long evaluations = 0;               ///< fast evaluations made
  double seconds = 0;
  /// Where the seconds went (wall clock): the shelf and the jobs; proposing, drafting and
  /// choosing single stages; assessing and finishing the listed ones (corners, loops);
  /// chains; the Monte Carlo; the diagnosis when nothing fits.
  struct Phases {
    double shelf = 0, propose = 0, finish = 0, chains = 0, yield = 0, diagnose = 0;
  } phases;
};

/// What a search learned on the way: why candidates were stopped and how close they came.
struct SearchStats {
  std::map<std::string, long> failures;                ///< constraint -> proposals it stopped at nominal
  std::map<std::string, long> corner_failures;         ///< ... that worked at nominal, stopped at a corner
  std::map<std::string, std::string> corner_examples;  ///< constraint -> the first such stop, in words
  /// Counts a corner stop ("rating: SQ-410 may hold ...") under its constraint, keeping the
  /// first of each kind in words.
  void note_corner_failure(const std::string& why) {
    const std::string key = why.substr(0, why.find(':'));
    ++corner_failures[key];
    corner_examples.emplace(key, why);
  }
  double best_gain = 0;       ///< largest |gain| of a stage in its active region
  double least_gain = 1e300;  ///< smallest such |gain|
  bool gain_met = false;      ///< some stage in its active region had a gain in the window
  double best_swing = 0;      ///< largest swing peak among those
  double best_zin = 0;
  std::string capacitor_need;  ///< the last capacitor the shelf could not supply
  /// Topology and device pairings not drafted at all: the supply takes the device past its
  /// rating (detail::supply_rating), so every stage with it would fail its corner pass; the
  /// first such stop in words.
  long past_rating = 0;
  std::string past_rating_example;
  long proposals = 0, evaluations = 0;
  void merge(const SearchStats& o);
};

/// Turns resistor sets into candidates for one topology and one device type (or measured
/// piece): what the guided search does with each proposal, available on its own so a
/// brute-force check can drive it with every combination. `device_available` (and
/// `device2_available`): the type's units on the shelf as detail::stocked_units counts them,
/// pieces of a transistor or channels of an op-amp (one per copy of the stage).
class StageBuilder {
 public:
  StageBuilder(const Spec& spec, const Shelf& shelf, const stages::Topology& topology,
               const devices::DeviceRecord& device, const devices::MeasuredPiece* piece, int device_available,
               bool probe = false, const devices::DeviceRecord* device2 = nullptr, int device2_available = 0);
  ~StageBuilder();
  StageBuilder(const StageBuilder&) = delete;
  StageBuilder& operator=(const StageBuilder&) = delete;

  /// Capacitors sized for the band and rated for the DC they hold, the quantity pool
  /// checked for every copy, the nominal constraints and the gain window. Returns true and
  /// fills out when the stage works at nominal; otherwise counts the reason in stats.
  bool complete(const stages::Values& resistors, Candidate& out, SearchStats& stats) const;

  /// What complete() decides, without the strings and lists of a Candidate: the search
  /// keeps thousands of these and turns only the chosen into candidates.
  struct Draft {
    stages::Values values;
    std::array<const Combo*, stages::kMaxRoles> combos{};
    /// The + lead's net of each polarised part, as an index into the builder's net names
    /// (1-based; 0 none): a byte where a search keeps tens of thousands of drafts.
    std::array<std::uint8_t, stages::kMaxRoles> plus{};
    // (Its figures at nominal are worked out again for the few that become candidates: a
    // search keeps tens of thousands of drafts.)
    double error_nominal = 0;
    int pieces = 0;
    int purchases = 0;  ///< pieces to buy for every copy (a shelf with purchases only)
    /// Held on the first screen, its gain with the fitted capacitors in the window; the rest
    /// of its nominal screen (the band, the distortion) still to come (draft's defer_screen,
    /// settle_screen).
    bool screen_pending = false;
  };
  /// With defer_screen, a draft that holds on the first screen, with its gain in the window
  /// for the fitted input capacitor, is kept with the rest of its nominal screen (the band's
  /// losses with the fitted capacitors, the distortion) pending: an evaluation, the costliest
  /// of the draft with the distortion, and most drafts are never chosen. settle_screen takes
  /// it later and counts it (the stop, the stages' reach) as this would have.
  bool draft(const stages::Values& resistors, Draft& out, SearchStats& stats, bool defer_screen = false) const;
  /// A pending draft's nominal screen: true when it holds; otherwise counts the stop.
  bool settle_screen(Draft& d, SearchStats& stats) const;
  Candidate candidate(const Draft& d) const;
  /// The quick estimate used to pick which drafts get the full corner pass, worked out a
  /// corner piece at a time (nominal parts): the gain error at the device's k-th corner
  /// piece (infinity where the stage is not valid and active there), and the estimate from
  /// the largest error over some pieces. Over every piece that is the quick estimate (1e6
  /// when a piece met infinity); over some, a floor under it.
  std::size_t corner_count() const { return corner_devices_.size(); }
  double corner_error(const Draft& d, std::size_t k, SearchStats& stats) const;
  double quick_from(const Draft& d, double worst_error) const;
  /// A floor under the quick estimate from the draft alone (no evaluation): quick_from(d, 0).
  double score_floor(const Draft& d) const;
  /// The worst-case pass, score and cautions (no yield). True when every corner holds;
  /// otherwise counts the reason in stats.corner_failures.
  bool assess(Candidate& c, SearchStats& stats) const;

  const devices::DeviceRecord& device() const { return device_; }
  const stages::Topology& topology() const { return topology_; }
  const stages::Transistor& nominal_device() const { return q_; }
  const stages::Conditions& conditions() const { return cond_; }
  stages::Goal goal() const;

 private:
  void add_part(Candidate& c, std::size_t role, const Combo& combo) const;
  /// The quantity pool for every role and copy: the pieces to buy to make it up (0 when
  /// the shelf holds them all), or -1 when it cannot be made up (too few transistors or
  /// op-amp channels, or a short line on a shelf without purchases).
  int shortfall(const std::array<const Combo*, stages::kMaxRoles>& combos) const;
  struct Cache;
  const Spec& spec_;
  const Shelf& shelf_;
  const stages::Topology& topology_;
  const devices::DeviceRecord& device_;
  const devices::MeasuredPiece* piece_;
  int device_available_;
  bool probe_;
  const devices::DeviceRecord* device2_;
  int device2_available_;
  StageSpread spread_;
  stages::Transistor q_;
  std::vector<stages::Transistor> corner_devices_;
  stages::Conditions cond_, cond_hi_;
  stages::Conditions screen_, gain_only_;  // cond_ with the distortion as the passes need it
  stages::Conditions first_;               // gain_only_ with the request's floors (the first screen)
  std::unique_ptr<Cache> cache_;
};

/// Progress: (work done, work total, what) — called from the calling thread only.
using Progress = std::function<void(double done, double total, const std::string& what)>;

/// Designs stages for the spec from the inventory. Throws InputError for a bad spec or an
/// unknown topology, device or piece; never throws for "nothing fits" (see diagnosis).
DesignResult design(const Spec& spec, const Inventory& inventory, const Progress& progress = {});

/// Re-evaluates one candidate with everything (corners and yield), e.g. for `show`.
void evaluate_candidate(Candidate& c, const Spec& spec);

/// True when b is a variant of a: same topology and device (or piece), and at most one
/// resistor role with another value (capacitors follow their sizing rule). The ranked list
/// shows only the best of such variants, so its places go to designs that differ.
bool is_variant(const Candidate& a, const Candidate& b);

/// A stable identifier for a candidate: topology, device and part values hashed.
std::string candidate_id(const Candidate& c, int copies);

/// A piece of one device's spread (its figures at a temperature) as a one-device stage takes it.
stages::Transistor make_transistor(const devices::DeviceSpread& spread, const devices::PieceFigures& f, double celsius);

/// A stage candidate as a chain takes it (topology, values, nominal piece); a chain's stages.
stages::ChainStage chain_stage(const Candidate& c);
std::vector<stages::ChainStage> chain_stages(const Candidate& chain);

/// The pieces a candidate's worst case covers: its device's spread (record, or measured
/// piece), with its second device's for a pair.
StageSpread spread_of(const Candidate& c);

}  // namespace shelfstage::synth
