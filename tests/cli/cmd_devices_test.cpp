// Tests of `shelfstage devices add`, `list` and `import` for op-amp types: the options and
// columns of docs/interface.md, the JSON keys, and bad input refused with nothing written.
#include <doctest/doctest.h>

#include <algorithm>
#include <fstream>

#include "shelf_fixture.hpp"

using shelfstage::test::check_refused;
using shelfstage::test::DemoStock;
using shelfstage::test::TempDir;

namespace {

// An invented dual single-supply type: figures of the usual order for such a part, not any
// one datasheet's.
const std::vector<std::string> kOpamp{
    "devices", "add",           "SA-X2", "--kind",         "OPAMP",   "--channels", "2",     "--vs",
    "3..32",   "--gbw",         "1M",    "--slew",         "0.5V/us", "--aol",      "100dB", "--out-drop-hi",
    "1.5",     "--out-drop-lo", "0.02",  "--out-drop-ohm", "150",     "--iout-max", "20m",   "--cm-drop-hi",
    "1.5",     "--cm-drop-lo",  "-0.3",  "--vos",          "5m",      "--ib",       "250n"};

std::vector<std::string> opamp_args(std::vector<std::string> a, const std::vector<std::string>& b) {
  a.insert(a.end(), b.begin(), b.end());
  return a;
}

/// The op-amp entry of `devices list --json` by name.
nlohmann::json listed(const DemoStock& shelf, const std::string& name) {
  const auto all = shelf.json({"devices", "list"});
  for (const auto& d : all.at("devices"))
    if (d.at("name") == name) return d;
  FAIL("not listed: " << name);
  return {};
}

}  // namespace

TEST_CASE("devices add: an op-amp from its datasheet figures, listed in its own table and under \"opamp\"") {
  const DemoStock shelf;
  const auto r = shelf.run(opamp_args(kOpamp, {"--gbw-min", "700k", "--en", "40n", "--iq", "0.7m", "--v-max", "32"}));
  INFO(r.err);
  REQUIRE(r.status == 0);
  CHECK(r.out == "Added OPAMP SA-X2.\n");

  const auto d = listed(shelf, "SA-X2");
  CHECK(d.at("kind") == "OPAMP");
  CHECK(d.at("v_max") == 32.0);
  CHECK_FALSE(d.contains("hfe_min"));  // no transistor keys on an op-amp
  const auto& o = d.at("opamp");
  CHECK(o.at("channels") == 2);
  CHECK(o.at("channels").is_number_integer());
  CHECK(o.at("vs_min") == 3.0);
  CHECK(o.at("vs_max") == 32.0);
  CHECK(o.at("gbw") == 1e6);
  CHECK(o.at("gbw_min") == 7e5);
  CHECK(o.at("slew") == 5e5);                                // V/s
  CHECK(o.at("slew_min").is_null());                         // not stated
  CHECK(o.at("aol").get<double>() == doctest::Approx(1e5));  // 100 dB
  CHECK(o.at("pole2").is_null());
  CHECK(o.at("cm_drop_lo") == -0.3);
  CHECK(o.at("en") == 40e-9);
  CHECK(o.at("in").is_null());
  // What the worst case takes: the stated GBW minimum, half the typical slew rate.
  CHECK(o.at("gbw_low") == 7e5);
  CHECK(o.at("slew_low") == 2.5e5);
  CHECK(o.at("inputs_reach_lo") == true);  // 0.3 V beyond V-
  CHECK(o.at("inputs_reach_hi") == false);
  CHECK(o.at("output_reaches_lo") == true);  // 20 mV
  CHECK(o.at("output_reaches_hi") == false);

  // The demo's transistor types keep their keys exactly (the compatibility rule).
  const auto q = listed(shelf, "SQ-410");
  CHECK(q.at("hfe_min") == 110.0);
  CHECK_FALSE(q.contains("opamp"));

  REQUIRE(shelf.run({"devices", "import", "--pieces", std::string(SHELFSTAGE_SOURCE_DIR) + "/data-demo/pieces.csv"})
              .status == 0);
  const auto text = shelf.run({"devices", "list"});
  REQUIRE(text.status == 0);
  const auto at = text.out.find("Op-amp types (4)");
  REQUIRE(at != std::string::npos);
  CHECK(text.out.find("BJT types (3)") < at);  // after the transistors, before the pieces
  CHECK(text.out.find("Measured pieces", at) != std::string::npos);
  // The bench reading of SA-X2's row: supply span, GBW, slew, swing and common-mode drops,
  // which rails it reaches.
  const auto row = text.out.substr(text.out.find("SA-X2", at));
  const auto line = row.substr(0, row.find('\n'));
  for (const char* cell :
       {"3V..32V", "1MHz", "0.5V/us", "5mV", "250nA", "1.5V/0.02V", "1.5V/-0.3V", "in V-, out V-", "700uA"})
    CHECK_MESSAGE(line.find(cell) != std::string::npos, cell, " in ", line);
  CHECK(text.out.find("SA-R20") != std::string::npos);
}

TEST_CASE("devices add: a bad or missing op-amp figure, or another family's option, is refused; nothing written") {
  const DemoStock shelf;
  auto without = [&](const std::string& flag) {
    auto args = kOpamp;
    const auto it = std::find(args.begin(), args.end(), flag);
    args.erase(it, it + 2);
    return args;
  };
  auto replaced = [&](const std::string& flag, const std::string& value) {
    auto args = kOpamp;
    *(std::find(args.begin(), args.end(), flag) + 1) = value;
    return args;
  };
  check_refused(shelf.run(without("--gbw")), "an op-amp's figures are missing: --gbw");
  check_refused(shelf.run(without("--ib")), "missing: --ib");
  check_refused(shelf.run(replaced("--channels", "3")), "device 'SA-X2': channels 3 must be 1, 2 or 4");
  check_refused(shelf.run(replaced("--channels", "two")), "channels 'two' is not a whole number");
  check_refused(shelf.run(replaced("--slew", "0.5V")), "--slew '0.5V': a slew rate is volts per time");
  check_refused(shelf.run(replaced("--aol", "100q")), "--aol '100q'");
  check_refused(shelf.run(replaced("--vs", "32..32")), "vs_min 32 is not below vs_max 32");
  check_refused(shelf.run(replaced("--cm-drop-lo", "-2")), "cm_drop_lo -2 must be at least -1");
  check_refused(shelf.run(opamp_args(kOpamp, {"--slew-min", "1V/us"})), "slew_min 1000000 is above slew 500000");
  check_refused(shelf.run(opamp_args(kOpamp, {"--v-max", "30"})),
                "v_max 30 (the absolute maximum supply) is below vs_max 32");
  check_refused(shelf.run(opamp_args(kOpamp, {"--hfe", "100..200"})), "--hfe '100..200' does not apply to an op-amp");
  check_refused(shelf.run(opamp_args(kOpamp, {"--vp", "-1..-3"})), "--vp '-1..-3' does not apply to an op-amp");
  check_refused(shelf.run({"devices", "add", "SQ-9", "--kind", "NPN", "--hfe", "100..300", "--gbw", "1M"}),
                "--gbw '1M' does not apply to an NPN");
  check_refused(
      shelf.run({"devices", "add", "SJ-9", "--kind", "PJFET", "--idss", "1m..5m", "--vp", "1..3", "--channels", "2"}),
      "--channels '2' does not apply to a PJFET");
  check_refused(shelf.run({"devices", "add", "SA-9", "--kind", "TRIODE"}),
                "--kind 'TRIODE' is not one of NJFET, PJFET, NPN, PNP, OPAMP");
  const auto all = shelf.json({"devices", "list"}).at("devices");
  for (const char* name : {"SA-X2", "SQ-9", "SJ-9"})
    CHECK(std::none_of(all.begin(), all.end(), [&](const auto& d) { return d.at("name") == name; }));
}

TEST_CASE("devices import: op-amp rows beside transistor rows; a bad row imports nothing") {
  const DemoStock shelf;
  const TempDir dir;
  const std::string header =
      "name,kind,channels,vs_min,vs_max,gbw,slew,aol,out_drop_hi,out_drop_lo,out_drop_ohm,iout_max,cm_drop_hi,"
      "cm_drop_lo,vos,ib,hfe_min,hfe_max\n";
  const auto file = (dir / "opamps.csv").string();
  std::ofstream(file) << header
                      << "SA-Q4,OPAMP,4,4,36,3M,10V/us,200V/mV,1.5,1.5,150,20m,0,3,10m,200p,,\n"
                         "SQ-77,NPN,,,,,,,,,,,,,,,100,300\n";
  const auto r = shelf.run({"devices", "import", file});
  INFO(r.err);
  REQUIRE(r.status == 0);
  CHECK(r.out == "Imported 2 device types from " + file + ".\n");
  const auto d = listed(shelf, "SA-Q4");
  CHECK(d.at("opamp").at("channels") == 4);
  CHECK(d.at("opamp").at("slew") == 10e6);
  CHECK(d.at("opamp").at("inputs_reach_hi") == true);

  const auto bad = (dir / "bad.csv").string();
  std::ofstream(bad) << header
                     << "SA-Q5,OPAMP,4,4,36,3M,10V/us,200V/mV,1.5,1.5,150,20m,0,3,10m,200p,,\n"
                        "SA-Q6,OPAMP,2,4,36,3M,10V/us,200V/mV,1.5,1.5,150,20m,0,3,10m,200p,100,300\n";
  const auto b = shelf.run({"devices", "import", bad});
  CHECK(b.status == 1);
  CHECK(b.err == "error: " + bad + ": 1 bad row, nothing imported\n" + bad +
                     ":3: hfe_min '100' given for kind OPAMP (a BJT figure)\n" + bad +
                     ":3: hfe_max '300' given for kind OPAMP (a BJT figure)\n");
  const auto all = shelf.json({"devices", "list"}).at("devices");
  CHECK(std::none_of(all.begin(), all.end(), [](const auto& x) { return x.at("name") == "SA-Q5"; }));
}
