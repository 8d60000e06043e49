// Naming one stock line on the command line: by its id, or by kind, value and bin.
#pragma once
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/store/part.hpp"

namespace shelfstage::cli {

/// What a person typed to name a stock line:
///  - a line id as `stock list` shows it: `23`;
///  - KIND:VALUE, optionally @BIN: `R:4k7`, `R:4k7@A6`, `C:100n@B5`, `NPN:SQ-410@D10`.
/// The kind is required with a value so that a bare number is always an id.
struct PartSelector {
  std::string text;                ///< as typed, for messages
  std::optional<std::int64_t> id;  ///< set for the id form
  store::PartKind kind = store::PartKind::resistor;
  double value = 0.0;  ///< ohms or farads (R, C)
  std::string device;  ///< device name (transistors)
  std::optional<std::string> bin;
};

/// Parses a selector. Throws InputError naming the text.
PartSelector parse_selector(std::string_view text);

/// The one stock line a selector names. Values match within 1e-9 relative; bins and device
/// names ignore case. Throws InputError when nothing matches, or when several lines match
/// (the message lists their ids and bins so the person can pick one).
const store::Part& select_part(const PartSelector& selector, const std::vector<store::Part>& parts);

}  // namespace shelfstage::cli
