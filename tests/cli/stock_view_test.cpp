// Tests of how the stock is shown: the grouped table, low-stock marks, and the JSON contract.
#include "stock_view.hpp"

#include <doctest/doctest.h>

#include <set>

using namespace shelfstage;
using namespace shelfstage::cli;
using store::Part;
using store::PartKind;

namespace {

Part resistor(std::int64_t id, double ohms, int qty, std::string bin) {
  Part p;
  p.id = id;
  p.kind = PartKind::resistor;
  p.value = ohms;
  p.qty = qty;
  p.bin = std::move(bin);
  p.tol = units::Tolerance{0.05, 0.05};
  p.power_w = 0.25;
  return p;
}

Part electrolytic(std::int64_t id, double farads, double volts, int qty) {
  Part p;
  p.id = id;
  p.kind = PartKind::capacitor;
  p.value = farads;
  p.volts = volts;
  p.qty = qty;
  p.dielectric = "electrolytic";
  p.tol = units::Tolerance{0.20, 0.80};
  p.bin = "C4";
  return p;
}

Part transistor(std::int64_t id, PartKind kind, std::string device, int qty) {
  Part p;
  p.id = id;
  p.kind = kind;
  p.device = std::move(device);
  p.qty = qty;
  p.bin = "D1";
  return p;
}

}  // namespace

TEST_CASE("low and out marks follow the pieces available, not the pieces on hand") {
  auto p = resistor(1, 4700, 0, "A6");
  CHECK(stock_status(p) == "out");
  p.qty = kLowMark;
  CHECK(stock_status(p) == "low");
  p.qty = kLowMark + 1;
  CHECK(stock_status(p) == "");
  p.reserved = 1;  // held for a planned build: only kLowMark left to use
  CHECK(stock_status(p) == "low");
  p.reserved = p.qty;
  CHECK(stock_status(p) == "out");
}

TEST_CASE("values print as a technician writes them, with the unit") {
  CHECK(value_text(resistor(1, 4700, 1, "A6")) == "4.7k\u03A9");
  CHECK(value_text(electrolytic(2, 100e-6, 16, 1)) == "100uF");
  CHECK(value_text(transistor(3, PartKind::npn, "SQ-410", 1)) == "SQ-410");
  // Resistor power ratings as they are marked (0.25 W, 0.6 W): a plain decimal, not mW.
  CHECK(power_text(0.25) == "0.25W");
  CHECK(power_text(0.6) == "0.6W");
  CHECK(power_text(1) == "1W");
  CHECK(describe_part(resistor(1, 4700, 1, "A6")) == "R 4.7k\u03A9 5% 0.25W bin A6");
  CHECK(describe_part(electrolytic(2, 100e-6, 16, 1)) == "C 100uF -20/+80% 16V electrolytic bin C4");
}

TEST_CASE("the table groups by kind, in the order a drawer is sorted") {
  const std::vector<Part> parts{resistor(1, 4700, 38, "A6"), resistor(2, 1e6, 1, "A11"),
                                electrolytic(3, 100e-6, 6.3, 0), transistor(4, PartKind::njfet, "SJ-101", 12),
                                transistor(5, PartKind::pnp, "SQ-510", 3)};
  const std::string table = stock_table(parts);
  const auto r = table.find("Resistors (2 lines)");
  const auto c = table.find("Capacitors (1 line)");
  const auto j = table.find("JFETs (1 line)");
  const auto b = table.find("BJTs (1 line)");
  REQUIRE(r != std::string::npos);
  REQUIRE(c != std::string::npos);
  REQUIRE(j != std::string::npos);
  REQUIRE(b != std::string::npos);
  CHECK(r < c);
  CHECK(c < j);
  CHECK(j < b);
  CHECK(table.find("6.3V") != std::string::npos);
  CHECK(table.find("-20/+80%") != std::string::npos);
  CHECK(table.find(" out") != std::string::npos);  // the 100 uF line has none left
  CHECK(table.find(" low") != std::string::npos);  // the single 1M
  CHECK(table.ends_with("5 lines, 54 pieces on hand; 1 out, 1 low (at most 2 available).\n"));
}

TEST_CASE("an empty shelf says how to fill it") {
  CHECK(stock_table({}).find("shelfstage stock import") != std::string::npos);
}

TEST_CASE("stock JSON: the keys and types docs/interface.md lists") {
  const auto doc = stock_json(
      {resistor(1, 4700, 38, "A6"), electrolytic(2, 2.2e-6, 50, 5), transistor(3, PartKind::njfet, "SJ-101", 12)});
  CHECK(doc["schema"] == 1);
  const auto& parts = doc["parts"];
  REQUIRE(parts.size() == 3);
  for (const auto& p : parts) {
    for (const char* key : {"kind", "value", "qty", "reserved", "bin", "tol", "power", "volts", "dielectric", "note"}) {
      CHECK_MESSAGE(p.contains(key), key);
    }
  }
  // Values are plain SI numbers (ohms, farads), never strings with prefixes.
  CHECK(parts[0]["kind"] == "R");
  CHECK(parts[0]["value"].is_number());
  CHECK(parts[0]["value"].get<double>() == doctest::Approx(4700.0));
  CHECK(parts[0]["tol"] == "5%");
  CHECK(parts[0]["power"].get<double>() == doctest::Approx(0.25));
  CHECK(parts[0]["volts"].is_null());
  CHECK(parts[0]["dielectric"].is_null());
  CHECK(parts[1]["value"].get<double>() == doctest::Approx(2.2e-6));
  CHECK(parts[1]["tol"] == "-20/+80%");
  CHECK(parts[1]["volts"].get<double>() == doctest::Approx(50.0));
  CHECK(parts[1]["dielectric"] == "electrolytic");
  // Transistors: the value is the device name; no tolerance.
  CHECK(parts[2]["kind"] == "NJFET");
  CHECK(parts[2]["value"] == "SJ-101");
  CHECK(parts[2]["tol"].is_null());
  CHECK(parts[2]["qty"] == 12);
  CHECK(parts[2]["reserved"] == 0);
  CHECK(parts[2]["status"] == "ok");
}
