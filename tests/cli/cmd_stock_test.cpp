// Tests of `shelfstage stock` for op-amp lines: added, listed, exported and imported by
// package, and a line whose kind and device disagree refused with nothing written.
#include <doctest/doctest.h>

#include <algorithm>
#include <fstream>

#include "shelf_fixture.hpp"

using shelfstage::test::CliResult;
using shelfstage::test::DemoStock;
using shelfstage::test::TempDir;

namespace {

/// A new, empty database.
struct EmptyStock {
  TempDir dir;
  std::string db = (dir / "fresh.db").string();
  EmptyStock() { REQUIRE(run({"init"}).status == 0); }
  CliResult run(std::vector<std::string> args) const {
    args.insert(args.begin(), {"--db", db});
    return shelfstage::test::run_cli(std::move(args));
  }
};

/// The stock lines of `stock list --json` of one kind.
nlohmann::json lines_of(const DemoStock& shelf, const std::string& kind) {
  nlohmann::json out = nlohmann::json::array();
  const auto all = shelf.json({"stock", "list"});
  for (const auto& p : all.at("parts"))
    if (p.at("kind") == kind) out.push_back(p);
  return out;
}

}  // namespace

TEST_CASE("stock: OPAMP lines name an op-amp type and count packages") {
  const DemoStock shelf;
  // The demo shelf's three op-amp lines (data-demo/stock.csv).
  const auto demo = lines_of(shelf, "OPAMP");
  REQUIRE(demo.size() == 3);
  CHECK(demo[0].at("value") == "SA-210");
  CHECK(demo[0].at("qty") == 6);

  const auto added = shelf.run(
      {"stock", "add", "opamp", "sa-430", "2", "--bin", "E2", "--package", "DIP-14", "--note", "audio quads"});
  INFO(added.err);
  REQUIRE(added.status == 0);
  CHECK(added.out == "Added 2 to line 152: OPAMP SA-430 bin E2 (now 5 on hand).\n");
  const auto list = shelf.run({"stock", "list", "--kind", "OPAMP"});
  REQUIRE(list.status == 0);
  CHECK(list.out.starts_with("Op-amps, in packages (3 lines)\n"));
  CHECK(list.out.find("SA-430  OPAMP  E2     5") != std::string::npos);
  const auto adjusted = shelf.run({"stock", "adjust", "OPAMP:SA-R20@E3", "-1", "--reason", "used in a filter"});
  INFO(adjusted.err);
  CHECK(adjusted.status == 0);
  CHECK(lines_of(shelf, "OPAMP")[2].at("qty") == 3);

  // A transistor kind with an op-amp type, or OPAMP with a transistor type: refused.
  for (const auto& [kind, device, says] :
       {std::tuple{"NPN", "SA-210", "kind NPN does not match device 'SA-210' (OPAMP)"},
        std::tuple{"OPAMP", "SQ-410", "kind OPAMP does not match device 'SQ-410' (NPN)"},
        std::tuple{"OPAMP", "SA-999", "device 'SA-999' is not in the device list"},
        std::tuple{"OPAMP", "4k7", "device '4k7' is not in the device list"}}) {
    const auto r = shelf.run({"stock", "add", kind, device, "1"});
    CAPTURE(r.err);
    CHECK(r.status == 1);
    CHECK(r.err.starts_with("error: "));
    CHECK(r.err.find(says) != std::string::npos);
  }
  const auto tol = shelf.run({"stock", "add", "OPAMP", "SA-210", "1", "--tol", "5%"});
  CHECK(tol.status == 1);
  CHECK(tol.err == "error: --tol '5%': transistors and op-amps have no tolerance\n");
  CHECK(lines_of(shelf, "OPAMP").size() == 3);
  CHECK(lines_of(shelf, "NPN").size() == 2);
}

TEST_CASE("stock export and import: OPAMP lines round trip; a row of the wrong kind imports nothing") {
  const DemoStock shelf;
  const auto exported = shelf.run({"stock", "export"});
  REQUIRE(exported.status == 0);
  CHECK(exported.out.find("\nOPAMP,SA-430,3,,,,,DIP-14,E2,audio quads\n") != std::string::npos);

  const TempDir dir;
  const auto file = (dir / "stock.csv").string();
  std::ofstream(file) << exported.out;
  // Into a fresh database with the same device types: the same file comes out again.
  const EmptyStock fresh;
  REQUIRE(fresh.run({"devices", "import", std::string(SHELFSTAGE_SOURCE_DIR) + "/data-demo/devices.csv"}).status == 0);
  const auto imported = fresh.run({"stock", "import", file});
  INFO(imported.err);
  REQUIRE(imported.status == 0);
  CHECK(fresh.run({"stock", "export"}).out == exported.out);

  const auto bad = (dir / "bad.csv").string();
  std::ofstream(bad) << "kind,value,qty\nOPAMP,SA-210,2\nPNP,SA-R20,1\nOPAMP,SJ-101,1\n";
  const auto r = shelf.run({"stock", "import", bad});
  CHECK(r.status == 1);
  CHECK(r.err == "error: " + bad + ": 2 bad rows, nothing imported\n" + bad +
                     ":3: value 'SA-R20' is a device of kind OPAMP, not PNP\n" + bad +
                     ":4: value 'SJ-101' is a device of kind NJFET, not OPAMP\n");
  CHECK(lines_of(shelf, "OPAMP")[0].at("qty") == 6);  // the good row was not imported either
}
