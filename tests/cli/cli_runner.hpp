// Test helper: runs the shelfstage command line in-process, as main() does, on string streams.
#pragma once
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "commands.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::test {

struct CliResult {
  int status = -1;
  std::string out, err;
};

/// Runs `shelfstage ARGS` with `input` on standard input and `out` as standard output (the
/// result's `out` stays empty; see the overload below). Besides the real commands it has two
/// test-only ones: `test-infeasible` (throws InfeasibleError) and `test-bug` (throws
/// std::logic_error).
inline CliResult run_cli_to(std::ostream& out, std::vector<std::string> args, const std::string& input = "") {
  using namespace shelfstage::cli;
  std::ostringstream err;
  std::istringstream in(input);
  Context ctx(out, err, in);
  CLI::App app{"", "shelfstage"};
  setup_root(app, ctx, "shelfstage test");
  setup_commands(app, ctx);
  app.add_subcommand("test-infeasible")->callback([] { throw InfeasibleError("not enough 4.7k in stock"); });
  app.add_subcommand("test-bug")->callback([] { throw std::logic_error("index out of range"); });
  args.insert(args.begin(), "shelfstage");
  std::vector<const char*> argv;
  for (const auto& a : args) argv.push_back(a.c_str());
  CliResult r;
  r.status = run_app(app, ctx, static_cast<int>(argv.size()), argv.data());
  r.err = err.str();
  return r;
}

/// Runs `shelfstage ARGS` with `input` on standard input; standard output is kept in `out`.
inline CliResult run_cli(std::vector<std::string> args, const std::string& input = "") {
  std::ostringstream out;
  CliResult r = run_cli_to(out, std::move(args), input);
  r.out = out.str();
  return r;
}

}  // namespace shelfstage::test
