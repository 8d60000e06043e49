// The shopping list of a kept design (build/shop.hpp) for people and as JSON: what to buy for
// N copies, a smaller purchase for the same request, and purchases that make it more exact.
#pragma once
#include <string>

#include "shelfstage/build/shop.hpp"
#include "shelfstage/report/design_json.hpp"

namespace shelfstage::report {

/// {"schema":1,"design","copies","short":[short items],"smallest_purchase":{"design",
/// "pieces_to_buy","buy"}|null,"kept":{"error_worst","error_nominal","score"},
/// "improvements":[{"topology","device","error_worst","error_nominal","score",
/// "pieces_to_buy","buy","parts":[{"role","designator","value","recipe"}]}]}.
Json shop_json(const std::string& design_id, const build::Shopping& s);

/// The same for people: what to buy (or that nothing is short), the smaller purchase, the
/// kept worst-case gain error and the purchases that would most improve it.
std::string shop_text(const std::string& design_id, const build::Shopping& s);

}  // namespace shelfstage::report
