// How builds look to a person (tables) and to a script (JSON, schema 1).
#pragma once
#include <nlohmann/json.hpp>

#include <string>
#include <vector>

#include "shelfstage/store/builds.hpp"

namespace shelfstage::cli {

/// {"id","design","copies","state","when"} and the extensions undone (time or null), pieces,
/// lines [{"part_id","part","qty","designators":[...]}].
nlohmann::ordered_json build_json(const store::BuildRecord& b);

/// The lines of one build: stock line, part, qty, designators.
std::string build_lines_table(const store::BuildRecord& b);

/// Every build on one line each: id, design, copies, state, when, pieces.
std::string builds_table(const std::vector<store::BuildRecord>& builds);

}  // namespace shelfstage::cli
