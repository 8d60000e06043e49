// Tests of `shelfstage devices fit` and `devices measure`: pieces characterised on the bench,
// stored, and designed for (their narrower spread shows in the worst-case gain).
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "shelf_fixture.hpp"

using shelfstage::test::DemoShelf;
using shelfstage::test::run_cli;

namespace {

// Self-bias readings of an N-channel piece simulated in ngspice (NJF VTO=-1.45 BETA=1.37931m
// LAMBDA=0, so IDSS = BETA*VTO^2 = 2.9 mA; drain on 12 V; `.op`), rounded to four digits as
// a bench meter shows them: V(source) 0.2116 V at 100 ohms, 0.5385 V at 470, 0.9041 V at 2k2.
const std::vector<std::string> kReadings{"--self-bias", "100:0.2116",  "--self-bias",
                                         "470:0.5385",  "--self-bias", "2k2:0.9041"};

std::vector<std::string> with(std::vector<std::string> a, const std::vector<std::string>& b) {
  a.insert(a.end(), b.begin(), b.end());
  return a;
}

/// The worst-case gain range of the best candidate, as a share of its nominal gain.
double worst_gain_span(const nlohmann::json& design) {
  const auto& c = design.at("candidates").at(0);
  const auto& w = c.at("worst").at("gain");
  return std::abs(w[1].get<double>() - w[0].get<double>()) / std::abs(c.at("nominal").at("gain").get<double>());
}

/// The command exits 1 with one line `error: ...` that contains `says`, and prints nothing else.
void check_refused(const DemoShelf& shelf, const std::vector<std::string>& args, const std::string& says) {
  shelfstage::test::check_refused(shelf.run(args), says);
}

}  // namespace

TEST_CASE("devices fit: readings simulated in ngspice give back IDSS 2.9 mA and VP -1.45 V within 1 %") {
  const auto r = run_cli(with({"devices", "fit", "--json"}, kReadings));
  INFO(r.err);
  REQUIRE(r.status == 0);
  CHECK(r.err.empty());
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j["schema"] == 1);
  CHECK(j["idss"].get<double>() == doctest::Approx(2.9e-3).epsilon(0.01));
  CHECK(j["vp"].get<double>() == doctest::Approx(-1.45).epsilon(0.01));
  // Four-digit readings, 0.5 % meter and 1 % resistors: the stated uncertainty covers the truth.
  CHECK(std::abs(j["idss"].get<double>() - 2.9e-3) <= j["idss_uncertainty"].get<double>());
  CHECK(std::abs(j["vp"].get<double>() + 1.45) <= j["vp_uncertainty"].get<double>());
  REQUIRE(j["readings"].size() == 3);
  for (const char* key : {"rs", "vs", "id", "fitted_vs", "residual"}) CHECK(j["readings"][0].contains(key));
  CHECK(j["readings"][1]["id"].get<double>() == doctest::Approx(0.5385 / 470));
  CHECK(j["device"].is_null());
  CHECK(j["piece"].is_null());

  const auto text = run_cli(with({"devices", "fit"}, kReadings));
  CHECK(text.status == 0);
  CHECK(text.out.find("IDSS") != std::string::npos);
  CHECK(text.out.find("= 2 IDSS/|VP|") != std::string::npos);
  CHECK(text.out.find("2.2kΩ") != std::string::npos);
}

TEST_CASE("devices fit --drain-supply: with the type's lambda, IDSS referred to VDS = 0 (ngspice with LAMBDA)") {
  // The same piece with the SJ-101's lambda, 0.005/V (NJF VTO=-1.45 BETA=1.37931m
  // LAMBDA=0.005, drain on 12 V, `.op`): V(source) 0.2207 V at 100 ohms, 0.5523 V at 470,
  // 0.9154 V at 2k2. Without the supply the fitted IDSS is the one at VDS near 11.5 V, about
  // 0.005*11.5 = 5.7 % above BETA*VTO^2; with it, IDSS at VDS = 0.
  DemoShelf shelf;
  const std::vector<std::string> readings{"--self-bias", "100:0.2207", "--self-bias", "470:0.5523",
                                          "--self-bias", "2k2:0.9154", "--device",    "SJ-101"};
  const auto bench = shelf.json(with({"devices", "fit"}, readings));
  CHECK(bench["drain_supply"].is_null());
  CHECK(bench["idss"].get<double>() / 2.9e-3 - 1 == doctest::Approx(0.057).epsilon(0.1));
  const auto referred = shelf.json(with({"devices", "fit", "--drain-supply", "12"}, readings));
  CHECK(referred["lambda"].get<double>() == doctest::Approx(0.005));
  CHECK(referred["idss"].get<double>() == doctest::Approx(2.9e-3).epsilon(0.01));
  CHECK(referred["vp"].get<double>() == doctest::Approx(-1.45).epsilon(0.01));
  // A supply below |VP| means the readings were not taken in saturation.
  const auto low = shelf.run(with({"devices", "fit", "--drain-supply", "1"}, readings));
  CHECK(low.status == 1);
  CHECK(low.err.find("error: drain supply 1V is below the fitted |VP|") == 0);
  const auto stray = shelf.run(with({"devices", "fit", "--lambda", "0.01"}, readings));
  CHECK(stray.status == 1);
  CHECK(stray.err == "error: --lambda '0.01' goes with --drain-supply (lambda acts through VDS)\n");
}

TEST_CASE("devices fit: a P-channel piece's negative readings give a positive VP") {
  // ngspice PJF VTO=-1.6 BETA=2.5m LAMBDA=0 (IDSS 6.4 mA, VP +1.6 V), drain on -12 V, `.op`:
  // V(source) -0.2912 V at 68 ohms, -0.6873 V at 330, -1.0667 V at 1k5 (rounded to four digits).
  const auto r = run_cli({"devices", "fit", "--kind", "PJFET", "--self-bias", "68:-0.2912", "--self-bias",
                          "330:-0.6873", "--self-bias", "1k5:-1.0667", "--json"});
  INFO(r.err);
  REQUIRE(r.status == 0);
  const auto j = nlohmann::json::parse(r.out);
  CHECK(j["kind"] == "PJFET");
  CHECK(j["vp"].get<double>() == doctest::Approx(1.6).epsilon(0.01));
  CHECK(j["idss"].get<double>() == doctest::Approx(6.4e-3).epsilon(0.01));
  CHECK(j["readings"][0]["vs"].get<double>() < 0);
}

TEST_CASE("devices fit --device --label stores the piece; design --piece shows its narrower spread") {
  DemoShelf shelf;
  const auto fit = shelf.json(with({"devices", "fit", "--device", "SJ-101", "--label", "J9"}, kReadings));
  REQUIRE(fit["piece"].is_object());
  CHECK(fit["piece"]["label"] == "J9");
  CHECK(fit["piece"]["device"] == "SJ-101");
  CHECK(fit["piece"]["idss"] == fit["idss"]);
  CHECK(fit["piece"]["vp"] == fit["vp"]);
  const double u = fit["piece"]["uncertainty"];
  CHECK(u >= fit["idss_uncertainty"].get<double>() / fit["idss"].get<double>());
  CHECK(u >= fit["vp_uncertainty"].get<double>() / -fit["vp"].get<double>());
  CHECK(u < 0.05);
  CHECK(fit["departures"].empty());

  bool listed = false;
  const auto list = shelf.json({"devices", "list"});
  for (const auto& p : list["pieces"]) listed = listed || p["label"] == "J9";
  CHECK(listed);

  // The same request for the type (its datasheet box) and for the piece. A datasheet spread
  // of IDSS 1..5 mA and VP -0.5..-3 V against a piece known to a few percent: the piece's
  // worst-case gain range is far narrower.
  const std::vector<std::string> request{"design",       "--gain", "4",     "--load",    "10k",
                                         "--supply",     "12",     "--zin", "1M",        "--topology",
                                         "jfet-cs-self", "--top",  "1",     "--samples", "50"};
  const auto by_type = shelf.json(with(request, {"--device", "SJ-101"}));
  const auto by_piece = shelf.json(with(request, {"--piece", "J9"}));
  MESSAGE("worst-case gain span: datasheet " << worst_gain_span(by_type) << ", piece J9 " << worst_gain_span(by_piece));
  CHECK(worst_gain_span(by_piece) < 0.5 * worst_gain_span(by_type));

  // --store takes the next free label.
  const auto again = shelf.json(with({"devices", "fit", "--device", "SJ-101", "--store"}, kReadings));
  CHECK(again["piece"]["label"] == "SJ-101-1");
}

TEST_CASE("devices fit: impossible readings and misuse are refused with one error line, nothing stored") {
  const DemoShelf shelf;
  REQUIRE(shelf.run({"devices", "measure", "SJ-101", "--idss", "2.9m", "--vp", "-1.45", "--label", "J1"}).status == 0);
  const auto before = shelf.json({"devices", "list"})["pieces"].size();
  auto refused = [&](std::vector<std::string> args, const std::string& says) { check_refused(shelf, args, says); };
  refused({"devices", "fit", "--self-bias", "1k:1", "--self-bias", "2k2:0.8", "--device", "SJ-101", "--label", "X1"},
          "self-bias reading 1 (RS 1kΩ, VS 1V) and self-bias reading 2 (RS 2.2kΩ, VS 0.8V) contradict each other");
  refused({"devices", "fit", "--self-bias", "1k:1"}, "two or more are needed");
  refused({"devices", "fit", "--self-bias", "1k", "--self-bias", "2k:1"}, "--self-bias '1k': write RS:VS");
  refused({"devices", "fit", "--self-bias", "1q:1", "--self-bias", "2k:1"}, "--self-bias '1q:1': RS '1q'");
  refused({"devices", "fit", "--self-bias", "470:0.6", "--self-bias", "1k:-1"}, "swapped meter leads");
  refused(with({"devices", "fit", "--label", "J9"}, kReadings),
          "--label 'J9' stores the fitted piece and needs --device");
  refused(with({"devices", "fit", "--device", "SQ-410"}, kReadings), "--device 'SQ-410' is an NPN");
  refused(with({"devices", "fit", "--device", "SJ-101", "--kind", "PJFET"}, kReadings),
          "contradicts --device 'SJ-101'");
  refused(with({"devices", "fit", "--device", "SJ-999"}, kReadings), "--device 'SJ-999' is not in the device list");
  refused(with({"devices", "fit", "--meter-accuracy", "2"}, kReadings), "--meter-accuracy '2' reads as 200 %");
  refused(with({"devices", "fit", "--device", "SJ-101", "--label", "J1"}, kReadings),
          "piece label 'J1' is already used");
  CHECK(shelf.json({"devices", "list"})["pieces"].size() == before);
}

TEST_CASE("devices measure: a JFET piece, its VP signed by the kind; a warning outside the datasheet") {
  DemoShelf shelf;
  // A tired hand types 1.45 for an N-channel piece's -1.45 V.
  auto j = shelf.json({"devices", "measure", "SJ-101", "--idss", "2.9m", "--vp", "1.45"});
  CHECK(j["schema"] == 1);
  CHECK(j["piece"]["label"] == "SJ-101-1");
  CHECK(j["piece"]["vp"].get<double>() == doctest::Approx(-1.45));
  CHECK(j["piece"]["idss"].get<double>() == doctest::Approx(2.9e-3));
  CHECK(j["piece"]["uncertainty"].get<double>() == doctest::Approx(0.03));
  CHECK(j["piece"]["hfe"].is_null());
  CHECK(j["warnings"].empty());
  j = shelf.json({"devices", "measure", "SJ-101", "--idss", "2.9m", "--vp", "-1.45"});
  CHECK(j["piece"]["label"] == "SJ-101-2");
  // P-channel: VP positive whatever the sign typed.
  j = shelf.json(
      {"devices", "measure", "SJ-P31", "--idss", "6m", "--vp", "-2.5", "--label", "P1", "--uncertainty", "2%"});
  CHECK(j["piece"]["vp"].get<double>() == doctest::Approx(2.5));
  CHECK(j["piece"]["uncertainty"].get<double>() == doctest::Approx(0.02));

  // Outside the datasheet's IDSS range (1..5 mA): stored, with a warning on stderr.
  const auto r = shelf.run({"devices", "measure", "SJ-101", "--idss", "7m", "--vp", "-1.45", "--label", "hot"});
  CHECK(r.status == 0);
  CHECK(r.err == "warning: IDSS 7mA is above SJ-101's datasheet range 1mA..5mA\n");
  CHECK(r.out.find("Stored piece hot of SJ-101") != std::string::npos);
  CHECK(r.out.find("--piece hot") != std::string::npos);
}

TEST_CASE("devices measure: a BJT's hFE given, or IC/IB from two currents") {
  DemoShelf shelf;
  auto j = shelf.json({"devices", "measure", "SQ-410", "--ib", "10u", "--ic", "2.87m", "--uncertainty", "5%"});
  CHECK(j["piece"]["hfe"].get<double>() == doctest::Approx(287));
  CHECK(j["piece"]["idss"].is_null());
  CHECK(j["piece"]["uncertainty"].get<double>() == doctest::Approx(0.05));
  j = shelf.json({"devices", "measure", "SQ-410", "--hfe", "95", "--label", "Q9"});
  CHECK(j["piece"]["hfe"].get<double>() == doctest::Approx(95));
  CHECK(j["warnings"][0] == "hFE 95 is below SQ-410's datasheet range 110..450");
}

TEST_CASE("devices measure: misuse is refused with one error line, nothing stored") {
  const DemoShelf shelf;
  REQUIRE(shelf.run({"devices", "measure", "SJ-101", "--idss", "2.9m", "--vp", "-1.45", "--label", "J1"}).status == 0);
  const auto before = shelf.json({"devices", "list"})["pieces"].size();
  auto refused = [&](std::vector<std::string> args, const std::string& says) { check_refused(shelf, args, says); };
  refused({"devices", "measure", "SQ-410", "--ib", "1m", "--ic", "1m"}, "must be below the collector current");
  refused({"devices", "measure", "SQ-410", "--ib", "0", "--ic", "1m"}, "base current IB 0A must be above zero");
  refused({"devices", "measure", "SQ-410", "--ib", "10u"}, "--ib '10u' needs --ic as well");
  refused({"devices", "measure", "SQ-410", "--hfe", "200", "--ib", "1u", "--ic", "1m"}, "give one or the other");
  refused({"devices", "measure", "SQ-410", "--idss", "2m"}, "--idss '2m' does not apply to SQ-410 (NPN)");
  refused({"devices", "measure", "SQ-410"}, "SQ-410 is a BJT: give --hfe, or --ib and --ic");
  refused({"devices", "measure", "SJ-101", "--idss", "2m"}, "give --idss and --vp");
  refused({"devices", "measure", "SJ-101", "--idss", "2m", "--vp", "0"}, "--vp '0' must not be zero");
  refused({"devices", "measure", "SJ-101", "--idss", "-2m", "--vp", "1"}, "--idss '-2m' must be above zero");
  refused({"devices", "measure", "SJ-101", "--idss", "2m", "--vp", "1", "--hfe", "100"}, "--hfe '100' does not apply");
  refused({"devices", "measure", "SJ-101", "--idss", "2m", "--vp", "1", "--label", "j1"},
          "'j1' is already used");  // labels compare without regard to case
  refused({"devices", "measure", "SJ-101", "--idss", "2m", "--vp", "1", "--uncertainty", "3"}, "reads as 300 %");
  refused({"devices", "measure", "SJ-999", "--hfe", "100"}, "device 'SJ-999' is not in the device list");
  CHECK(shelf.json({"devices", "list"})["pieces"].size() == before);
}

TEST_CASE("devices measure and devices fit refuse an op-amp type by name, design rates it; nothing is stored") {
  const shelfstage::test::DemoStock shelf;
  auto refused = [&](const std::vector<std::string>& args, const std::string& error) {
    const auto r = shelf.run(args);
    CHECK(r.status == 1);
    CHECK(r.out.empty());
    CHECK(r.err == "error: " + error + "\n");
  };
  refused({"devices", "measure", "SA-210", "--hfe", "100"},
          "device 'SA-210' is an op-amp; measured pieces are transistors (IDSS and VP, or hFE)");
  refused(with({"devices", "fit", "--device", "SA-430", "--label", "U1"}, kReadings),
          "--device 'SA-430' is an op-amp; self-bias readings fit JFETs");
  // An op-amp type designs op-amp stages; this one works from 2.7..5.5 V, so on 12 V the
  // search says its rating binds (exit 2, nothing kept).
  const auto d =
      shelf.run({"design", "--gain", "10", "--load", "10k", "--supply", "12", "--zin", "100k", "--device", "SA-R20"});
  CHECK(d.status == 2);
  CHECK(d.err.find("SA-R20 runs from a supply span of 12 V against its absolute maximum of 6 V") != std::string::npos);
  CHECK(shelf.json({"devices", "list"}).at("pieces").empty());
  // A piece of an op-amp in a pieces file is a bad row, and the file imports nothing.
  const auto r = shelf.run({"devices", "import", "--pieces", "-"}, "label,device,hfe\nQ9,SQ-410,250\nU1,SA-210,100\n");
  CHECK(r.status == 1);
  CHECK(r.err.find("stdin:3: piece 'U1': device 'SA-210' is an op-amp") != std::string::npos);
  CHECK(shelf.json({"devices", "list"}).at("pieces").empty());
}
