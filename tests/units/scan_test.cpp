// Tests of src/units/scan.cpp: columns in UTF-8 text, quoting, rounding to significant digits.
#include "../../src/units/scan.hpp"

#include <doctest/doctest.h>

#include "shelfstage/units/notation.hpp"

using namespace shelfstage::units::detail;

// UTF-8 (RFC 3629): continuation bytes are 10xxxxxx and start no character.
TEST_CASE("column_of counts UTF-8 code points (RFC 3629)") {
  const std::string_view text =
      "2.2\xC2\xB5"
      "F \xE2\x84\xA6";  // 2.2µF Ω
  CHECK(column_of(text, 0) == 0);
  CHECK(column_of(text, 3) == 3);  // the micro sign
  CHECK(column_of(text, 5) == 4);  // F, after the two bytes of µ
  CHECK(column_of(text, 7) == 6);  // the ohm sign
  CHECK(column_of(text, text.size()) == 7);
}

TEST_CASE("quoted keeps UTF-8, escapes control bytes and malformed sequences, cuts long text") {
  CHECK(quoted("4.7k\xCE\xA9") == "4.7k\xCE\xA9");
  CHECK(quoted("a\tb") == "a\\x09b");
  CHECK(quoted("\x7F") == "\\x7F");
  CHECK(quoted("\xC0\xAF") == "\\xC0\\xAF");  // overlong '/' is not UTF-8 (RFC 3629)
  CHECK(quoted("\xE2\x84") == "\\xE2\\x84");  // cut-off sequence
  CHECK(quoted(std::string(50, 'x')) == std::string(40, 'x') + "...");
  CHECK(char_at("a\xC2\xB5"
                "b",
                1) == "\xC2\xB5");
  CHECK(char_at("a\xFF", 1) == "\xFF");
  CHECK(char_at("a", 1).empty());
}

TEST_CASE("fail_at throws a ParseError with the column counted from 1 in the text") {
  try {
    fail_at("value", "\xC2\xB5x", 2, "bad");
    FAIL("no throw");
  } catch (const shelfstage::units::ParseError& e) {
    CHECK(std::string(e.what()) == "value '\xC2\xB5x': bad at column 2");
    CHECK(e.column() == 1);
  }
}

TEST_CASE("round_significant rounds correctly and carries the exponent") {
  CHECK(round_significant(999.7, 3).digits == "100");
  CHECK(round_significant(999.7, 3).exponent == 3);
  CHECK(round_significant(4700, 3).digits == "470");
  CHECK(round_significant(4700, 3).exponent == 3);
  CHECK(round_significant(2.2e-7, 2).digits == "22");
  CHECK(round_significant(2.2e-7, 2).exponent == -7);
  CHECK(round_significant(-0.0123456, 4).digits == "1235");
  CHECK(round_significant(-0.0123456, 4).exponent == -2);
}

TEST_CASE("to_double converts once: digits and prefix exponent give the literal's double") {
  std::size_t pos = 0;
  const Decimal d = scan_decimal("2.2", pos);
  CHECK(pos == 3);
  CHECK(to_double(false, d, -6) == 2.2e-6);
  CHECK(to_double(true, d, 3) == -2.2e3);
  CHECK_FALSE(to_double(false, d, 400).has_value());
  CHECK_FALSE(to_double(false, d, -400).has_value());
  long e = 0;
  std::size_t p = 0;
  CHECK(scan_exponent("e-12", p, e));
  CHECK(e == -12);
  p = 0;
  CHECK_FALSE(scan_exponent("eV", p, e));
  CHECK(p == 0);
  p = 0;
  CHECK(scan_exponent("e99999999999", p, e));
  CHECK(e == 1000000);
}
