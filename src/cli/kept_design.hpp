// A design kept in the database, read back for the commands that act on it (show, pick,
// reserve, build, shop, report), and the planner that turns its build plan into a withdrawal.
#pragma once
#include <optional>
#include <string>
#include <string_view>

#include <CLI/CLI.hpp>

#include "shelfstage/build/plan.hpp"
#include "shelfstage/store/builds.hpp"
#include "shelfstage/store/designs.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::cli {

/// A kept design: the saved texts, the request and the candidate they hold.
struct KeptDesign {
  store::SavedDesign saved;
  synth::Spec spec;
  synth::Candidate candidate;  ///< figures not evaluated (synth::evaluate_candidate for those)
};

/// Reads a kept design by id or unique prefix (InputError when unknown, ambiguous, or when
/// its device, topology or measured piece is gone).
KeptDesign load_kept(const store::Database& db, std::string_view id);

/// The number of copies: the one asked for, else the design's own.
int copies_of(const KeptDesign& d, const std::optional<int>& asked);

/// Adds `--copies N` (1..10000) to a command.
void add_copies_option(CLI::App& cmd, std::optional<int>& copies);

/// A store::Planner that takes the pieces of the build plan for `copies` copies; when
/// anything is short its short_text reads "not enough stock for 2 copies of s1234abcd:
/// RD 10k 5% (1 short), ...".
store::Planner pick_planner(const synth::Candidate& c, int copies);

}  // namespace shelfstage::cli
