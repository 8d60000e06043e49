// The cautions a design carries, worded once (see the header).
#include "shelfstage/synth/cautions.hpp"

#include <fmt/format.h>

#include <algorithm>

namespace shelfstage::synth {

namespace {
constexpr std::string_view kHazardStart = "hazardous voltage: ";
constexpr std::string_view kPolarised = " is polarised: its + lead goes to the ";
}  // namespace

std::string hazard_caution(double supply_v) {
  if (!(supply_v > kHazardousSupplyV)) return {};
  return fmt::format(
      "{}the supply reaches {:g} V, above 60 V DC; work de-energised, discharge every capacitor before handling, "
      "mind capacitor voltage ratings and polarity, and follow local codes and licensed practice, which take "
      "precedence over this program",
      kHazardStart, supply_v);
}

bool is_hazard_caution(std::string_view line) { return line.starts_with(kHazardStart); }

void take_hazard_caution(std::vector<std::string>& cautions, std::span<const std::string> others) {
  if (std::any_of(cautions.begin(), cautions.end(), [](const std::string& s) { return is_hazard_caution(s); })) return;
  for (const auto& s : others)
    if (is_hazard_caution(s)) {
      cautions.insert(cautions.begin(), s);
      return;
    }
}

std::string polarised_caution(std::string_view part, std::string_view plus_words) {
  return fmt::format("{}{}{}; never reverse it", part, kPolarised, plus_words);
}

bool is_polarised_caution(std::string_view line, std::string_view part) {
  return line.starts_with(part) && line.substr(part.size()).starts_with(kPolarised);
}

std::string unrated_caution(std::span<const std::string> parts) {
  if (parts.empty()) return {};
  return fmt::format(
      "no rating stated for {}: check each against the stress it takes before fitting (common "
      "practice: resistors at most half their power rating, capacitors rated above the DC plus the "
      "signal peak with margin)",
      fmt::join(parts, ", "));
}

}  // namespace shelfstage::synth
