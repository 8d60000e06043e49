// Internals shared by the synthesizer's files.
#pragma once
#include <string>
#include <vector>

#include "shelfstage/synth/design.hpp"

namespace shelfstage::synth::detail {

/// Points a piece adds to the score: an extra piece must buy a percent of gain error.
inline constexpr double kPiecePoints = 1.0;
/// README "How candidates are ranked": percent points of gain error, half the nominal plus
/// the whole worst case, and kPiecePoints per piece. Lower is better.
double score_of(const Candidate& c);

stages::Conditions conditions(const Spec& spec, double supply, double celsius);
/// The first hard constraint a performance breaks ("bias", "swing", "current", "zin",
/// "band"), or empty.
std::string violation(const Spec& spec, const stages::Performance& p);
/// The nominal gain is within the spec's gain window.
bool gain_ok(const Spec& spec, double gain);
/// Power and voltage ratings and electrolytic polarity against one operating point.
std::string check_ratings(const Spec& spec, const Candidate& c, const stages::Performance& p);
/// Fills c.worst and c.error_worst; returns the first violated constraint or empty.
std::string evaluate_worst(Candidate& c, const Spec& spec, long& evaluations);
/// A stage net as a person at the bench would name it ("ground", "RS1-RS2 junction").
/// next_stage: in a chain, the stage the output feeds (0: the load).
std::string describe_net(const Candidate& c, const std::string& net, int next_stage = 0);
/// Fills c.cautions: hazardous supply, electrolytic polarity, unstated ratings.
void add_cautions(Candidate& c, const Spec& spec, int next_stage = 0);
/// Fraction of Monte Carlo builds meeting the spec (a chain: every stage drawn at once).
double monte_carlo(const Candidate& c, const Spec& spec);

/// One search job: a topology with one device type (or one measured piece).
struct Job {
  const stages::Topology* topology = nullptr;
  const devices::DeviceRecord* device = nullptr;
  const devices::MeasuredPiece* piece = nullptr;
  int device_available = 0;
};
/// Every topology x device job the spec allows (InputError for unknown names).
std::vector<Job> make_jobs(const Spec& spec, const Inventory& inv);
/// Runs the jobs on the machine's cores; candidates best first.
std::vector<Candidate> run_jobs(const Spec& spec, const Shelf& shelf, const std::vector<Job>& jobs, SearchStats& tally,
                                const Progress& progress, bool probe = false);
/// Recipe texts and stock lines of the parts (only for candidates that are shown).
void finalize(Candidate& c, const Shelf& shelf);

/// Chains of two or more stages for the spec (spec.stages_max >= 2), best first, each
/// evaluated as a whole by the exact solver; `single_best` is the score of the best single
/// stage (a chain must beat it). Never throws for "nothing fits".
std::vector<Candidate> design_chains(const Spec& spec, const Inventory& inv, const Shelf& shelf, SearchStats& tally);
/// A chain's corner pass (its stages' values, devices and parts given): each stage at its
/// corners in the conditions the chain puts it in; fills the chain's figures from the fast
/// evaluation, its worst range, pieces, cautions and score. Returns the first constraint
/// broken ("swing: stage 2") or empty.
std::string chain_corners(Candidate& ch, const Spec& spec, long& evaluations);
/// The whole chain by the exact solver: its figures replace the fast ones and the worst
/// gain range moves with the exact-to-fast ratio. Returns the constraint broken or empty.
/// The search solves with Detail::core; the chains shown are solved again with Detail::full
/// (corners, HD2, noise) and scale_worst false (their range is scaled already).
std::string chain_exact(Candidate& ch, const Spec& spec, stages::Detail detail = stages::Detail::full,
                        bool scale_worst = true);
/// Points a chain pays for each stage beyond the first (README "How candidates are ranked").
inline constexpr double kStagePoints = 3.0;

}  // namespace shelfstage::synth::detail
