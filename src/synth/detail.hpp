// Internals shared by the synthesizer's files.
#pragma once
#include <string>

#include "shelfstage/synth/design.hpp"

namespace shelfstage::synth::detail {

/// Points a piece adds to the score: an extra piece must buy a percent of gain error.
inline constexpr double kPiecePoints = 1.0;
/// README "How candidates are ranked": percent points of gain error, half the nominal plus
/// the whole worst case, and kPiecePoints per piece. Lower is better.
double score_of(const Candidate& c);

stages::Transistor make_transistor(const devices::DeviceSpread& s, const devices::PieceFigures& f, double celsius);
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
std::string describe_net(const Candidate& c, const std::string& net);
/// Fills c.cautions: hazardous supply, electrolytic polarity, unstated ratings.
void add_cautions(Candidate& c, const Spec& spec);
/// Fraction of Monte Carlo builds meeting the spec.
double monte_carlo(const Candidate& c, const Spec& spec);

}  // namespace shelfstage::synth::detail
