// Tests of the plain-text table: alignment, widths counted in characters, empty columns.
#include "shelfstage/report/table.hpp"

#include <doctest/doctest.h>

#include <sstream>
#include <stdexcept>
#include <vector>

#include "support/lines.hpp"

using namespace shelfstage::report;

namespace {

TableLayout no_rule() {
  TableLayout layout;
  layout.rule = false;
  return layout;
}

using shelfstage::test::lines_of;

}  // namespace

TEST_CASE("display_width counts UTF-8 code points (RFC 3629), not bytes") {
  CHECK(display_width("") == 0);
  CHECK(display_width("4.7k") == 4);
  CHECK(display_width("4.7k\u03A9") == 5);  // GREEK CAPITAL LETTER OMEGA: two bytes
  CHECK(display_width("4.7k\u2126") == 5);  // OHM SIGN: three bytes
  CHECK(display_width("\u00B15%") == 3);    // PLUS-MINUS SIGN
}

TEST_CASE("columns line up: text to the left, numbers to the right") {
  TextTable t({{"VALUE", Align::right}, {"BIN"}, {"QTY", Align::right}});
  t.add_row({"4.7k\u03A9", "A6", "38"});
  t.add_row({"100\u03A9", "A12", "4"});
  const auto lines = lines_of(t.render());
  REQUIRE(lines.size() == 4);
  CHECK(lines[0] == "VALUE  BIN  QTY");
  CHECK(lines[1] == "-----  ---  ---");
  CHECK(lines[2] == "4.7k\u03A9  A6    38");
  CHECK(lines[3] == " 100\u03A9  A12    4");
}

TEST_CASE("no trailing blanks; the indent goes before every line") {
  TextTable t({{"ID", Align::right}, {"NOTE"}});
  t.add_row({"1", "last one"});
  t.add_row({"12", ""});
  const auto lines = lines_of(t.render({.indent = "  "}));
  REQUIRE(lines.size() == 4);
  for (const auto& line : lines) {
    CHECK(line.substr(0, 2) == "  ");
    CHECK(line.back() != ' ');
  }
  CHECK(lines[3] == "  12");
}

TEST_CASE("a column with no content is left out, unless asked to keep it") {
  TextTable t({{"VALUE"}, {"RESERVED"}, {"BIN"}});
  t.add_row({"10k", "", "A7"});
  CHECK(lines_of(t.render())[0] == "VALUE  BIN");
  CHECK(lines_of(t.render([] {
          TableLayout l;
          l.drop_empty_columns = false;
          return l;
        }()))[0] == "VALUE  RESERVED  BIN");
}

TEST_CASE("an empty table is its header") {
  TextTable t({{"VALUE"}, {"BIN"}});
  CHECK(t.render(no_rule()) == "VALUE  BIN\n");
}

TEST_CASE("a line break in a cell prints as a space, so one row stays one line") {
  TextTable t({{"NOTE"}});
  t.add_row({"two\nlines\tand a tab"});
  const auto lines = lines_of(t.render(no_rule()));
  REQUIRE(lines.size() == 2);
  CHECK(lines[1] == "two lines and a tab");
}

TEST_CASE("other control characters and bytes that are not UTF-8 print escaped, so no cell drives a terminal") {
  TextTable t({{"BIN"}, {"NOTE"}});
  t.add_row({std::string("A\0", 2), "\x1B[2Jred Fach \xE4"});
  const auto lines = lines_of(t.render(no_rule()));
  REQUIRE(lines.size() == 2);
  CHECK(lines[1] == "A\\x00  \\x1B[2Jred Fach \\xE4");
}

TEST_CASE("short rows are padded; a row longer than the header is a programming error") {
  TextTable t({{"A"}, {"B"}});
  t.add_row({"x"});
  CHECK(t.row_count() == 1);
  CHECK_THROWS_AS(t.add_row({"1", "2", "3"}), std::invalid_argument);
}
