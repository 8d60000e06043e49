// Internals shared by the synthesizer's files.
#pragma once
#include <algorithm>
#include <atomic>
#include <exception>
#include <functional>
#include <limits>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <thread>
#include <vector>
#include <span>
#include <system_error>
#include <string>
#include <vector>

#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::synth::detail {

/// Points a piece adds to the score: an extra piece must buy a percent of gain error.
inline constexpr double kPiecePoints = 1.0;
/// README "How candidates are ranked": percent points of gain error, half the nominal plus
/// the whole worst case, and kPiecePoints per piece. Lower is better.
double score_of(const Candidate& c, const Spec& spec);
/// score_of's points from the figures themselves (the distortion's only with --prefer
/// distortion): for a score foreseen before a candidate exists (a chain's, synth/chain.cpp).
double score_points(double error_nominal, double error_worst, int pieces, double thd_max, int purchases,
                    const Spec& spec);
/// A stage's part by role, or nullptr.
RolePart* part_of(Candidate& s, std::string_view role);
const RolePart* part_of(const Candidate& s, std::string_view role);

stages::Conditions conditions(const Spec& spec, double supply, double celsius);
/// The first hard constraint a performance breaks ("bias", "swing" (clipping), "distortion"
/// (within clipping but beyond the distortion bound), "current", "zin", "band"), or empty.
std::string violation(const Spec& spec, const stages::Performance& p);
/// A screen's floors (stages::Conditions::least_clip_v ...) from the request: a stage cut
/// short at one of them (the distortion off) is one violation() rejects, for the same reason
/// as the whole evaluation (a part in a billion to spare, for the rounding).
void set_screen_floors(stages::Conditions& c, const Spec& spec);
/// The output peak a stage must reach at every corner: the requested swing's, else the
/// least room (Spec::least_swing of the lowest supply, peak to peak: a stage biased against
/// a rail clips on the first loud input, so the bench wants some room whatever the request
/// says).
double least_swing_peak(const Spec& spec);

/// The largest signal peak a stage's capacitors see on top of their DC: the stage driven to
/// clipping (it can be overdriven), or the requested swing when that is larger.
double signal_peak(const Spec& spec, const stages::Performance& p);
/// The nominal gain is within the spec's gain window.
bool gain_ok(const Spec& spec, double gain);
/// An op-amp's supply span V+ - V- at a supply magnitude: the supply on one rail, twice it on
/// a split supply (the rails at +supply and -supply).
double supply_span(const Spec& spec, double supply);
/// The transistor's stress at one operating point (DeviceStress NOTES) at an ambient.
DeviceStress device_stress(const Spec& spec, const Candidate& c, const stages::Performance& p, double celsius);
/// A pair's Q2 the same way: the supply's upper end (cut off, it holds it) or its VCE, its
/// VCE times its current; no reverse figure (its base-emitter junction is never reversed).
DeviceStress device2_stress(const Spec& spec, const Candidate& c, const stages::Performance& p, double celsius);
/// Power and voltage ratings (parts and the transistor) and electrolytic polarity against one
/// operating point at an ambient.
std::string check_ratings(const Spec& spec, const Candidate& c, const stages::Performance& p, double celsius);
/// What check_ratings says of a device whatever its stage: the supply's upper end past what
/// its rating allows (a transistor holds the whole supply cut off; an op-amp's span is the
/// supply's), or an op-amp's span at the lower end below its operating range. Empty when the
/// supply leaves the device room; otherwise every stage with it fails its corner pass.
std::string supply_rating(const Spec& spec, const devices::DeviceRecord& record);
/// How far a worst-case pass goes: `search` for every candidate the search assesses (what
/// decides feasibility and the score), `full` for the candidates shown (every figure, every
/// piece's own part directions, the -3 dB corners over the capacitors' tolerances). NOTES in
/// worst.cpp.
enum class Depth { search, full };
/// An electrolytic's smallest forward DC at any point checked (volts).
inline constexpr double kPolarForwardV = 0.1;
/// What letting each relaxable constraint of a request go in turn found (relax_each).
struct Relaxed {
  bool any = false;     ///< the request has one to let go
  std::string binding;  ///< the first whose relaxation gives a design (empty: none does)
  std::string detail;   ///< that design's figure against the request, in words
};
/// When nothing fits: searches again with each relaxable constraint of the spec let go in turn
/// (single stages, the best only) and, for the first whose relaxation gives a design, names it
/// as binding with that design's figure against the request (diagnose.cpp).
Relaxed relax_each(const Spec& spec, const Inventory& inv, const Shelf& shelf);
/// design() on a shelf already built from inv.parts with spec.combine, for a spec design()
/// has validated (or one made from such by letting a limit go): the searches a search makes
/// of its own (a diagnosis's) share the shelf and what it has learned.
DesignResult design_on(const Spec& spec, const Inventory& inv, const Shelf& shelf, const Progress& progress = {});
/// How far the closed-form evaluator may sit from a full circuit simulation of the same build
/// (measured against ngspice in tests/stages: gain within 0.05 %, bias and node voltages
/// within 0.05 %, the -3 dB corners within 0.06 %, the clipping swing within 4.3 %, THD at the
/// rated level at most 11 % low; rounded up): every claimed range is widened by it, and the
/// constraints on swing, distortion, Zin and supply current hold with it, so that a simulation of a listed
/// build at a corner lands inside the claim and not on its edge (docs/worst-case.md).
struct ModelMargin {
  double gain = 0.001;             ///< share of each end (a chain's compounds stage by stage)
  double current = 0.003;          ///< bias and supply current
  double node = 0.003;             ///< node voltages: share ...
  double node_floor_v = 2e-3;      ///< ... and floor
  double impedance_corner = 0.01;  ///< Zin and Zout (Zin: see above)
  /// The -3 dB corners: the corner pass takes each part's tolerance ends together, and a
  /// mix of ends it does not visit (a coupling capacitor high with the input impedance at
  /// its low hFE) reaches up to 2 % past the ends it finds (tests/synth/worst_case_test.cpp).
  double band_corner = 0.03;
  /// The losses at the band's edges: a corner band_corner further off moves a small loss
  /// (about 4.34 (fc/f)^2 dB) by up to twice that share, a large one by less.
  double band_loss = 2 * band_corner;
  double swing = 0.05;  ///< the smallest swing, lowered
  double thd = 0.15;    ///< the largest THD, raised
};
inline constexpr ModelMargin kModelMargin{};
/// Moves a range's ends outward by share of their size plus floor; an end off zero never
/// crosses it.
void widen(Range& r, double share, double floor = 0.0);
/// Widens every range of one stage's worst case w by kModelMargin.
void add_model_margin(Worst& w);
/// The worst relative gain error of a gain range against the target magnitude.
double worst_gain_error(const Range& gain, double target);
/// Fills c.worst and c.error_worst; returns the first violated constraint or empty. With
/// `wanted` false the distortion is never worked out (the THD range stays at zero, the
/// swing is the clipping point): for a caller that reads other figures only.
std::string evaluate_worst(Candidate& c, const Spec& spec, long& evaluations, Depth depth, bool wanted = true);
/// The largest gain error of the search's corner pass (evaluate_worst at Depth::search) at its
/// nominal piece with the parts pushed for the gain, either way, on a request of one supply
/// at the nominal temperature: sets that pass evaluates as they are, so a candidate that holds
/// has an error_worst at least this. Sets that do not work are left out (that pass rejects
/// the candidate on them). Costs the pass's directions and two evaluations.
double tolerance_gain_error(const Candidate& c, const Spec& spec, long& evaluations);
/// A capacitor whose DC the exact solver reads: its part, the fitted + lead's net as the netlist
/// names it (empty: not polarised), and the leads' nets once fixed.
struct CapLeads {
  RolePart* part = nullptr;
  std::string fitted_plus;
  std::string plus, minus;
};
/// Solves the netlist's operating point and joins the DC across each capacitor (from its +
/// lead) to its part's dc range; the first call fixes the leads (the fitted + lead, else the
/// end higher) and names them (plus_node, minus_node). Returns "polarity: ..." when a
/// polarised part is reversed, "bias: ..." when the solver finds no operating point. `warm`,
/// when given, holds the operating point of the last solve (a corner a step away:
/// circuit::solve_dc_next) and takes this one's.
std::string read_capacitors(const circuit::Circuit& net, double celsius, std::vector<CapLeads>& leads,
                            const std::string& where, circuit::OperatingPoint* warm = nullptr);
/// The DC across every capacitor of a single stage, from the exact solver at nominal and every
/// corner (NOTES in worst.cpp): fills each capacitor's dc, plus_node and minus_node. Returns
/// "polarity: ..." when a polarised part would be reversed, "bias: ..." when the solver finds
/// no operating point; empty when all holds. Needs c.worst from a full-depth pass.
std::string verify_polarity(Candidate& c, const Spec& spec);
/// A stage net as a person at the bench would name it ("ground", "RS1-RS2 junction").
/// next_stage: in a chain, the stage the output feeds (0: the load).
std::string describe_net(const Candidate& c, const std::string& net, int next_stage = 0);
/// Fills c.cautions: hazardous supply, electrolytic polarity, unstated ratings.
void add_cautions(Candidate& c, const Spec& spec, int next_stage = 0);
/// Fraction of Monte Carlo builds meeting the spec (a chain: every stage drawn at once).
double monte_carlo(const Candidate& c, const Spec& spec);

/// Whether the request lets the search try topology t: named by --topology, or, when none is
/// named, searched by default.
inline bool topology_wanted(const Spec& spec, const stages::Topology& t) {
  if (spec.topologies.empty()) return t.searched_by_default();
  return std::find(spec.topologies.begin(), spec.topologies.end(), t.name()) != spec.topologies.end();
}

/// One search job: a topology with one device type (or one measured piece).
struct Job {
  const stages::Topology* topology = nullptr;
  const devices::DeviceRecord* device = nullptr;
  const devices::MeasuredPiece* piece = nullptr;
  int device_available = 0;  ///< units on the shelf (stocked_units): pieces, or an op-amp's channels
  const devices::DeviceRecord* device2 = nullptr;  ///< a pair's Q2
  int device2_available = 0;
};
/// The device units on the shelf (available: on hand less reserved), by the stock lines'
/// device name, in the units a design draws on: pieces of a transistor type, channels of an
/// op-amp type (packages x channels, devices::channel_units; one op-amp stage takes one
/// channel per copy). A line whose type has no record counts its pieces.
std::map<std::string, int> stocked_units(const Inventory& inv);
/// The device units `copies` copies of a design take, by device name, in the units of
/// stocked_units: a piece of each transistor (Q1, a pair's Q2) or a channel of the op-amp,
/// per stage and copy; a chain sums its stages.
std::map<std::string, int> device_units_needed(const Candidate& c, int copies);
/// Every topology x device job the spec allows (InputError for unknown names).
std::vector<Job> make_jobs(const Spec& spec, const Inventory& inv);
/// One design run: the request, the stock, the shelf made of it, the search jobs, the tally.
struct Run {
  const Spec& spec;
  const Inventory& inv;
  const Shelf& shelf;
  const std::vector<Job>& jobs;
  SearchStats& tally;
  const Progress& progress;
  DesignResult::Phases& phases;
};
/// When nothing fits: which constraint binds, why, and what purchases would help
/// (diagnose.cpp).
void diagnose(Diagnosis& d, const Run& run);
/// Whether the gain is an attenuation two resistors give as a divider, within the input
/// impedance asked (diagnose.cpp).
bool divider_reaches(const Spec& spec);

struct JobWork;

/// The candidates of a search in rank order (score, then pieces, then job, then the job's
/// order of choice: the order a full sort of every assessed candidate gives), each chosen
/// draft assessed (the corner pass) only when the order needs it. NOTES in ranked.cpp.
class RankedSearch {
 public:
  /// Drafts every job (on the machine's cores); chooses and assesses nothing yet.
  RankedSearch(const Spec& spec, const Shelf& shelf, const std::vector<Job>& jobs, bool probe = false);
  ~RankedSearch();
  RankedSearch(const RankedSearch&) = delete;
  RankedSearch& operator=(const RankedSearch&) = delete;
  /// Whether the caller would pass over a candidate, whatever its place (a variant of one
  /// it has taken, say); asked of drafts not yet assessed, as the candidates they make
  /// before their corner pass. The answer must not turn from yes to no as the search goes on.
  using PassOver = std::function<bool(const Candidate&)>;
  /// The k-th candidate (best first) that holds at its corners, of every job or of the jobs
  /// whose first device is named `device`: its id, or nullopt past the end. A draft not yet
  /// assessed that `skip` passes over is never assessed nor handed out by that order (later
  /// candidates move up a place).
  std::optional<std::size_t> at(std::size_t k, const std::string* device = nullptr, const PassOver& skip = {});
  /// The k-th candidate that holds among the drafts `member` accepts (asked once of every
  /// draft id as it is chosen, during a call with that order's `name`), best first.
  std::optional<std::size_t> at_among(std::size_t k, const std::string& name,
                                      const std::function<bool(std::size_t id)>& member);
  /// A draft as the candidate it makes before its corner pass (its parts; no figures yet).
  const Candidate& shell(std::size_t id);
  Candidate& candidate(std::size_t id);
  /// Whether candidate a ranks before candidate b (both assessed and holding).
  bool before(std::size_t a, std::size_t b) const;
  /// Every candidate that holds, best first (every chosen draft assessed).
  std::vector<Candidate> all();
  /// Adds what the search learned to tally: the drafting's counts job by job, then each
  /// assessed draft's, in the order of jobs and choice.
  void tally(SearchStats& out) const;
  /// Takes every nominal screen the drafting put off and no choice took (NOTES 7 in
  /// ranked.cpp) and adds what they count to out (the stops, the stages' reach), so that
  /// with tally()'s the counts are those of a search drafting whole: for a diagnosis, when
  /// nothing was listed.
  void settle(SearchStats& out);
  /// Makes every job's choice whole (the drafts are then ids 0 to chosen() - 1): for a caller
  /// that reads every chosen draft before it asks for any (the choices are otherwise made as
  /// far as the hand-out needs, NOTES 5 in ranked.cpp).
  void choose_all();
  /// Drafts chosen so far, and how many of them were assessed.
  std::size_t chosen() const;
  std::size_t assessed() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Runs the jobs on the machine's cores; candidates best first (every chosen draft assessed).
std::vector<Candidate> run_jobs(const Spec& spec, const Shelf& shelf, const std::vector<Job>& jobs, SearchStats& tally,
                                const Progress& progress, bool probe = false);
/// Recipe texts and stock lines of the parts (only for candidates that are shown).
void finalize(Candidate& c, const Shelf& shelf);
/// The pieces to buy to make up the parts `combos` (null entries skipped; at most kMaxRoles of
/// them) for every copy from the shelf's stock groups: 0 when the shelf holds them all, -1
/// when a short group cannot be bought (the passive half of StageBuilder::shortfall).
int parts_short(const Shelf& shelf, std::span<const Combo* const> combos, int copies);
/// The part list's entry for a combo in a role: designator, pieces' values, tolerance from the
/// bounds, rating, dielectric (recipe and stock lines come with finalize).
RolePart role_part(const stages::Topology& topology, std::size_t role, const Combo& combo, const Shelf& shelf);

/// Chains of two or more stages for the spec (spec.stages_max >= 2), best first, each
/// evaluated as a whole by the exact solver (design() then ranks them with the single
/// stages by the same score). `ceiling`: the score of the last single stage the list shows when
/// single stages fill it (a chain scoring past it is not shown; the corner passes stop short
/// of it), else infinity. Never throws for "nothing fits".
std::vector<Candidate> design_chains(const Spec& spec, const Inventory& inv, const Shelf& shelf, SearchStats& tally,
                                     double ceiling = std::numeric_limits<double>::infinity());
/// What the corner passes of chains (Depth::search) found for their stages from some position
/// to the last, by the stages there: a stage's conditions are set from the load back, so
/// every chain with the same stages from that position on puts it in the same ones and gets
/// the same worst case (NOTES 6 in chain_eval.cpp). Shared by the threads of a corner pass.
class ChainMemo {
 public:
  ChainMemo();
  ~ChainMemo();
  ChainMemo(const ChainMemo&) = delete;
  ChainMemo& operator=(const ChainMemo&) = delete;
  struct Impl;
  Impl& impl() { return *impl_; }

 private:
  std::unique_ptr<Impl> impl_;
};

/// A chain's corner pass (its stages' values, devices and parts given): each stage at its
/// corners in the conditions the chain puts it in; fills the chain's figures from the fast
/// evaluation, its worst range, pieces, cautions and score. Returns the first constraint
/// broken ("swing: stage 2") or empty. With a memo (Depth::search), `ids` names each stage
/// (the same id for the same stage, as its place in a stage pool), and the stages from a
/// position on that a chain before had there take what that chain's pass found.
std::string chain_corners(Candidate& ch, const Spec& spec, long& evaluations, Depth depth, ChainMemo* memo = nullptr,
                          std::span<const void* const> ids = {});
/// The whole chain by the exact solver: its figures replace the fast ones and the worst
/// gain range moves with the exact-to-fast ratio. Returns the constraint broken or empty.
/// The search solves with Detail::core; the chains shown are solved again with Detail::full
/// (corners, HD2, noise) and scale_worst false (their range is scaled already).
std::string chain_exact(Candidate& ch, const Spec& spec, stages::Detail detail = stages::Detail::full,
                        bool scale_worst = true);
/// A chain as it is shown: the full corner pass, the exact solution, the chain's -3 dB corners
/// with every stage at its own extreme at once, every range holding the nominal, and the DC
/// across every capacitor from the exact solver (NOTES in chain_eval.cpp). Returns the first
/// constraint broken or empty.
std::string finish_chain(Candidate& ch, const Spec& spec);
/// A single stage as it is shown: the full-depth worst case, score and cautions, and the DC
/// across every capacitor from the exact solver. Returns the first constraint broken or empty.
std::string finish_stage(Candidate& c, const Spec& spec);
/// A feedback stage's loop over its corners (LoopFigures) into c.loop (reset for a stage
/// without a loop). A chain's stage after the first is measured driven from the output
/// impedance of the stage before (source_ohm >= 0), as it is in the chain: the loop gain of a
/// shunt stage grows with the impedance that drives it. Returns a failure ("bias: ..." when a
/// corner does not solve, "stability: ..." when the phase margin falls under the request's
/// least at any corner); c.loop holds the figures either way.
std::string assess_loop(Candidate& c, const Spec& spec, const std::string& prefix = {}, double source_ohm = -1);
/// finish_stage for a single stage with a feedback loop that may take a compensation
/// capacitor (the topology's kRoleCompensation role, empty): when its loop's phase margin
/// falls under the request's (at the nominal pieces, checked first with one sweep, or at a
/// corner), the smallest capacitor from the shelf across the feedback resistor that brings it
/// up at every corner (non-polarised, rated for the rail, stocked for every copy beside the
/// design's other parts, its zero near the crossover and above the band), the stage finished
/// again with it. Returns empty when the stage holds (c then holds the design, compensated or
/// not), else the constraint broken ("stability: ..." when no capacitor helps).
std::string finish_with_margin(Candidate& c, const Spec& spec, const Shelf& shelf);
/// Points a chain pays for each stage beyond the first (README "How candidates are ranked").
inline constexpr double kStagePoints = 3.0;
/// What a chain of n stages pays for its stages beyond the first.
inline double stage_points(std::size_t n) { return kStagePoints * static_cast<double>(n - 1); }

/// Set in the threads of a parallel_for while they run its work (see below).
inline thread_local bool in_parallel_for = false;

/// The one thread pool of the search: Runs fn(i) for i in [0, n) on the machine's cores (fn must not share state
/// unguarded). Called from inside another parallel_for's work (a chain's stage pools each run
/// a search), it runs on the calling thread alone: the cores are busy already (the shelf's
/// answers are shared by every thread, Shelf NOTES 3). An exception an item throws reaches
/// the caller, on whichever thread the item ran (the first one, when several throw), and the
/// items not yet taken are left, as a loop on one thread leaves them: an exception escaping
/// a thread's function would end the program.
template <class Fn>
void parallel_for(std::size_t n, const Fn& fn) {
  if (in_parallel_for || n == 1) {  // (one piece of work: its own may use the cores)
    for (std::size_t i = 0; i < n; ++i) fn(i);
    return;
  }
  std::atomic<std::size_t> next{0};
  std::mutex thrown_lock;
  std::exception_ptr thrown;
  auto worker = [&] {
    in_parallel_for = true;
    for (std::size_t i = next++; i < n; i = next++) {
      try {
        fn(i);
      } catch (...) {
        const std::lock_guard held(thrown_lock);
        if (!thrown) thrown = std::current_exception();
        next = n;
      }
    }
    in_parallel_for = false;
  };
  const unsigned k = std::min<unsigned>(std::max(1u, std::thread::hardware_concurrency()), static_cast<unsigned>(n));
  std::vector<std::thread> threads;
  for (unsigned t = 1; t < k; ++t) {
    try {
      threads.emplace_back(worker);
    } catch (const std::system_error&) {
      break;  // no more threads to be had (a process limit): those started and this one take every item
    }
  }
  worker();
  for (auto& th : threads) th.join();
  if (thrown) std::rethrow_exception(thrown);
}

}  // namespace shelfstage::synth::detail
