// Test fixtures: a database holding the demo shelf (data-demo/), and the same with one kept
// design made from it, for the commands that act on kept designs.
#pragma once
#include <doctest/doctest.h>

#include <nlohmann/json.hpp>

#include <algorithm>
#include <string>

#include "cli_runner.hpp"
#include "temp_dir.hpp"

namespace shelfstage::test {

/// The request the fixture designs for (the demo's): a gain of ten into 10k from 12 V, from the
/// demo's transistor types (its op-amps would take it; the kept-design commands' tests read a
/// transistor design's Q1, and tests/cli/examples/opamp_show.cmd the op-amp's).
inline const std::vector<std::string> kDemoRequest{
    "design",     "--gain",   "10",     "--load",   "10k",     "--supply", "12",       "--zin",    "100k",
    "--source-z", "1k",       "--band", "20..20k",  "--swing", "2",        "--device", "SJ-101",   "--device",
    "SJ-202",     "--device", "SJ-P31", "--device", "SQ-410",  "--device", "SQ-420",   "--device", "SQ-510"};

/// The command exited 1 with one line `error: ...` that contains `says`, and printed nothing
/// else.
inline void check_refused(const CliResult& r, const std::string& says) {
  CAPTURE(r.err);
  CHECK(r.status == 1);
  CHECK(r.out.empty());
  CHECK(r.err.starts_with("error: "));
  CHECK(r.err.find(says) != std::string::npos);
  CHECK(std::count(r.err.begin(), r.err.end(), '\n') == 1);
}

/// A database holding the demo shelf's device types and stock (no design yet).
struct DemoStock {
  TempDir dir;
  std::string db = (dir / "stock.db").string();

  DemoStock() {
    const std::string src = SHELFSTAGE_SOURCE_DIR;
    REQUIRE(run({"init"}).status == 0);
    REQUIRE(run({"devices", "import", src + "/data-demo/devices.csv"}).status == 0);
    REQUIRE(run({"stock", "import", src + "/data-demo/stock.csv"}).status == 0);
  }

  /// `shelfstage --db DB ARGS...` in-process.
  CliResult run(std::vector<std::string> args, const std::string& input = "") const {
    args.insert(args.begin(), {"--db", db});
    return run_cli(std::move(args), input);
  }
  /// The same with --json, parsed (REQUIREs exit 0).
  nlohmann::json json(std::vector<std::string> args) const {
    args.push_back("--json");
    const auto r = run(std::move(args));
    INFO(r.err);
    REQUIRE(r.status == 0);
    return nlohmann::json::parse(r.out);
  }
};

/// The demo stock and the best design for kDemoRequest, kept.
struct DemoShelf : DemoStock {
  std::string design;  ///< id of the best candidate, kept in the database

  explicit DemoShelf(int copies = 1) {
    auto args = kDemoRequest;
    args.insert(args.end(), {"--copies", std::to_string(copies), "--top", "3", "--samples", "50", "--json"});
    const auto r = run(args);
    REQUIRE(r.status == 0);
    design = nlohmann::json::parse(r.out).at("candidates").at(0).at("id").get<std::string>();
  }
};

}  // namespace shelfstage::test
