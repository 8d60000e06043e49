// The pick list of a kept design: which pieces to take from which bins for N copies, in the
// order a person walks the shelf, how combined values go together, which way electrolytics
// go in, and what the shelf is short of. Plain data, then JSON, CSV and text views of it.
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

#include "shelfstage/report/design_json.hpp"
#include "shelfstage/store/part.hpp"
#include "shelfstage/synth/design.hpp"
#include "shelfstage/synth/purchases.hpp"

namespace shelfstage::report {

/// Pieces to take from one stock line.
struct PickLine {
  std::string bin;                 ///< the line's bin ("" when the stock does not say)
  std::int64_t part_id = 0;        ///< the stock line
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;                ///< ohms or farads; 0 for a transistor
  std::string device;              ///< transistors: the device type
  std::optional<units::Tolerance> tol;  ///< as the stock line states it
  double rating = 0;               ///< watts (R) or volts (C) of the line; 0 unknown
  std::string dielectric;
  int qty = 0;                     ///< pieces to take, all copies
  int from_reserved = 0;           ///< of qty, pieces the design's reservation holds
  std::vector<std::string> designators;  ///< one per piece
};

/// Pieces the shelf cannot supply: what to buy.
struct ShortItem {
  store::PartKind kind = store::PartKind::resistor;
  double value = 0;                ///< ohms or farads; 0 for a transistor
  std::string device;              ///< transistors
  std::optional<units::Tolerance> tol;  ///< of the stock the design drew on, else the role's
  double rating = 0;               ///< W or V needed; 0 unknown
  std::string dielectric;
  int qty = 0;                     ///< pieces missing
  int needed = 0;                  ///< pieces needed in all
  std::vector<std::string> designators;  ///< the places left without a piece
  std::vector<std::string> roles;        ///< RD, CIN ...
};

/// A role filled by more than one piece: how they go together.
struct Assembly {
  std::string designator;          ///< R4
  std::string role;                ///< RE1
  synth::Join join = synth::Join::series;
  std::vector<double> values;      ///< each piece, ohms or farads
  std::vector<std::string> pieces; ///< R4a, R4b (without copy suffix)
  std::string text;                ///< "R4 (RE1): 470 + 4k75 in parallel (R4a, R4b)"
};

/// A polarised capacitor and which way it goes in.
struct Polarity {
  std::string designator;          ///< C2 (or C2a, C2b for a parallel pair: all the same way)
  std::string role;                ///< CE
  std::string plus_net, minus_net; ///< net names as the topology has them ("x", "0", "collector")
  std::string plus, minus;         ///< the same for people ("the RE1–RE2 junction", "ground")
  std::string text;                ///< "C2 (CE): + lead to the RE1–RE2 junction, - lead to ground"
};

/// The whole pick list.
struct PickList {
  std::string design_id;
  std::string topology;
  std::string device;
  std::optional<std::string> piece;  ///< a design for one measured piece: its label
  int copies = 1;
  std::vector<PickLine> lines;       ///< walking order: bins naturally sorted, then kind, value
  std::vector<Assembly> assemblies;
  std::vector<Polarity> polarities;
  std::vector<ShortItem> short_items;
  /// The supply as the design takes it, for people ("+9V rail, ground at the battery's -
  /// terminal"); set by whoever knows the request (report::rail_words). Empty: not said.
  std::string rail;

  bool complete() const { return short_items.empty(); }
  int pieces() const;                ///< pieces to take (lines only)
};

/// Makes the pick list for `copies` copies of a candidate from the stock as it is now.
/// `held`: pieces the design's own reservations hold, by stock line id (used first).
/// InputError when copies < 1.
PickList make_pick_list(const synth::Candidate& c, int copies, const std::vector<store::Part>& stock,
                        const std::map<std::int64_t, int>& held = {});

/// Natural order of bin names, the way a person walks a shelf: digit runs compare as numbers
/// ("A2" before "A10"), letters without regard to case; an empty bin comes last.
bool bin_less(std::string_view a, std::string_view b);

/// A net of a stage as a person reads it: "0" -> "ground", "x" -> "the RS1–RS2 junction"
/// (RE1–RE2 for a BJT; the source or emitter when RS1/RE1 is left out), "in" -> "the input
/// side (toward the signal source)", "out" -> "the output side (toward the load)", "drain"
/// -> "the drain of Q1", ...
/// In a chain's stage (its parts carry the stage number) the transistor is Q101, Q201 ...,
/// and "in"/"out" face the neighbouring stages (stage_count: stages in the chain).
std::string net_for_people(std::string_view net, const synth::Candidate& c, std::size_t stage_count = 1);

/// The value of a pick or short item as bench notes write it: "4k7", "100n", or the device.
std::string item_value_text(store::PartKind kind, double value, std::string_view device);

/// {"schema":1,"design","copies","topology","device","lines":[{"bin","kind","value","qty",
/// "designators"} + part_id, value_text, tol, rating, dielectric, from_reserved],"short":[{
/// "kind","value","qty","designators"} + value_text, tol, rating, dielectric, needed, roles],
/// "assembly":[...],"polarity":[...]}. value: ohms or farads for R and C, the device name
/// for transistors.
Json pick_json(const PickList& p);

/// One short item as pick_json writes it under "short".
Json short_item_json(const ShortItem& s);

/// CSV with a header: status (pick or short), bin, kind, value (notation), qty,
/// designators (space separated), tol, rating, dielectric, part_id.
std::string pick_csv(const PickList& p);

/// The pick list for people: a heading, the table grouped by bin, then assembly, polarity,
/// and what is short.
std::string pick_text(const PickList& p);

/// What is short, on one line for an error message: "R4b 4k75 1% (1 short), Q1 SQ-420 (2
/// short)"; empty when nothing is.
std::string short_summary(const PickList& p);

/// The shopping list for people: one line per item with quantity, value, tolerance, rating,
/// dielectric and where it goes.
std::string shopping_text(const std::vector<ShortItem>& items);

/// A purchase (synth::smallest_purchase) as items to buy, with the designators they fill.
std::vector<ShortItem> purchase_items(const synth::Purchase& p);

}  // namespace shelfstage::report
