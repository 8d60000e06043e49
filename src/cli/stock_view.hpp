// How the stock looks to a person (grouped tables) and to a script (JSON, schema 1).
#pragma once
#include <nlohmann/json.hpp>

#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/store/part.hpp"

namespace shelfstage::cli {

/// A line whose available pieces (on hand minus reserved) are at or below this is marked
/// `low`; none available is `out`.
inline constexpr int kLowMark = 2;

/// "out", "low" or "" for a stock line, from its available count.
std::string_view stock_status(const store::Part& part);

/// The value as a technician writes it, with its unit: "4.7kΩ", "100nF"; the device name for
/// a transistor.
std::string value_text(const store::Part& part);

/// A one-line description for messages: "R 4.7kΩ 5% bin A6", "NPN SQ-410 bin D10".
std::string describe_part(const store::Part& part);

/// A power rating as resistors are marked: "0.25W", "0.6W", "1W".
std::string power_text(double watts);

/// The grouped table `stock list` prints: Resistors, Capacitors, JFETs, BJTs, each with its
/// own columns, then a summary line. An empty list gives a short hint instead.
std::string stock_table(const std::vector<store::Part>& parts);

/// One stock line as scripts read it (docs/interface.md; keys only ever added): kind, value
/// (a number in ohms or farads, or the device name), qty, reserved, bin, tol ("5%" or
/// null), power (W or null), volts (V or null), dielectric (or null), note, id, package (or
/// null), available (qty - reserved) and status ("ok", "low", "out").
nlohmann::ordered_json part_json(const store::Part& part);

/// {"schema":1,"parts":[...]}.
nlohmann::ordered_json stock_json(const std::vector<store::Part>& parts);

}  // namespace shelfstage::cli
