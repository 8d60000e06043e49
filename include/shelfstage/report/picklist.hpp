// The pick list of a kept design: the build plan (build/plan.hpp: which pieces to take from
// which bins for N copies, in the order a person walks the shelf, and what the shelf is short
// of) with the notes for people: how combined values go together and which way electrolytics
// go in. Then JSON, CSV and text views of it.
#pragma once
#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/build/plan.hpp"
#include "shelfstage/report/design_json.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

/// A role filled by more than one piece: how they go together.
struct Assembly {
  std::string designator;  ///< R4
  std::string role;        ///< RE1
  synth::Join join = synth::Join::series;
  std::vector<double> values;       ///< each piece, ohms or farads
  std::vector<std::string> pieces;  ///< R4a, R4b (without copy suffix)
  std::string text;                 ///< "R4 (RE1): 470 + 4k75 in parallel (R4a, R4b)"
};

/// A polarised capacitor and which way it goes in.
struct Polarity {
  std::string designator;           ///< C2 (or C2a, C2b for a parallel pair: all the same way)
  std::string role;                 ///< CE
  std::string plus_net, minus_net;  ///< net names as the topology has them ("x", "0", "collector")
  std::string plus, minus;          ///< the same for people ("the RE1–RE2 junction", "ground")
  std::string text;                 ///< "C2 (CE): + lead to the RE1–RE2 junction, - lead to ground"
};

/// The whole pick list: the plan (lines in walking order, short items) and the notes.
struct PickList : build::Plan {
  std::vector<Assembly> assemblies;
  std::vector<Polarity> polarities;
  /// The supply as the design takes it, for people ("+9V rail, ground at the battery's -
  /// terminal"); set by whoever knows the request (report::rail_words). Empty: not said.
  std::string rail;
};

/// Makes the pick list for `copies` copies of a candidate from the stock as it is now
/// (build::plan_build, then the notes). `held`: pieces the design's own reservations hold,
/// by stock line id (used first). InputError when copies < 1.
PickList make_pick_list(const synth::Candidate& c, int copies, const std::vector<store::Part>& stock,
                        const std::map<std::int64_t, int>& held = {});

/// A net of a stage as a person reads it: "0" -> "ground", "x" -> "the RS1–RS2 junction"
/// (RE1–RE2 for a BJT; the source or emitter when RS1/RE1 is left out), "in" -> "the input
/// side (toward the signal source)", "out" -> "the output side (toward the load)", "drain"
/// -> "the drain of Q1", ...
/// In a chain's stage (its parts carry the stage number) the transistor is Q101, Q201 ...,
/// and "in"/"out" face the neighbouring stages (stage_count: stages in the chain).
std::string net_for_people(std::string_view net, const synth::Candidate& c, std::size_t stage_count = 1);

/// {"schema":1,"design","copies","topology","device","lines":[{"bin","kind","value","qty",
/// "designators"} + part_id, value_text, tol, rating, dielectric, from_reserved],"short":[{
/// "kind","value","qty","designators"} + value_text, tol, rating, dielectric, needed, roles],
/// "assembly":[...],"polarity":[...]}. value: ohms or farads for R and C, the device name
/// for transistors and op-amps. An op-amp line adds "channels" (per package; its qty counts
/// packages) and "packages" [{"number","channels":[{"channel","designator"}],"spare",
/// "from_reserved"}], an op-amp short item "channels", and a design with op-amps "opamps"
/// [{"device","channels","packages","channels_used","channels_spare","packages_short"}].
Json pick_json(const PickList& p);

/// One short item as pick_json writes it under "short".
Json short_item_json(const build::ShortItem& s);

/// CSV with a header: status (pick or short), bin, kind, value (notation), qty,
/// designators (space separated), tol, rating, dielectric, part_id.
std::string pick_csv(const PickList& p);

/// The pick list for people: a heading, the table grouped by bin, then assembly, polarity,
/// and what is short.
std::string pick_text(const PickList& p);

/// The op-amp packages of a plan for people: per type one line ("SA-414, quad: 1 package, 3
/// of its 4 channels used, 1 spare."), then for a dual or quad one line per package, which
/// place each channel serves ("  package 1 (bin D3): U1.1 on A, U1.2 on B, U1.3 on C; D
/// spare"). Empty for a design without op-amps.
std::vector<std::string> package_notes(const build::Plan& p);

/// The shopping list for people: one line per item with quantity, value, tolerance, rating,
/// dielectric and where it goes.
std::string shopping_text(const std::vector<build::ShortItem>& items);

}  // namespace shelfstage::report
