// The shelfstage program: the root command and the list of subcommands.
#include <iostream>

#include "commands.hpp"

int main(int argc, char** argv) {
  using namespace shelfstage::cli;
  Context ctx(std::cout, std::cerr, std::cin);
  CLI::App app{"", "shelfstage"};
  setup_root(app, ctx, "shelfstage " SHELFSTAGE_VERSION);
  setup_commands(app, ctx);
  return run_app(app, ctx, argc, argv);
}
