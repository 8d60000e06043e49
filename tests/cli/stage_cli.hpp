// Test helper for `show` and `analyze`: runs the command line in-process, as main() does,
// with the commands those tests need (demo to make a shelf, stock and devices to add to it,
// design to keep a design).
#pragma once
#include <sstream>
#include <string>
#include <vector>

#include "commands.hpp"

namespace shelfstage::test {

struct StageCliResult {
  int status = -1;
  std::string out, err;
};

/// Runs `shelfstage ARGS` on string streams with empty standard input.
inline StageCliResult run_stage_cli(std::vector<std::string> args) {
  using namespace shelfstage::cli;
  std::ostringstream out, err;
  std::istringstream in;
  Context ctx(out, err, in);
  CLI::App app{"", "shelfstage"};
  setup_root(app, ctx, "shelfstage test");
  setup_demo(app, ctx);
  setup_stock(app, ctx);
  setup_devices(app, ctx);
  setup_design(app, ctx);
  setup_show(app, ctx);
  setup_analyze(app, ctx);
  args.insert(args.begin(), "shelfstage");
  std::vector<const char*> argv;
  for (const auto& a : args) argv.push_back(a.c_str());
  StageCliResult r;
  r.status = run_app(app, ctx, static_cast<int>(argv.size()), argv.data());
  r.out = out.str();
  r.err = err.str();
  return r;
}

}  // namespace shelfstage::test
