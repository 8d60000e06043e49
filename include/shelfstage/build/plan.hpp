// The build plan of a kept design: which stock line (and bin) each piece of each role comes
// from for N copies, and what the shelf is short of. Plain data from plain part records: the
// pick list (report) formats it and the stock transactions (store::Planner, in the commands
// that reserve and build) take it.
//
// Designators. One piece per place on the board:
//  - a role filled by one part keeps its designator: R3, C1; the transistor is Q1, an
//    op-amp U1 (in a chain Q101, U201 ..., stages::chain_designator);
//  - a role filled by a series or parallel combination names its pieces with a letter in
//    recipe order: R4a, R4b (R4 is R4a and R4b joined);
//  - with more than one copy every designator takes the copy number after a dot: R3.1,
//    R3.2, R4a.2, Q1.2, U1.2. With one copy there is no suffix.
//
// Allocation. Each piece draws on the stock lines the design names for it (RolePart::lines,
// in bin order) and the transistor on every line holding its device type, in bin order:
// first the pieces the design's own reservation holds, then the available ones (on hand
// minus reserved); copy 1 is served first. Lines that are gone count as empty. What cannot
// be served is short; pieces of the same kind, value, tolerance, rating and dielectric are
// listed once with their total.
//
// Op-amps (counting rules of the bench, common practice: devices/record.hpp). A stock line
// of an op-amp type counts packages, and each op-amp place (U1 of each stage and copy) takes
// one amplifier, a channel, of a package. Every place of one type in the whole build is
// packed into its packages: copy by copy (copy 1's stages first, in stage order), each
// package filled channel A first before the next is taken, packages taken whole from the
// type's lines as a transistor's pieces are (held first, then available, in bin order). So
// ceil(places / channels) packages leave the shelf, not one per place, and only the last
// may have channels spare. An op-amp line's qty counts packages, its designators are the
// places its channels serve, and `packages` says which package and channel each place
// takes. An op-amp short item counts packages too (the places left without a channel,
// packed the same way): stock is bought in whole packages.
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

/// One op-amp package taken from a stock line, and the places its amplifiers serve.
struct Package {
  int number = 0;                   ///< 1, 2 ... among the packages of its type in the plan
  int channels = 1;                 ///< amplifiers in the package (1, 2 or 4)
  std::vector<std::string> places;  ///< the place each channel serves, channel A first
  bool from_reserved = false;       ///< a package the design's reservation holds
  /// Channels that serve no place.
  int spare() const { return channels - static_cast<int>(places.size()); }
};

/// The letter of a package's amplifier k (from 0): A, B, C, D, as the trade names the
/// channels of a dual or quad op-amp (A is the datasheet's amplifier 1).
char channel_letter(int k);

/// Pieces to take from one stock line: the piece as the line states it.
struct PickLine : Piece {
  std::string bin;           ///< the line's bin ("" when the stock does not say)
  std::int64_t part_id = 0;  ///< the stock line
  int qty = 0;               ///< pieces to take, all copies (an op-amp line: packages)
  int from_reserved = 0;     ///< of qty, pieces the design's reservation holds
  /// One per piece; an op-amp line: one per channel used, in package and channel order.
  std::vector<std::string> designators;
  int channels = 0;               ///< an op-amp line: amplifiers per package; 0 for any other
  std::vector<Package> packages;  ///< an op-amp line: each package taken (qty of them)
};

/// Pieces the shelf cannot supply: what to buy. The piece: its tolerance that of the stock
/// the design drew on (else the role's), its rating the W or V needed (0 unknown). Made by
/// short_item only.
struct ShortItem : Piece {
  int qty = 0;                           ///< pieces missing (an op-amp: packages)
  int needed = 0;                        ///< pieces needed in all (an op-amp: packages)
  std::vector<std::string> designators;  ///< the places left without a piece (or a channel)
  std::vector<std::string> roles;        ///< RD, CIN ... (a device: its designator, Q1, U101 ...)
  int channels = 0;                      ///< an op-amp: amplifiers per package; 0 for any other
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
  int pieces() const;  ///< pieces to take (lines only; an op-amp package is one piece)
};

/// The op-amp packages of one type in a plan, summed up for people.
struct PackageCount {
  std::string device;
  int channels = 1;        ///< amplifiers per package
  int packages = 0;        ///< packages taken from the shelf
  int used = 0;            ///< channels of those that serve a place
  int short_packages = 0;  ///< packages the shelf lacks
  int places_short = 0;    ///< places left without a channel
  /// Channels of the packages taken that serve no place.
  int spare() const { return packages * channels - used; }
};

/// One count per op-amp type in the plan (taken or short), in the order of the plan's lines,
/// then of its short items; empty for a design without op-amps.
std::vector<PackageCount> package_counts(const Plan& p);

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
/// short)", an op-amp in packages: "U1 SA-214 (1 package short)"; empty when nothing is.
std::string short_summary(const Plan& p);

/// A purchase (synth::smallest_purchase) as items to buy, with the designators they fill.
std::vector<ShortItem> purchase_items(const synth::Purchase& p);

}  // namespace shelfstage::build
