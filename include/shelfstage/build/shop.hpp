// What to buy for N copies of a kept design: the pieces its build plan is short of, a
// smaller purchase for the same request when another design buys fewer pieces, and the
// purchases that would most improve its worst-case gain error.
#pragma once
#include <cstddef>
#include <cstdint>
#include <map>
#include <optional>
#include <vector>

#include "shelfstage/build/plan.hpp"
#include "shelfstage/synth/design.hpp"
#include "shelfstage/synth/purchases.hpp"

namespace shelfstage::build {

/// A redesign must beat the kept design's worst-case gain error by this much (half a
/// percentage point) to be worth a purchase.
inline constexpr double kShopImprovement = 0.005;
/// How many purchase options to list.
inline constexpr std::size_t kShopOptions = 3;

/// A redesign with purchasable values, and what to buy for it.
struct ShopOption {
  synth::Candidate candidate;
  std::vector<ShortItem> buy;
  int pieces() const;  ///< pieces to buy in all
};

/// The shopping list of a kept design.
struct Shopping {
  Plan plan;                               ///< the kept design on the shelf as it is: its short items are what to buy
  synth::Candidate kept;                   ///< the kept design, evaluated for the copies
  int short_pieces = 0;                    ///< pieces the plan is short of
  std::optional<synth::Purchase> smaller;  ///< a purchase of fewer pieces for the same request
  std::vector<ShopOption> options;         ///< best first, at most kShopOptions
};

/// What a plan on the purchase-augmented stock says to buy: pieces from purchasable lines
/// (synth::is_purchase_line), and whatever is still short.
std::vector<ShortItem> purchases_of(const Plan& plan);

/// The options no other beats on both counts (fewer or as many pieces to buy and a smaller
/// or equal worst-case error), most exact first, at most `keep` of them.
std::vector<ShopOption> best_options(const std::vector<ShopOption>& options, std::size_t keep = kShopOptions);

/// The shopping list for `copies` copies of a kept design (`spec`: its request) on the
/// inventory's stock; `held`: the pieces the design's reservations hold. The redesigns are
/// those of synth::design_with_purchases that beat the kept worst-case gain error by
/// kShopImprovement and need a purchase; the smaller purchase is synth::smallest_purchase,
/// offered when the kept design is short and it buys fewer pieces.
Shopping plan_shopping(const synth::Candidate& kept, const synth::Spec& spec, int copies,
                       const synth::Inventory& inventory, const std::map<std::int64_t, int>& held = {});

}  // namespace shelfstage::build
