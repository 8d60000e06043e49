// Designs that would need parts one could buy: the search run on the shelf plus purchasable
// values, so `shop` can say which purchases would most improve a kept design.
#pragma once
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "shelfstage/synth/design.hpp"

namespace shelfstage::synth {

/// Stock lines one could order, as the synthesizer's purchase shelf offers them
/// (Shelf::Options::add_purchases: E24 resistors 5 % 0.25 W from 10 ohm to 10 M, E6 film
/// capacitors 1n..1u at 63 V, E6 electrolytics 1u..1000u at `capacitor_volts`). Each is a
/// line with a negative id (is_purchase_line), bin kPurchaseBin, and plenty on hand.
std::vector<store::Part> purchasable_parts(double capacitor_volts);

/// The voltage rating of the capacitors one would buy for a spec: twice the highest
/// supply, at least 50 V.
double purchase_volts(const Spec& spec);

/// The bin of purchasable lines; it sorts after every ordinary bin name.
inline constexpr const char* kPurchaseBin = "~to buy";

/// A stock line that is not on the shelf but could be bought (purchasable_parts).
inline bool is_purchase_line(std::int64_t part_id) { return part_id < 0; }

/// One line of a purchase: a value to buy, how many, and where it goes.
struct PurchaseLine {
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;
  units::Tolerance tol;
  double rating = 0;  ///< watts (R) or volts (C); 0 when the stock line does not say
  std::string dielectric;
  int qty = 0;                     ///< pieces to buy, for every copy together
  int held = 0;                    ///< pieces of this very line the shelf holds (> 0: a top-up)
  std::vector<std::string> roles;  ///< the roles it fills ("RG", "R1")
};

/// The smallest purchase that makes a request feasible with what is already in stock.
struct Purchase {
  Candidate design;               ///< the design it makes possible (finished, no yield)
  std::vector<PurchaseLine> buy;  ///< by kind, then value
  int pieces = 0;                 ///< pieces to buy in all
};

/// The smallest purchase that lets the request be built `spec.copies` times: fewest pieces
/// to buy, then fewest distinct values, then the best design by score. The search runs on
/// the stock plus purchasable values (E24 resistors, E6 capacitors, see purchasable_parts)
/// where every stocked line may also be topped up with more of the same; single stages only.
/// nullopt when no purchase of passives helps (a transistor, the supply or the request binds).
std::optional<Purchase> smallest_purchase(const Spec& spec, const Inventory& inventory);

/// Runs synth::design for the spec on the inventory's stock plus purchasable_parts (rated
/// for twice the highest supply, at least 50 V), without Monte Carlo. Every RolePart lists
/// its shelf lines before purchasable ones, so pieces the shelf holds are used first.
/// Candidate::purchases counts the pieces per copy whose value the shelf does not hold at
/// all (a value it holds too few of is found by allocating the pieces, e.g. a pick list).
/// `top` candidates at most, best score first.
DesignResult design_with_purchases(const Spec& spec, const Inventory& inventory, int top = 20);

}  // namespace shelfstage::synth
