// The shelfstage program: the root command and its subcommands (setup_commands, app.cpp), on
// checked standard streams.
#include <csignal>
#include <iostream>
#include <ostream>

#include "commands.hpp"
#include "output.hpp"

int main(int argc, char** argv) {
  using namespace shelfstage::cli;
  // Before anything opens a file: a closed standard stream must not lend its number to it.
  hold_standard_descriptors();
  // A reader that goes away makes the write fail with EPIPE, which run_app reports, instead of
  // killing the program (perhaps after it changed the database) without a word.
  std::signal(SIGPIPE, SIG_IGN);
  FdOutput out_buffer(1);
  std::ostream out(&out_buffer);
  Context ctx(out, std::cerr, std::cin);
  CLI::App app{"", "shelfstage"};
  setup_root(app, ctx, "shelfstage " SHELFSTAGE_VERSION);
  setup_commands(app, ctx);
  return run_app(app, ctx, argc, argv);
}
