// Tests of naming a stock line on the command line: by id, or by kind, value and bin.
#include "selector.hpp"

#include <doctest/doctest.h>

#include "shelfstage/error.hpp"

using namespace shelfstage;
using namespace shelfstage::cli;
using store::Part;
using store::PartKind;

namespace {

Part part(std::int64_t id, PartKind kind, double value, std::string bin, std::string device = "") {
  Part p;
  p.id = id;
  p.kind = kind;
  p.value = value;
  p.bin = std::move(bin);
  p.device = std::move(device);
  p.qty = 10;
  return p;
}

std::string message_of(auto&& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  return "(no error)";
}

}  // namespace

TEST_CASE("a bare number is a line id") {
  const auto s = parse_selector("23");
  REQUIRE(s.id);
  CHECK(*s.id == 23);
  CHECK(message_of([] { parse_selector("0"); }) == "stock line '0' is not a line id");
}

TEST_CASE("KIND:VALUE[@BIN] reads the value in IEC 60062 or SI notation") {
  const auto r = parse_selector("R:4k7@A6");
  CHECK_FALSE(r.id);
  CHECK(r.kind == PartKind::resistor);
  CHECK(r.value == doctest::Approx(4700.0));
  REQUIRE(r.bin);
  CHECK(*r.bin == "A6");
  const auto c = parse_selector("c:100n");
  CHECK(c.kind == PartKind::capacitor);
  CHECK(c.value == doctest::Approx(100e-9));
  CHECK_FALSE(c.bin);
  const auto q = parse_selector("NPN:SQ-410@D10");
  CHECK(q.kind == PartKind::npn);
  CHECK(q.device == "SQ-410");
}

TEST_CASE("selectors a tired person might type are refused with a hint") {
  CHECK(message_of([] { parse_selector("4k7"); }).find("KIND:VALUE[@BIN]") != std::string::npos);
  CHECK(message_of([] { parse_selector("L:10u"); }) ==
        "stock line 'L:10u': kind 'L' is not one of R, C, NJFET, PJFET, NPN, PNP, OPAMP");
  CHECK(message_of([] { parse_selector("R:"); }) == "stock line 'R:': the value after ':' is empty");
  CHECK(message_of([] { parse_selector("R:4k7@"); }) == "stock line 'R:4k7@': the bin after '@' is empty");
  CHECK(message_of([] { parse_selector(""); }).starts_with("stock line '' is empty"));
}

TEST_CASE("select_part finds one line, or lists the candidates") {
  const std::vector<Part> shelf{part(1, PartKind::resistor, 4700, "A6"), part(2, PartKind::resistor, 4700, "A11"),
                                part(3, PartKind::capacitor, 4.7e-9, "B3"), part(4, PartKind::npn, 0, "D10", "SQ-410")};
  CHECK(select_part(parse_selector("2"), shelf).id == 2);
  CHECK(select_part(parse_selector("R:4.7k@a11"), shelf).id == 2);  // bins ignore case
  CHECK(select_part(parse_selector("C:4n7"), shelf).id == 3);       // 4n7 is 4.7 nF (IEC 60062)
  CHECK(select_part(parse_selector("npn:sq-410"), shelf).id == 4);
  const auto ambiguous = message_of([&] { select_part(parse_selector("R:4k7"), shelf); });
  CHECK(ambiguous.starts_with("stock line 'R:4k7' matches 2 lines: 1 ("));
  CHECK(ambiguous.find(", 2 (") != std::string::npos);
  CHECK(ambiguous.ends_with("give the line id or add @BIN"));
  // Two lines in one bin that differ in tolerance: only the id tells them apart.
  auto precise = part(5, PartKind::resistor, 4700, "A6");
  precise.tol = units::Tolerance{0.01, 0.01};
  auto same_bin = shelf;
  same_bin.push_back(precise);
  CHECK(message_of([&] { select_part(parse_selector("R:4k7@A6"), same_bin); }).ends_with("give the line id"));
  CHECK(message_of([&] { select_part(parse_selector("9"), shelf); }).starts_with("stock line 9 does not exist"));
  CHECK(message_of([&] {
          select_part(parse_selector("R:10k"), shelf);
        }).starts_with("stock line 'R:10k' matches nothing"));
  // A capacitor of 4700 F is not the 4.7 kilohm resistor: the kind is part of the match.
  CHECK(message_of([&] { select_part(parse_selector("C:4700F@A6"), shelf); }).find("matches nothing") !=
        std::string::npos);
  // Written bare, a capacitance is refused as in the stock (it would be farads).
  CHECK(message_of([&] {
          select_part(parse_selector("C:4700@A6"), shelf);
        }).starts_with("stock line value '4700': a capacitance needs its multiplier or unit"));
}
