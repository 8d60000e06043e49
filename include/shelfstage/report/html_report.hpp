// The design report: one self-contained HTML file (inline SVG and CSS; no scripts, fonts,
// images or links to fetch) with the schematic, the frequency response over the device corners,
// the bias spread, the output swing, the parts with their rating checks, the pick list, the
// figures and the cautions. It opens offline and prints cleanly.
#pragma once
#include <optional>
#include <string>
#include <vector>

#include "shelfstage/draw/schematic.hpp"
#include "shelfstage/report/picklist.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::report {

/// What the report is made from.
struct ReportInput {
  std::string id;         ///< the kept design's id
  std::string created;    ///< when it was kept (as the store gives it)
  std::string generator;  ///< "shelfstage 0.1.0"
  synth::Spec spec;
  synth::Candidate candidate;    ///< evaluated (synth::evaluate_candidate)
  std::optional<PickList> pick;  ///< empty: the report lists the parts with their stock lines only
  int bias_samples = 300;        ///< Monte Carlo builds in the bias plot (0 .. 100000)
};

/// The notes the schematic of a candidate carries: each part's value in IEC 60062 code (the
/// notation bench notes use), its recipe when combined, the electrolytics' + lead, the device
/// type, and what the test bench's parts stand for.
draw::SchematicOptions schematic_notes(const synth::Candidate& c);

/// The report as one HTML document (also well-formed XML, so every inline SVG parses as
/// XML). Throws InputError when the candidate has no topology, InfeasibleError when its
/// operating point cannot be found.
std::string html_report(const ReportInput& in);

}  // namespace shelfstage::report
