// `shelfstage check`: the database's own health check, for after a crash or a copy.
#include <fmt/format.h>

#include <memory>

#include "commands.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::cli {

namespace {

struct CheckOptions {};

std::size_t problem_count(const store::CheckReport& r) {
  return r.integrity.size() + r.structure.size() + r.foreign_keys.size() + r.ledger.size() + r.other.size();
}

void print_section(Context& ctx, std::string_view title, const std::vector<std::string>& problems,
                   std::string_view when_ok) {
  if (problems.empty()) {
    ctx.out << fmt::format("  {:<14} ok ({})\n", title, when_ok);
    return;
  }
  ctx.out << fmt::format("  {:<14} {} {}\n", title, problems.size(), problems.size() == 1 ? "problem" : "problems");
  for (const auto& p : problems) ctx.out << "    " << p << '\n';
}

void run_check(const CheckOptions& /*o*/, Context& ctx) {
  const auto db = ctx.open_database();
  const store::CheckReport report = db.check();
  const std::string path = db.path().string();
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1},
                     {"database", path},
                     {"schema_version", db.schema_version()},
                     {"ok", report.ok()},
                     {"integrity", report.integrity},
                     {"structure", report.structure},
                     {"foreign_keys", report.foreign_keys},
                     {"ledger", report.ledger},
                     {"other", report.other}});
  } else {
    ctx.out << fmt::format("Checked {} (schema version {}):\n", path, db.schema_version());
    print_section(ctx, "file integrity", report.integrity, "SQLite integrity_check");
    print_section(ctx, "schema", report.structure, "tables, indexes and triggers as shelfstage made them");
    print_section(ctx, "references", report.foreign_keys, "every reference points at an existing row");
    print_section(ctx, "ledger", report.ledger, "every count equals the sum of its ledger entries");
    print_section(ctx, "counts", report.other, "no negative counts, reservations within stock");
  }
  if (!report.ok()) {
    const auto n = problem_count(report);
    throw DatabaseError(fmt::format("check found {} {} in {}", n, n == 1 ? "problem" : "problems", path));
  }
}

}  // namespace

void setup_check(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<CheckOptions>();
  CLI::App* cmd = parent.add_subcommand("check", "Check the database file and the ledger for damage");
  cmd->footer(
      "Runs SQLite's integrity and foreign-key checks, compares the tables, indexes and triggers\n"
      "with the ones shelfstage makes, and confirms that each line's count equals the sum of its\n"
      "ledger entries. Changes nothing. Exit status 3 when anything is wrong: restore a backup\n"
      "(`stock export` makes one) or recount the lines it names. A database whose schema is\n"
      "damaged is opened read-only by every command until it is repaired or restored.");
  cmd->callback([o, &ctx] { run_check(*o, ctx); });
}

}  // namespace shelfstage::cli
