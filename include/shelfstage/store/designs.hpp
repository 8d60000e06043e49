// Designs kept in the stock database, so later commands (show, pick, build, report) can
// take a design by its id.
#pragma once
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/store/database.hpp"

namespace shelfstage::store {

/// A design as the database keeps it: the request and the candidate, as JSON text written
/// and read by the report layer (the store does not look inside).
struct SavedDesign {
  std::string id;
  std::string created;  ///< ISO 8601 UTC; kept from the first save
  std::string spec_json;
  std::string candidate_json;
};

/// Saves designs in one transaction. A design saved again (same id: same stage, device,
/// parts and copies) keeps its creation time and gets the new texts.
void save_designs(Database& db, const std::vector<SavedDesign>& designs);

/// Every kept design, in order of id.
std::vector<SavedDesign> all_designs(const Database& db);

/// A design by id. An unambiguous prefix of at least four characters is accepted too.
/// Unknown or ambiguous: InputError naming the id.
SavedDesign load_design(const Database& db, std::string_view id);

}  // namespace shelfstage::store
