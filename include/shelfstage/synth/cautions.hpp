// The cautions a design carries, worded once: a hazardous supply, a polarised part and the way
// it goes in, parts and a transistor whose ratings the records do not state. The search, the
// analysis of a stage and the HTML report all write them through here.
#pragma once
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace shelfstage::synth {

/// Above this supply (volts DC) the hazard caution is given (the usual extra-low-voltage limit).
inline constexpr double kHazardousSupplyV = 60.0;

/// The hazard caution for a supply of up to supply_v volts, or "" at or below kHazardousSupplyV.
std::string hazard_caution(double supply_v);
/// True for a line written by hazard_caution.
bool is_hazard_caution(std::string_view line);
/// Puts the first hazard caution of `others` at the head of `cautions` when `cautions` has
/// none (a kept design's list, completed from its analysis).
void take_hazard_caution(std::vector<std::string>& cautions, std::span<const std::string> others);
/// "C2 (CS) is polarised: its + lead goes to the source of Q1; never reverse it". `part` is the
/// part as people call it ("C2 (CS)"), `plus_words` where its + lead goes.
std::string polarised_caution(std::string_view part, std::string_view plus_words);
/// True when the line is a polarised part's caution for that part.
bool is_polarised_caution(std::string_view line, std::string_view part);
/// The parts whose ratings the stock does not state (designators: "R1, C2"), as one caution; ""
/// when there are none.
std::string unrated_caution(std::span<const std::string> parts);

}  // namespace shelfstage::synth
