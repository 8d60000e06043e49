// Tests of `shelfstage analyze`: a stage given part by part with a measured piece from the
// demo shelf, checked against the self-bias solution by hand; ratings; every input mistake.
#include <doctest/doctest.h>

#include <cmath>
#include <set>
#include <nlohmann/json.hpp>

#include "stage_cli.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;

namespace {

struct Shelf {
  test::TempDir dir;
  std::string db = (dir / "stock.db").string();
  Shelf() { REQUIRE(test::run_stage_cli({"demo", "--db", db, "--json"}).status == 0); }
};

// jfet-cs-self with measured piece J1 of SJ-101 (data-demo/pieces.csv: IDSS 2.9 mA, VP -1.45 V).
std::vector<std::string> stage_args(const Shelf& s, std::vector<std::string> more = {}) {
  std::vector<std::string> a = {"analyze", "jfet-cs-self", "--db",     s.db,     "--device", "SJ-101",
                                "--piece", "J1",           "--supply", "12",     "--load",   "10k",
                                "--part",  "RG=1M",        "--part",   "RD=4k7", "--part",   "RS1=470",
                                "--part",  "CIN=100n",     "--part",   "cout=1u"};
  a.insert(a.end(), more.begin(), more.end());
  return a;
}

test::StageCliResult expect_error(const std::vector<std::string>& args) {
  const auto r = test::run_stage_cli(args);
  CHECK(r.status == 1);
  CHECK(r.out.empty());
  CHECK(r.err.starts_with("error: "));
  CHECK(r.err.find('\n') == r.err.size() - 1);  // one line
  return r;
}

}  // namespace

TEST_CASE("analyze --json: the measured piece's bias matches the self-bias solution by hand") {
  Shelf s;
  const auto r = test::run_stage_cli(stage_args(s, {"--json"}));
  REQUIRE(r.status == 0);
  const auto doc = nlohmann::json::parse(r.out);
  CHECK(doc["schema"] == 1);
  CHECK(doc["device"]["name"] == "SJ-101");
  CHECK(doc["device"]["piece"] == "J1");
  const double idss = doc["device"]["model"]["idss"].get<double>();
  const double vp = std::abs(doc["device"]["model"]["vp"].get<double>());
  const double lambda = doc["device"]["model"]["lambda"].get<double>();
  CHECK(idss == doctest::Approx(2.9e-3));  // the bench measurement, data-demo/pieces.csv
  CHECK(vp == doctest::Approx(1.45));
  // Sedra & Smith, JFET self-bias: ID = IDSS (1 - ID RS/|VP|)^2 (1 + lambda VDS) (the
  // lambda factor as in docs/physics.md, The JFET), by fixed-point iteration on VDS.
  double id = 0, vds = 0;
  for (int i = 0; i < 50; ++i) {
    const double is = idss * (1 + lambda * vds), k = 470 / vp;
    const double a = is * k * k, b = -(2 * is * k + 1), c = is;
    id = (-b - std::sqrt(b * b - 4 * a * c)) / (2 * a);
    vds = 12 - id * (4700 + 470);
  }
  const auto& e = doc["exact"];
  CHECK(e["bias_current"].get<double>() == doctest::Approx(id).epsilon(0.005));
  CHECK(e["nodes"]["drain"].get<double>() == doctest::Approx(12 - id * 4700).epsilon(0.005));
  CHECK(doc["closed_form"]["bias_current"].get<double>() == doctest::Approx(id).epsilon(0.005));
  CHECK(doc["parts"].size() == 5);
  CHECK(doc["conditions"]["band"][0].get<double>() == 20);  // the default band edges
  CHECK(doc["corners"].size() >= 3);                        // the measured piece's small polygon
}

TEST_CASE("analyze: text with a rating exceeded warns (exit 0), with a sound rating does not") {
  Shelf s;
  const auto over = test::run_stage_cli(stage_args(s, {"--rating", "COUT=6.3V", "--rating", "RD=0.25W"}));
  REQUIRE(over.status == 0);
  CHECK(over.out.find("Device: SJ-101 NJFET, measured piece J1") != std::string::npos);
  CHECK(over.out.find("Warnings:\n  - C3 (COUT) holds") != std::string::npos);
  CHECK(over.out.find("more than its 6.3V rating") != std::string::npos);
  CHECK(over.out.find("no rating given for RG, RS1, CIN") != std::string::npos);
  CHECK(over.out.find("corner pieces") != std::string::npos);
  const auto fine = test::run_stage_cli(stage_args(s, {"--rating", "COUT=25V"}));
  REQUIRE(fine.status == 0);
  CHECK(fine.out.find("Warnings:") == std::string::npos);
}

TEST_CASE("analyze: every mistake is bad input (exit 1) with one error line naming the field and value") {
  Shelf s;
  const std::vector<std::string> base = {"analyze", "jfet-cs-self", "--db", s.db,     "--device",
                                         "SJ-101",  "--supply",     "12",   "--load", "10k"};
  auto with = [&](std::vector<std::string> parts) {
    std::vector<std::string> a = base;
    for (auto& p : parts) {
      a.push_back("--part");
      a.push_back(p);
    }
    return a;
  };
  SUBCASE("a required role missing") {
    const auto r = expect_error(with({"RG=1M", "CIN=100n", "COUT=1u"}));
    CHECK(r.err.find("role RD") != std::string::npos);
    CHECK(r.err.find("RG RD [RS1] [RS2] [CS] CIN COUT") != std::string::npos);
  }
  SUBCASE("an unknown role") {
    const auto r = expect_error(with({"RG=1M", "RD=4k7", "RX=1k", "CIN=100n", "COUT=1u"}));
    CHECK(r.err.find("'RX'") != std::string::npos);
    CHECK(r.err.find("RG RD [RS1] [RS2] [CS] CIN COUT") != std::string::npos);
  }
  SUBCASE("an unknown topology") {
    std::vector<std::string> a = with({"RG=1M"});
    a[1] = "jfet-cs";
    const auto r = expect_error(a);
    CHECK(r.err.find("'jfet-cs'") != std::string::npos);
    for (const char* t : {"jfet-cs-self", "jfet-cs-divider", "jfet-follower", "bjt-ce-divider", "bjt-follower"})
      CHECK(r.err.find(t) != std::string::npos);
  }
  SUBCASE("a bad value") {
    const auto r = expect_error(with({"RG=1M", "RD=4.7q", "CIN=100n", "COUT=1u"}));
    CHECK(r.err == "error: --part RD '4.7q': unknown multiplier 'q' at column 4\n");
  }
  SUBCASE("a slip of the prefix: 100 F") {
    const auto r = expect_error(with({"RG=1M", "RD=4k7", "CIN=100", "COUT=1u"}));
    // A bare number is refused, as in the stock: it would be a hundred farads.
    CHECK(r.err.starts_with("error: --part CIN '100': a capacitance needs its multiplier or unit"));
  }
  SUBCASE("no '='") {
    const auto r = expect_error(with({"RG=1M", "RD4k7", "CIN=100n", "COUT=1u"}));
    CHECK(r.err.find("'RD4k7'") != std::string::npos);
  }
  SUBCASE("a bypass capacitor without its resistor") {
    const auto r = expect_error(with({"RG=1M", "RD=4k7", "CS=100u", "CIN=100n", "COUT=1u"}));
    CHECK(r.err.find("without RS2") != std::string::npos);
  }
  SUBCASE("an unknown device, a device of the wrong kind, a piece of another device") {
    auto a = with({"RG=1M", "RD=4k7", "CIN=100n", "COUT=1u"});
    a[5] = "SJ-999";
    CHECK(expect_error(a).err.find("'SJ-999'") != std::string::npos);
    a[5] = "SQ-410";
    CHECK(expect_error(a).err.find("'SQ-410' (NPN)") != std::string::npos);
    a[5] = "SA-210";  // an op-amp type of the demo shelf: no transistor stage takes it
    CHECK(expect_error(a).err == "error: --device 'SA-210' is an op-amp; jfet-cs-self is a transistor stage\n");
    a[5] = "SJ-101";
    a.push_back("--piece");
    a.push_back("Q3");
    CHECK(expect_error(a).err.find("'Q3' is a piece of SQ-410") != std::string::npos);
  }
  SUBCASE("a supply of zero or a range, a rating for a part not given") {
    auto a = with({"RG=1M", "RD=4k7", "CIN=100n", "COUT=1u"});
    a[7] = "0";
    CHECK(expect_error(a).err.find("--supply '0'") != std::string::npos);
    a[7] = "9..12";
    CHECK(expect_error(a).err.find("--supply '9..12'") != std::string::npos);
    a[7] = "12";
    a.push_back("--rating");
    a.push_back("RS1=0.25W");
    CHECK(expect_error(a).err.find("RS1 is not among the parts given") != std::string::npos);
  }
}

TEST_CASE("analyze a feedback pair: --device2 names Q2, required for a pair and refused for one transistor") {
  Shelf s;
  const std::vector<std::string> pair = {"analyze",  "bjt-fb-pair", "--db",   s.db,       "--device", "SQ-420",
                                         "--supply", "9",           "--load", "10k",      "--part",   "RB1=4.7M",
                                         "--part",   "RB2=2.2M",    "--part", "RC1=6k8",  "--part",   "RC2=4k7",
                                         "--part",   "RF=22k",      "--part", "RE1=220",  "--part",   "RE2=10k",
                                         "--part",   "CE=220u",     "--part", "CIN=100n", "--part",   "COUT=10u"};
  auto with = [&](std::vector<std::string> more) {
    std::vector<std::string> a = pair;
    a.insert(a.end(), more.begin(), more.end());
    return a;
  };
  CHECK(expect_error(pair).err.find("--device2") != std::string::npos);
  CHECK(expect_error(with({"--device2", "SQ-410"})).err.find("SQ-410") != std::string::npos);  // the same polarity
  CHECK(expect_error(with({"--device2", "SJ-101"})).err.find("SJ-101") != std::string::npos);  // not bipolar
  CHECK(expect_error(with({"--device2", "SA-210"})).err.find("'SA-210' (OPAMP) does not fit") != std::string::npos);
  CHECK(expect_error(stage_args(s, {"--device2", "SQ-510"})).err.find("--device2") != std::string::npos);
  const auto r = test::run_stage_cli(with({"--device2", "SQ-510", "--json"}));
  REQUIRE(r.status == 0);
  const auto j = nlohmann::json::parse(r.out);
  // The pair amplifies in phase, about 1 + RF/RE1 (101) less its loop's share; its output is
  // Q2's collector, near the middle of the rail (hand figures: the divider puts the base at
  // 2.6 V, Q1 at Q2's VEB over RC1, about 0.1 mA).
  const double gain = j["exact"]["gain"].get<double>();
  CHECK(gain > 70);
  CHECK(gain < 101);
  // The corners pair every corner piece of Q1 with every one of Q2 (four each: hFE and VBE
  // limits): sixteen, each naming Q2's hFE, both datasheet ends of it present, and the gain
  // held by the loop at every one (the ratio 101 less the loop's share, never above it).
  const auto& corners = j["corners"];
  REQUIRE(corners.size() == 16);
  std::set<double> hfe2;
  for (const auto& cj : corners) {
    REQUIRE(cj.contains("hfe2"));
    hfe2.insert(cj["hfe2"].get<double>());
    CHECK(cj["figures"]["gain"].get<double>() > 60);
    CHECK(cj["figures"]["gain"].get<double>() < 101);
  }
  CHECK(hfe2 == std::set<double>{110, 450});  // SQ-510's datasheet range (data-demo/devices.csv)
  // Its loop, broken at RF's output end: at nominal a loop gain well above one (the gain sits
  // under the ratio 101 by about 1 / (1 + T)) with a crossover and a margin, and a margin at
  // every corner. Loop figures are checked against ngspice in tests/stages/loop_test.cpp.
  const auto& loop = j["loop"];
  REQUIRE(loop.is_object());
  CHECK(loop["broken_at"].get<std::string>().find("(RF)") != std::string::npos);
  CHECK(loop["gain"].get<double>() > 1);
  CHECK(101 / (1 + 1 / loop["gain"].get<double>()) == doctest::Approx(gain).epsilon(0.05));
  REQUIRE(loop["phase_margin"].is_number());
  for (const auto& cj : corners) CHECK(cj["loop"]["phase_margin"].is_number());
  const auto text = test::run_stage_cli(with({"--device2", "SQ-510"}));
  REQUIRE(text.status == 0);
  CHECK(text.out.find("every pairing of Q1's and Q2's corner pieces") != std::string::npos);
  CHECK(text.out.find("V(Q2 collector)") != std::string::npos);
  CHECK(text.out.find("Feedback loop: broken at R5 (RF)") != std::string::npos);
  CHECK(text.out.find("margin") != std::string::npos);
  // A cable across the load and a capacitor across RF: both in the conditions and the parts,
  // and the upper corner comes down (the cable inside the loop, CF's zero).
  const auto bare = nlohmann::json::parse(r.out)["exact"]["f_high"].get<double>();
  const auto cabled =
      test::run_stage_cli(with({"--device2", "SQ-510", "--load-cap", "10n", "--part", "CF=100p", "--json"}));
  REQUIRE(cabled.status == 0);
  const auto jc = nlohmann::json::parse(cabled.out);
  CHECK(jc["conditions"]["load_cap"].get<double>() == doctest::Approx(10e-9));
  CHECK(jc["exact"]["f_high"].get<double>() < bare);
  CHECK(jc["closed_form"]["f_high"].get<double>() ==
        doctest::Approx(jc["exact"]["f_high"].get<double>()).epsilon(0.01));
  CHECK(expect_error(with({"--device2", "SQ-510", "--load-cap", "-1n"})).err.find("--load-cap") != std::string::npos);
  // A stage without a loop has none.
  const auto plain = test::run_stage_cli(stage_args(s, {"--json"}));
  REQUIRE(plain.status == 0);
  CHECK(nlohmann::json::parse(plain.out)["loop"].is_null());
}

namespace {

// opamp-noninv with the demo's SA-210 (data-demo/devices.csv) on one 12 V supply.
std::vector<std::string> opamp_args(const Shelf& s, const std::string& topology, const std::string& device,
                                    std::vector<std::string> more = {}, const std::string& supply = "12") {
  std::vector<std::string> a = {"analyze",  topology, "--db",   s.db,  "--device", device,
                                "--supply", supply,   "--load", "10k", "--part",   "RB=100k"};
  const bool inverting = topology.starts_with("opamp-inv");
  const bool split = topology.ends_with("-split");
  if (inverting) a.pop_back(), a.pop_back();  // no RB: the + input goes to the reference
  for (const char* p : {"RF=47k", "RG=4k7"}) a.insert(a.end(), {"--part", p});
  if (!split) {
    for (const char* p : {"RA1=47k", "RA2=47k", "CREF=10u", "COUT=10u"}) a.insert(a.end(), {"--part", p});
    if (!inverting) a.insert(a.end(), {"--part", "CG=22u"});
  }
  a.insert(a.end(), {"--part", "CIN=1u"});
  a.insert(a.end(), more.begin(), more.end());
  return a;
}

}  // namespace

TEST_CASE("analyze an op-amp stage: U1's figures; a transistor there, or the wrong supply, refused by name") {
  Shelf s;
  auto r = test::run_stage_cli(opamp_args(s, "opamp-noninv", "SA-210", {"--json"}));
  REQUIRE_MESSAGE(r.status == 0, r.err);
  auto doc = nlohmann::json::parse(r.out);
  CHECK(doc["device"]["kind"] == "OPAMP");
  CHECK(doc["device"]["designator"] == "U1");
  // Gain 1 + RF/RG = 11 (the non-inverting stage's textbook gain; the loop gain of some
  // hundreds leaves it within 1 %).
  CHECK(doc["exact"]["gain"].get<double>() == doctest::Approx(11).epsilon(0.01));
  CHECK(doc["corners"].size() == 16);
  CHECK(doc["conditions"].contains("split") == false);
  r = test::run_stage_cli(opamp_args(s, "opamp-noninv", "SA-210"));
  REQUIRE(r.status == 0);
  CHECK(r.out.find("U1 supply current (quiescent)") != std::string::npos);
  CHECK(r.out.find("GBW 1.1MHz") != std::string::npos);
  // A split-supply stage with --split: +/-12 V.
  r = test::run_stage_cli(opamp_args(s, "opamp-inv-split", "SA-210", {"--split", "--json"}));
  REQUIRE_MESSAGE(r.status == 0, r.err);
  doc = nlohmann::json::parse(r.out);
  CHECK(doc["conditions"]["split"] == true);
  CHECK(doc["exact"]["gain"].get<double>() == doctest::Approx(-10).epsilon(0.01));  // -RF/RG
  // Each mistake one error line naming the option and the value.
  CHECK(expect_error(opamp_args(s, "opamp-noninv", "SQ-410")).err.find("--device 'SQ-410' is a transistor") !=
        std::string::npos);
  const std::vector<std::string> follower = {
      "analyze", "bjt-follower", "--db",   s.db,      "--device", "SA-210", "--supply", "12",     "--load", "10k",
      "--part",  "R1=100k",      "--part", "R2=100k", "--part",   "RE=4k7", "--part",   "CIN=1u", "--part", "COUT=10u"};
  CHECK(expect_error(follower).err.find("--device 'SA-210' is an op-amp") != std::string::npos);
  CHECK(expect_error(opamp_args(s, "opamp-inv-split", "SA-210")).err.find("--split is missing") != std::string::npos);
  CHECK(expect_error(opamp_args(s, "opamp-noninv", "SA-210", {"--split"})).err.find("--split: opamp-noninv") !=
        std::string::npos);
  CHECK(expect_error(opamp_args(s, "opamp-inv-split", "SA-210", {"--split"}, "-12"))
            .err.find("--supply '-12' with --split") != std::string::npos);
}
