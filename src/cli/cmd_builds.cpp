// `shelfstage builds list|undo`: the builds made so far, and undoing one.
#include <fmt/format.h>

#include <cctype>
#include <memory>

#include "builds_view.hpp"
#include "commands.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::cli {

namespace {

struct BuildsUndoOptions {
  std::string build;
};

/// "7" or "#7": a build number as `builds list` shows it.
std::int64_t parse_build_id(const std::string& text) {
  std::string_view s = text;
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  if (!s.empty() && s.front() == '#') s.remove_prefix(1);
  bool ok = !s.empty() && s.size() <= 15;
  for (const char ch : s) ok = ok && std::isdigit(static_cast<unsigned char>(ch));
  if (!ok)
    throw InputError(fmt::format("build '{}' is not a build number (see `shelfstage builds list`)", units::clip(text)));
  return std::stoll(std::string(s));
}

void run_builds_list(Context& ctx) {
  auto db = ctx.open_database();
  const auto all = store::builds(db);
  if (ctx.global.json) {
    nlohmann::ordered_json rows = nlohmann::ordered_json::array();
    for (const auto& b : all) rows.push_back(build_json(b));
    print_json(ctx, {{"schema", 1}, {"builds", rows}});
    return;
  }
  ctx.out << builds_table(all);
}

void run_builds_undo(const BuildsUndoOptions& o, Context& ctx) {
  const std::int64_t id = parse_build_id(o.build);
  auto db = ctx.open_database();
  store::undo_build(db, id);
  const auto b = store::find_build(db, id);
  if (!b) throw DatabaseError(fmt::format("build {} vanished after it was undone", id));
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"build", build_json(*b)}});
    return;
  }
  ctx.out << fmt::format("Undid build {} of {}: {} pieces back on {} stock lines (ledger \"undo build {}\").\n", b->id,
                         b->design_id, b->pieces(), b->lines.size(), b->id);
}

}  // namespace

void setup_builds(CLI::App& parent, Context& ctx) {
  CLI::App* builds = parent.add_subcommand("builds", "The builds made so far, and undoing one");
  builds->require_subcommand(1);
  CLI::App* list = builds->add_subcommand("list", "Every build: design, copies, state (built or undone), when");
  list->callback([&ctx] { run_builds_list(ctx); });
  auto o = std::make_shared<BuildsUndoOptions>();
  CLI::App* undo = builds->add_subcommand("undo", "Put every piece of a build back where it came from");
  undo->add_option("BUILD", o->build, "Build number from `shelfstage builds list`")->type_name("")->required();
  undo->footer(
      "The pieces go back to the same stock lines and bins, each with a ledger entry \"undo\n"
      "build N\"; the build stays listed as undone. A reservation the build used is not held\n"
      "again. An undone build cannot be undone twice.");
  undo->callback([o, &ctx] { run_builds_undo(*o, ctx); });
}

}  // namespace shelfstage::cli
