// `shelfstage reserve ID`: hold the pieces of a kept design for a planned build.
#include <fmt/format.h>

#include <memory>

#include "commands.hpp"
#include "kept_design.hpp"
#include "shelfstage/error.hpp"
#include "stock_view.hpp"

namespace shelfstage::cli {

namespace {

struct ReserveOptions {
  std::string id;
  std::optional<int> copies;
};

void run_reserve(const ReserveOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const KeptDesign d = load_kept(db, o.id);
  const int copies = copies_of(d, o.copies);
  const int released = store::reserve_design(db, d.saved.id, pick_planner(d.candidate, copies));
  const auto held = store::reservations(db, d.saved.id);
  std::int64_t pieces = 0;
  for (const auto& r : held) pieces += r.qty;
  if (ctx.global.json) {
    nlohmann::ordered_json rows = nlohmann::ordered_json::array();
    for (const auto& r : held) {
      const auto p = db.part(r.part_id);
      rows.push_back({{"id", r.id},
                      {"part_id", r.part_id},
                      {"bin", p ? p->bin : std::string()},
                      {"part", p ? describe_part(*p) : std::string()},
                      {"qty", r.qty}});
    }
    print_json(ctx, {{"schema", 1},
                     {"design", d.saved.id},
                     {"copies", copies},
                     {"pieces", pieces},
                     {"released", released},
                     {"reservations", rows}});
    return;
  }
  ctx.out << fmt::format("Reserved {} pieces on {} stock lines for {} cop{} of {}.\n", pieces, held.size(), copies,
                         copies == 1 ? "y" : "ies", d.saved.id);
  if (released > 0) ctx.out << fmt::format("This replaces the {} pieces held for it before.\n", released);
  ctx.out << fmt::format("`shelfstage build {}` uses them; `shelfstage release {}` lets them go.\n", d.saved.id,
                         d.saved.id);
}

}  // namespace

void setup_reserve(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<ReserveOptions>();
  CLI::App* cmd = parent.add_subcommand("reserve", "Hold the pieces of a kept design for a planned build");
  cmd->add_option("ID", o->id, "Design id from `shelfstage design` (or its first four or more characters)")
      ->type_name("")
      ->required();
  add_copies_option(*cmd, o->copies);
  cmd->footer(
      "Held pieces stay on the shelf but count as taken for every other design and build.\n"
      "Reserving a design again replaces its earlier hold. When anything is short nothing\n"
      "is held (exit 2) and the message names what is missing.");
  cmd->callback([o, &ctx] { run_reserve(*o, ctx); });
}

}  // namespace shelfstage::cli
