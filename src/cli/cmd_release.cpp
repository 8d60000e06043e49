// `shelfstage release ID`: let go of the pieces held for a kept design.
#include <fmt/format.h>

#include <memory>

#include "commands.hpp"
#include "shelfstage/store/builds.hpp"
#include "shelfstage/store/designs.hpp"

namespace shelfstage::cli {

namespace {

struct ReleaseOptions {
  std::string id;
};

void run_release(const ReleaseOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  const auto saved = store::load_design(db, o.id);
  const int released = store::release_design(db, saved.id);
  if (ctx.global.json) {
    print_json(ctx, {{"schema", 1}, {"design", saved.id}, {"released", released}});
    return;
  }
  if (released == 0)
    ctx.out << fmt::format("Nothing was held for {}.\n", saved.id);
  else
    ctx.out << fmt::format("Released {} pieces held for {}.\n", released, saved.id);
}

}  // namespace

void setup_release(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<ReleaseOptions>();
  CLI::App* cmd = parent.add_subcommand("release", "Let go of every piece held for a kept design (`reserve`)");
  cmd->add_option("ID", o->id, "Design id (or its first four or more characters)")->type_name("")->required();
  cmd->callback([o, &ctx] { run_release(*o, ctx); });
}

}  // namespace shelfstage::cli
