// Kept designs read back for show, pick, reserve, build, shop and report; the build plan as
// a planner.
#include "kept_design.hpp"

#include <fmt/format.h>

#include "shelfstage/error.hpp"
#include "shelfstage/report/design_json.hpp"

namespace shelfstage::cli {

KeptDesign load_kept(const store::Database& db, std::string_view id) {
  KeptDesign d;
  d.saved = store::load_design(db, id);
  nlohmann::json spec, cand;
  try {
    spec = nlohmann::json::parse(d.saved.spec_json);
    cand = nlohmann::json::parse(d.saved.candidate_json);
  } catch (const nlohmann::json::exception& e) {
    throw DatabaseError(fmt::format("design '{}': the kept text is not JSON ({})", d.saved.id, e.what()));
  }
  d.spec = report::spec_from_json(spec);
  d.candidate = report::candidate_from_json(cand, db.device_records(), db.pieces());
  d.candidate.id = d.saved.id;
  return d;
}

int copies_of(const KeptDesign& d, const std::optional<int>& asked) {
  const int n = asked.value_or(d.spec.copies);
  if (n < 1) throw InputError(fmt::format("--copies {} must be at least 1", n));
  return n;
}

void add_copies_option(CLI::App& cmd, std::optional<int>& copies) {
  cmd.add_option("--copies", copies, "How many copies (default: the copies the design was made for)")
      ->type_name("N")
      ->check(CLI::Range(1, 10000));
}

store::Planner pick_planner(const synth::Candidate& c, int copies) {
  return [c, copies](const std::vector<store::Part>& stock, const store::Held& held) {
    const build::Plan pick = build::plan_build(c, copies, stock, held);
    store::WithdrawalPlan plan;
    if (!pick.complete()) {
      plan.short_text = fmt::format("not enough stock for {} cop{} of {}: {}", copies, copies == 1 ? "y" : "ies", c.id,
                                    build::short_summary(pick));
      return plan;
    }
    for (const auto& l : pick.lines)
      plan.take.push_back({l.part_id, l.qty, fmt::format("{}", fmt::join(l.designators, ","))});
    return plan;
  };
}

}  // namespace shelfstage::cli
