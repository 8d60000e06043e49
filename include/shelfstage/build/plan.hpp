// The build plan of a kept design: which stock line (and bin) each piece of each role comes
// from for N copies, and what the shelf is short of. Plain data from plain part records: the
// pick list (report) formats it and the stock transactions (store::Planner, in the commands
// that reserve and build) take it.
//
// Designators. One piece per place on the board:
//  - a role filled by one part keeps its designator: R3, C1; the transistor is Q1;
//  - a role filled by a series or parallel combination names its pieces with a letter in
//    recipe order: R4a, R4b (R4 is R4a and R4b joined);
//  - with more than one copy every designator takes the copy number after a dot: R3.1,
//    R3.2, R4a.2, Q1.2. With one copy there is no suffix.
//
// Allocation. Each piece draws on the stock lines the design names for it (RolePart::lines,
// in bin order) and the transistor on every line holding its device type, in bin order:
// first the pieces the design's own reservation holds, then the available ones (on hand
// minus reserved); copy 1 is served first. Lines that are gone count as empty. What cannot
// be served is short; pieces of the same kind, value, tolerance, rating and dielectric are
// listed once with their total.
#pragma once
#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/store/part.hpp"
#include "shelfstage/synth/design.hpp"
#include "shelfstage/synth/purchases.hpp"

namespace shelfstage::build {

/// What a piece is, as a stock line or an order states it.
struct Piece {
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;    ///< ohms or farads; 0 for a transistor
  std::string device;  ///< transistors: the device type
  std::optional<units::Tolerance> tol;
  double rating = 0;  ///< watts (R) or volts (C); 0 unknown
  std::string dielectric;
};

/// Pieces to take from one stock line: the piece as the line states it.
struct PickLine : Piece {
  std::string bin;                       ///< the line's bin ("" when the stock does not say)
  std::int64_t part_id = 0;              ///< the stock line
  int qty = 0;                           ///< pieces to take, all copies
  int from_reserved = 0;                 ///< of qty, pieces the design's reservation holds
  std::vector<std::string> designators;  ///< one per piece
};

/// Pieces the shelf cannot supply: what to buy. The piece: its tolerance that of the stock
/// the design drew on (else the role's), its rating the W or V needed (0 unknown). Made by
/// short_item only.
struct ShortItem : Piece {
  int qty = 0;                           ///< pieces missing
  int needed = 0;                        ///< pieces needed in all
  std::vector<std::string> designators;  ///< the places left without a piece
  std::vector<std::string> roles;        ///< RD, CIN ...
};

/// A short item: `qty` pieces of `what` missing out of `needed`, for the places and roles
/// given. A transistor carries no tolerance.
ShortItem short_item(const Piece& what, int qty, int needed, std::vector<std::string> designators,
                     std::vector<std::string> roles = {});

/// The plan for `copies` copies of a design.
struct Plan {
  std::string design_id;
  std::string topology;
  std::string device;
  std::string device2;               ///< a feedback pair's second transistor type (empty: none)
  std::optional<std::string> piece;  ///< a design for one measured piece: its label
  int copies = 1;
  std::vector<PickLine> lines;  ///< walking order: bins naturally sorted, then kind, value
  std::vector<ShortItem> short_items;

  bool complete() const { return short_items.empty(); }
  int pieces() const;  ///< pieces to take (lines only)
};

/// Plans `copies` copies of a candidate from the stock as it is now.
/// `held`: pieces the design's own reservations hold, by stock line id (used first).
/// InputError when copies < 1 or the candidate has no stage topology.
Plan plan_build(const synth::Candidate& c, int copies, const std::vector<store::Part>& stock,
                const std::map<std::int64_t, int>& held = {});

/// The designator of one piece: "R4" (one piece, one copy), "R4a" (the first of a
/// combination), "R4.2" (copy 2), "R4a.2".
std::string designator(std::string_view base, int piece, int piece_count, int copy, int copies);

/// Natural order of bin names, the way a person walks a shelf: digit runs compare as numbers
/// ("A2" before "A10"), letters without regard to case; an empty bin comes last.
bool bin_less(std::string_view a, std::string_view b);

/// The value of a pick or short item as bench notes write it: "4k7", "100n", or the device.
std::string item_value_text(store::PartKind kind, double value, std::string_view device);

/// What is short, on one line for an error message: "R4b 4k75 1% (1 short), Q1 SQ-420 (2
/// short)"; empty when nothing is.
std::string short_summary(const Plan& p);

/// A purchase (synth::smallest_purchase) as items to buy, with the designators they fill.
std::vector<ShortItem> purchase_items(const synth::Purchase& p);

}  // namespace shelfstage::build
