// The shelfstage program: the root command and the list of subcommands.
#include <iostream>

#include "commands.hpp"

int main(int argc, char** argv) {
  using namespace shelfstage::cli;
  Context ctx(std::cout, std::cerr, std::cin);
  CLI::App app{"", "shelfstage"};
  setup_root(app, ctx, "shelfstage " SHELFSTAGE_VERSION);
  // One line per command; each lives in src/cli/cmd_<name>.cpp.
  setup_init(app, ctx);
  setup_stock(app, ctx);
  setup_devices(app, ctx);
  setup_check(app, ctx);
  setup_demo(app, ctx);
  setup_design(app, ctx);
  setup_show(app, ctx);
  setup_analyze(app, ctx);
  setup_pick(app, ctx);
  setup_reserve(app, ctx);
  setup_release(app, ctx);
  setup_build(app, ctx);
  setup_builds(app, ctx);
  setup_ledger(app, ctx);
  setup_shop(app, ctx);
  setup_report(app, ctx);
  return run_app(app, ctx, argc, argv);
}
