// Tests of how transistor types and measured pieces are shown: ranges in notation, the JSON keys.
#include "devices_view.hpp"

#include <doctest/doctest.h>

using namespace shelfstage;
using namespace shelfstage::cli;
using devices::DeviceKind;
using devices::DeviceRecord;

namespace {

DeviceRecord jfet() {
  DeviceRecord d;
  d.name = "SJ-101";
  d.kind = DeviceKind::njfet;
  d.jfet.idss_a = {1e-3, 5e-3, 2.5e-3};
  d.jfet.vp_v = {-3.0, -0.5, std::nullopt};
  d.jfet.lambda_per_v = 0.005;
  d.jfet.cgs_f = 4.5e-12;
  d.jfet.cgd_f = 1.5e-12;
  return d;
}

DeviceRecord bjt() {
  DeviceRecord d;
  d.name = "SQ-410";
  d.kind = DeviceKind::npn;
  d.bjt.hfe = {110, 450, 250};
  d.bjt.is_a = 1.5e-14;
  d.bjt.vaf_v = 80;
  d.bjt.cje_f = 6e-12;
  d.bjt.cjc_f = 3e-12;
  return d;
}

}  // namespace

TEST_CASE("ranges print in notation with units, signed as on a datasheet") {
  CHECK(range_text({1e-3, 5e-3, std::nullopt}, units::Unit::ampere) == "1mA..5mA");
  CHECK(range_text({-3.0, -0.5, std::nullopt}, units::Unit::volt) == "-3V..-0.5V");
  CHECK(range_text({2e-3, 2e-3, std::nullopt}, units::Unit::ampere) == "2mA");
  CHECK(quantity_text(4.5e-12, units::Unit::farad) == "4.5pF");
  CHECK(quantity_text(80, units::Unit::volt) == "80V");
}

TEST_CASE("the table has a JFET section, a BJT section and the measured pieces") {
  devices::MeasuredPiece piece;
  piece.label = "J1";
  piece.device = "SJ-101";
  piece.idss_a = 2.9e-3;
  piece.vp_v = -1.45;
  const std::string table = devices_table({jfet(), bjt()}, {piece});
  const auto j = table.find("JFET types (1)");
  const auto b = table.find("BJT types (1)");
  const auto m = table.find("Measured pieces (1)");
  REQUIRE(j != std::string::npos);
  REQUIRE(b != std::string::npos);
  REQUIRE(m != std::string::npos);
  CHECK(j < b);
  CHECK(b < m);
  CHECK(table.find("1mA..5mA") != std::string::npos);
  CHECK(table.find("110..450") != std::string::npos);
  CHECK(table.find("2.9mA") != std::string::npos);
  CHECK(table.find("\u00B13%") != std::string::npos);
  CHECK(devices_table({}, {}).find("devices import") != std::string::npos);
}

TEST_CASE("device JSON keys are the device CSV's column names (docs/interface.md), values plain SI") {
  const auto doc = devices_json({jfet(), bjt()}, {});
  CHECK(doc["schema"] == 1);
  REQUIRE(doc["devices"].size() == 2);
  const auto& j = doc["devices"][0];
  for (const char* key : {"name", "kind", "idss_min", "idss_max", "vp_min", "vp_max", "lambda", "cgs", "cgd",
                          "idss_typ", "vp_typ", "note"}) {
    CHECK_MESSAGE(j.contains(key), key);
  }
  CHECK(j["kind"] == "NJFET");
  CHECK(j["idss_max"].get<double>() == doctest::Approx(5e-3));
  CHECK(j["vp_min"].get<double>() == doctest::Approx(-3.0));
  CHECK(j["vp_typ"].is_null());
  CHECK(j["cgs"].get<double>() == doctest::Approx(4.5e-12));
  const auto& b = doc["devices"][1];
  for (const char* key : {"name", "kind", "hfe_min", "hfe_max", "is", "vaf", "cje", "cjc", "hfe_typ", "note"}) {
    CHECK_MESSAGE(b.contains(key), key);
  }
  CHECK(b["hfe_typ"].get<double>() == doctest::Approx(250.0));
  CHECK(b["is"].get<double>() == doctest::Approx(1.5e-14));
  CHECK(doc["pieces"].is_array());
}

TEST_CASE("fit text and JSON: the figures with their uncertainty, each reading with its residual") {
  // Hand computation (tests/devices/fit_test.cpp): IDSS 8 mA and VP -2 V give 1 V across 500
  // ohms and 1.5 V across 3 kohms, so these two readings fit that piece exactly.
  const std::vector<devices::SelfBiasReading> readings{{500, 1.0}, {3000, 1.5}};
  const devices::ReadingAccuracy acc{0.005, 0.01};
  const auto fit = devices::fit_self_bias(readings, DeviceKind::njfet, acc);
  const auto text = fit_text(fit, acc, {});
  CHECK(text.starts_with("NJFET from 2 self-bias readings\n"));
  CHECK(text.find("IDSS    8mA  ± ") != std::string::npos);
  CHECK(text.find("VP      -2V  ± ") != std::string::npos);
  CHECK(text.find("gm0   8mA/V") != std::string::npos);  // 2 IDSS/|VP| = 8 mA/V
  CHECK(text.find("  2   3kΩ  1.5V  500uA       1.5V        0V\n") != std::string::npos);
  CHECK(text.find("meter accuracy 0.5% and the\nresistor tolerance 1%.") != std::string::npos);
  CHECK(text.find("scatter") == std::string::npos);  // two readings: nothing to scatter

  CHECK(text.find("IDSS at the bench's drain-source voltage") != std::string::npos);
  CHECK(fit_text(fit, acc, {0.005, 12.0}).find("IDSS at VDS = 0 (lambda 0.005/V, drain supply 12V).") !=
        std::string::npos);

  const auto j = fit_json(fit, acc, {});
  CHECK(j["drain_supply"].is_null());
  CHECK(j["schema"] == 1);
  CHECK(j["idss"].get<double>() == doctest::Approx(8e-3));
  CHECK(j["vp"].get<double>() == doctest::Approx(-2.0));
  CHECK(j["scatter"].is_null());
  CHECK(j["coverage_factor"] == 2);
  CHECK(j["readings"][0]["id"].get<double>() == doctest::Approx(2e-3));
  CHECK(j["readings"][1]["rs"].get<double>() == doctest::Approx(3000));
}
