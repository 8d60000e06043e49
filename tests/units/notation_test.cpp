// Tests of src/units/notation.cpp: SI notation and the IEC 60062 letter-and-digit code.
#include "shelfstage/units/notation.hpp"

#include <cmath>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "shelfstage/units/eseries.hpp"

using shelfstage::ExitCode;
using shelfstage::InputError;
using shelfstage::units::format_code;
using shelfstage::units::format_value;
using shelfstage::units::parse_capacitance;
using shelfstage::units::parse_value;
using shelfstage::units::ParseError;
using shelfstage::units::try_parse_value;
using shelfstage::units::Unit;

namespace {

// The message and column of the ParseError that parse_value throws for text.
struct Failure {
  std::string message;
  std::size_t column = 0;
  bool thrown = false;
};
Failure failure(std::string_view text, Unit expect = Unit::none) {
  Failure f;
  try {
    parse_value(text, expect);
  } catch (const ParseError& e) {
    f.message = e.what();
    f.column = e.column();
    f.thrown = true;
  }
  return f;
}

bool within(double a, double b, double rel) { return std::fabs(a - b) <= rel * std::fabs(b); }

}  // namespace

// Values as IEC 60062 marks them: the multiplier letter stands for the decimal point.
// The equalities are exact: parse_value converts "4K7" as the literal 4.7e3.
TEST_CASE("IEC 60062 letter-and-digit code: 4K7 R47 2M2 4n7 1R0") {
  CHECK(parse_value("4K7") == 4.7e3);
  CHECK(parse_value("R47") == 0.47);
  CHECK(parse_value("2M2") == 2.2e6);
  CHECK(parse_value("4n7") == 4.7e-9);
  CHECK(parse_value("1R0") == 1.0);
}

TEST_CASE("IEC 60062 letter-and-digit code: 2u2 p68 4k7 0R1 1K 10R 100R K47 1G5") {
  CHECK(parse_value("2u2") == 2.2e-6);
  CHECK(parse_value("p68") == 0.68e-12);
  CHECK(parse_value("4k7") == 4.7e3);
  CHECK(parse_value("0R1") == 0.1);  // common practice (IEC 60062 writes R10)
  CHECK(parse_value("1K") == 1000.0);
  CHECK(parse_value("10R") == 10.0);
  CHECK(parse_value("100R") == 100.0);
  CHECK(parse_value("K47") == 470.0);  // IEC 60062: a leading letter, like R47 (from memory)
  CHECK(parse_value("1G5") == 1.5e9);
  CHECK(parse_value("4m7") == 4.7e-3);            // IEC 60062 capacitance 4m7 = 4.7 mF
  CHECK(parse_value("4F7", Unit::farad) == 4.7);  // IEC 60062 capacitance 4F7 = 4.7 F
  CHECK(parse_value("4\xC2\xB5"
                    "7") == 4.7e-6);  // 4µ7 with U+00B5 MICRO SIGN
}

// Mixed notation as parts are labelled on a shelf (common practice).
TEST_CASE("Mixed SI and IEC 60062 notation: 1k5 3K3 2M2 4.7M 6k8 100n 2u2") {
  CHECK(parse_value("1k5") == 1.5e3);
  CHECK(parse_value("3K3") == 3.3e3);
  CHECK(parse_value("2M2") == 2.2e6);
  CHECK(parse_value("4.7M") == 4.7e6);
  CHECK(parse_value("6k8") == 6.8e3);
  CHECK(parse_value("100n") == 100e-9);
  CHECK(parse_value("2u2") == 2.2e-6);
}

// SI prefixes (SI Brochure, 9th edition, table 7) and the SPICE `meg` (ngspice manual, 2.3).
TEST_CASE("SI prefix notation per the SI Brochure and SPICE: 4.7k 100n 2.2u 1M 1m 10meg") {
  CHECK(parse_value("4.7k") == 4.7e3);
  CHECK(parse_value("100n") == 1e-7);
  CHECK(parse_value("2.2u") == 2.2e-6);
  CHECK(parse_value("2.2\xC2\xB5") == 2.2e-6);  // U+00B5 MICRO SIGN
  CHECK(parse_value("2.2\xCE\xBC") == 2.2e-6);  // U+03BC GREEK SMALL LETTER MU
  CHECK(parse_value("1M") == 1e6);              // SI: M is mega ...
  CHECK(parse_value("1m") == 1e-3);             // ... and m is milli
  CHECK(parse_value("0.47") == 0.47);
  CHECK(parse_value("1e3") == 1000.0);
  CHECK(parse_value("1E-3") == 1e-3);
  CHECK(parse_value("2.5e+2k") == 2.5e5);
  CHECK(parse_value("10meg") == 1e7);
  CHECK(parse_value("10MEG") == 1e7);
  CHECK(parse_value("10Meg") == 1e7);
  CHECK(parse_value("1G") == 1e9);
  CHECK(parse_value("47p") == 47e-12);
  CHECK(parse_value(".5") == 0.5);
  CHECK(parse_value("5.") == 5.0);
  CHECK(parse_value("1.5 k") == 1.5e3);  // a space before the prefix
  CHECK(parse_value("  4.7k\t") == 4.7e3);
  CHECK(parse_value("0") == 0.0);
  CHECK(parse_value("0.000") == 0.0);
}

TEST_CASE("Signs: a leading + or - (or U+2212 MINUS SIGN); range checks are the caller's") {
  CHECK(parse_value("-2.5") == -2.5);
  CHECK(parse_value("+2.5") == 2.5);
  CHECK(parse_value("\xE2\x88\x92"
                    "2.5V",
                    Unit::volt) == -2.5);
  CHECK(parse_value("-4K7") == -4.7e3);
  CHECK(parse_value("-0") == 0.0);
  CHECK_FALSE(std::signbit(parse_value("-0")));
}

// Upper-case P, N, U appear on part markings ("100P", "4N7", "10UF"); m and M never fold.
TEST_CASE("Prefix case: folded where unambiguous (common practice), m and M kept apart") {
  CHECK(parse_value("100P") == 100e-12);
  CHECK(parse_value("4N7") == 4.7e-9);
  CHECK(parse_value("10UF", Unit::farad) == 10e-6);
  CHECK(parse_value("2.2K") == 2.2e3);
  CHECK(parse_value("1g") == 1e9);
  CHECK(parse_value("3m3") == 3.3e-3);
  CHECK(parse_value("3M3") == 3.3e6);
  CHECK_THROWS_AS(parse_value("10f"), ParseError);  // femto or farad? refused
  CHECK_THROWS_AS(parse_value("10a"), ParseError);  // atto or ampere? refused
}

TEST_CASE("Unit suffixes: ohm (U+03A9, U+2126, ohm, ohms, R), F, V, A, W, Hz") {
  CHECK(parse_value("4.7k\xCE\xA9", Unit::ohm) == 4.7e3);      // U+03A9
  CHECK(parse_value("4.7k\xE2\x84\xA6", Unit::ohm) == 4.7e3);  // U+2126 OHM SIGN
  CHECK(parse_value("4.7 k ohm", Unit::ohm) == 4.7e3);
  CHECK(parse_value("10 Ohms", Unit::ohm) == 10.0);
  CHECK(parse_value("4K7 \xCE\xA9", Unit::ohm) == 4.7e3);
  CHECK(parse_value("100r", Unit::ohm) == 100.0);
  CHECK(parse_value("100nF", Unit::farad) == 1e-7);
  CHECK(parse_value("100 nF", Unit::farad) == 1e-7);
  CHECK(parse_value("9V", Unit::volt) == 9.0);
  CHECK(parse_value("9v", Unit::volt) == 9.0);
  CHECK(parse_value("1.2mA", Unit::ampere) == 1.2e-3);
  CHECK(parse_value("0.25W", Unit::watt) == 0.25);
  CHECK(parse_value("10kHz", Unit::hertz) == 1e4);
  CHECK(parse_value("10 khz", Unit::hertz) == 1e4);
  CHECK(parse_value("1MHz", Unit::hertz) == 1e6);
  CHECK(parse_value("10megohm") == 1e7);
  // Without an expected unit any unit is accepted.
  CHECK(parse_value("100nF") == 1e-7);
}

TEST_CASE("Errors name the text and the column (counted from 1 in the message)") {
  Failure f = failure("4.7q");
  REQUIRE(f.thrown);
  CHECK(f.message == "value '4.7q': unknown multiplier 'q' at column 4");
  CHECK(f.column == 3);

  f = failure("");
  CHECK(f.message == "value '': empty");
  f = failure("   ");
  CHECK(f.message == "value '   ': empty");

  f = failure("1k2k");
  CHECK(f.message == "value '1k2k': second multiplier 'k' (a value takes one) at column 4");
  f = failure("4.7kk");
  CHECK(f.message == "value '4.7kk': second multiplier 'k' (a value takes one) at column 5");

  f = failure("abc");
  CHECK(f.message == "value 'abc': expected a number, found 'a' at column 1");
  f = failure("- 5");
  CHECK(f.message == "value '- 5': expected a number, found ' ' at column 2");
  f = failure("4,7k");
  CHECK(f.message == "value '4,7k': unexpected ',' (write the decimal point as '.') at column 2");
  f = failure("1.2.3");
  CHECK(f.message == "value '1.2.3': unexpected '.' at column 4");
  f = failure("4.7k!");
  CHECK(f.message == "value '4.7k!': unexpected '!' at column 5");
  f = failure("4.7kx");
  CHECK(f.message == "value '4.7kx': unknown unit 'x' at column 5");
  f = failure("4K7.5");
  CHECK(f.message == "value '4K7.5': unexpected '.' at column 4");
  f = failure("4 7");
  CHECK(f.message == "value '4 7': unexpected '7' at column 3");

  // Columns count characters: the micro sign is one, though two bytes in UTF-8.
  f = failure("2.2\xC2\xB5q");
  CHECK(f.message == "value '2.2\xC2\xB5q': unknown unit 'q' at column 5");
  CHECK(f.column == 4);
}

TEST_CASE("Errors: a unit that does not fit the quantity, and R on a capacitor") {
  Failure f = failure("100nF", Unit::ohm);
  CHECK(f.message == "value '100nF': unit 'F' where ohms are expected at column 5");
  f = failure("4.7k ohm", Unit::farad);
  CHECK(f.message == "value '4.7k ohm': unit 'ohm' where farads are expected at column 6");
  // EIA marks 4.7 pF as 4R7; here R always means ohms, so a capacitor value refuses it.
  f = failure("4R7", Unit::farad);
  CHECK(f.message == "value '4R7': unit 'R' where farads are expected at column 2");
  f = failure("4R7F");
  CHECK(f.message == "value '4R7F': unit 'F' after the code letter 'R', which marks ohms at column 4");
  f = failure("4F7", Unit::ohm);
  CHECK(f.message == "value '4F7': unit 'F' where ohms are expected at column 2");
  f = failure("9V", Unit::ampere);
  CHECK(f.thrown);
}

TEST_CASE("Errors: NaN, infinities and values beyond the SI prefixes (1e-24 ... 1e24)") {
  for (const char* text : {"nan", "NaN", "inf", "-inf", "infinity", "1e999", "1e-999", "1e25", "-2e24", "1e-25", "1e",
                           "e3", "k", "R", "-", "+", ".", "0x10", "1/2"}) {
    CAPTURE(text);
    CHECK_THROWS_AS(parse_value(text), ParseError);
  }
  CHECK(parse_value("1e24") == 1e24);
  CHECK(parse_value("1e-24") == 1e-24);
  CHECK(failure("1e99").message == "value '1e99': out of range (the magnitude must lie between 1e-24 and 1e24)");
}

TEST_CASE("ParseError is an InputError: exit status 1") {
  try {
    parse_value("ten");
    FAIL("no throw");
  } catch (const InputError& e) {
    CHECK(e.code() == ExitCode::bad_input);
  }
}

TEST_CASE("Messages escape control bytes and bytes that are not UTF-8") {
  CHECK(failure("4\x01").message == "value '4\\x01': unexpected '\\x01' at column 2");
  CHECK(failure("4\xFF").message == "value '4\\xFF': unknown multiplier '\\xFF' at column 2");
}

TEST_CASE("try_parse_value returns false instead of throwing") {
  double v = -1;
  CHECK(try_parse_value("4k7", v));
  CHECK(v == 4.7e3);
  CHECK_FALSE(try_parse_value("4k7k", v));
  CHECK(try_parse_value("100n", v, Unit::ohm));  // no unit written: it fits any
  CHECK(v == 1e-7);
  CHECK_FALSE(try_parse_value("100nF", v, Unit::ohm));
}

// Technician style (common practice): three significant digits, SI prefix, trailing zeros
// dropped, micro as the ASCII "u" that SPICE reads (ngspice manual, 2.3).
TEST_CASE("format_value: technician style with three significant digits") {
  CHECK(format_value(4700) == "4.7k");
  CHECK(format_value(2.2e-7) == "220n");
  CHECK(format_value(1e6) == "1M");
  CHECK(format_value(0.47) == "0.47");
  CHECK(format_value(10) == "10");
  CHECK(format_value(1.5e-12) == "1.5p");
  CHECK(format_value(4.75e3) == "4.75k");
  CHECK(format_value(12345) == "12.3k");
  CHECK(format_value(999.7) == "1k");  // rounding carries into the next prefix
  CHECK(format_value(999.4) == "999");
  CHECK(format_value(0) == "0");
  CHECK(format_value(2.2e-6) == "2.2u");
  CHECK(format_value(1e9) == "1G");
  CHECK(format_value(0.0047) == "0.0047");
  CHECK(format_value(0.0005) == "500u");
  CHECK(format_value(4.7e10) == "47G");
  CHECK(format_value(1.5e-15) == "1.5e-15");  // beyond the prefixes: scientific
  CHECK(format_value(2.5e13) == "2.5e13");
  CHECK(format_value(-2.5, Unit::volt) == "-2.5V");
  CHECK(format_value(4740, Unit::none, 2) == "4.7k");
  CHECK(format_value(4747, Unit::none, 4) == "4.747k");
  CHECK(format_value(std::nan("")) == "nan");
}

TEST_CASE("format_value with a unit: 4.7kΩ 100nF 2.5V 1.2mA 470nF 0.47Ω 500mV 10kHz") {
  CHECK(format_value(4700, Unit::ohm) == "4.7k\xCE\xA9");
  CHECK(format_value(1e-7, Unit::farad) == "100nF");
  CHECK(format_value(2.5, Unit::volt) == "2.5V");
  CHECK(format_value(1.2e-3, Unit::ampere) == "1.2mA");
  CHECK(format_value(0.47e-6, Unit::farad) == "470nF");    // farads keep their prefix below 1
  CHECK(format_value(0.47, Unit::ohm) == "0.47\xCE\xA9");  // as a resistor is marked
  CHECK(format_value(0.5, Unit::volt) == "500mV");
  CHECK(format_value(1e4, Unit::hertz) == "10kHz");
  CHECK(format_value(0.25, Unit::watt) == "250mW");
  CHECK(format_value(0, Unit::volt) == "0V");
}

TEST_CASE("IEC 60062 code written: 4K7 R47 2M2 1R0 10R 100R 1K0 10K") {
  CHECK(format_code(4700, Unit::ohm) == "4K7");
  CHECK(format_code(0.47, Unit::ohm) == "R47");
  CHECK(format_code(2.2e6, Unit::ohm) == "2M2");
  CHECK(format_code(1, Unit::ohm) == "1R0");
  CHECK(format_code(10, Unit::ohm) == "10R");
  CHECK(format_code(100, Unit::ohm) == "100R");
  CHECK(format_code(1000, Unit::ohm) == "1K0");
  CHECK(format_code(10000, Unit::ohm) == "10K");
  CHECK(format_code(4750, Unit::ohm) == "4K75");
  CHECK(format_code(47.5e3, Unit::ohm) == "47K5");
  CHECK(format_code(0.1, Unit::ohm) == "R10");  // IEC 60062 writes R10 (from memory)
  CHECK(format_code(999.7, Unit::ohm) == "1K0");
  CHECK(format_code(1e9, Unit::ohm) == "1G0");
  CHECK(format_code(2.2e12, Unit::ohm) == "2200G");
  CHECK(format_code(0, Unit::ohm) == "0R");  // zero-ohm link, common practice
}

TEST_CASE("IEC 60062 code written: 4n7 100n 2u2 p68 47p 1n0") {
  CHECK(format_code(4.7e-9, Unit::farad) == "4n7");
  CHECK(format_code(1e-7, Unit::farad) == "100n");
  CHECK(format_code(2.2e-6, Unit::farad) == "2u2");
  CHECK(format_code(6.8e-13, Unit::farad) == "p68");
  CHECK(format_code(47e-12, Unit::farad) == "47p");
  CHECK(format_code(1e-9, Unit::farad) == "1n0");
  CHECK(format_code(4.7e-3, Unit::farad) == "4m7");
  CHECK(format_code(470e-6, Unit::farad) == "470u");
  CHECK(format_code(4.7, Unit::farad) == "4F7");
  CHECK(format_code(4700, Unit::farad) == "4700F");
  CHECK_THROWS_AS(format_code(5, Unit::volt), InputError);
  CHECK_THROWS_AS(format_code(-4700, Unit::ohm), InputError);
  CHECK_THROWS_AS(format_code(0, Unit::farad), InputError);
  CHECK_THROWS_AS(format_code(std::nan(""), Unit::ohm), InputError);
}

TEST_CASE("Round trip: parse_value(format_value(x)) within 0.5 % from 1e-15 to 1e15") {
  int checked = 0;
  for (double x = 1e-15; x < 1e15; x *= 1.0137) {
    for (const Unit u : {Unit::none, Unit::ohm, Unit::farad, Unit::volt, Unit::hertz}) {
      for (const double v : {x, -x}) {
        const std::string text = format_value(v, u);
        CAPTURE(text);
        CHECK(within(parse_value(text, u), v, 0.005));
        ++checked;
      }
    }
  }
  CHECK(checked > 10000);
}

TEST_CASE("Round trip: parse_value(format_code(x)) within 0.5 % for resistors and capacitors") {
  for (double r = 0.01; r < 1e14; r *= 1.0173) {
    const std::string text = format_code(r, Unit::ohm);
    CAPTURE(text);
    CHECK(within(parse_value(text, Unit::ohm), r, 0.005));
  }
  for (double c = 1e-14; c < 1e4; c *= 1.0173) {
    const std::string text = format_code(c, Unit::farad);
    CAPTURE(text);
    CHECK(within(parse_value(text, Unit::farad), c, 0.005));
  }
}

// IEC 60063 values have at most three significant figures, so they print and read back
// exactly, in every decade a bench uses.
TEST_CASE("IEC 60063 E192 values survive format_value and format_code exactly") {
  for (const double m : shelfstage::units::eseries(192)) {
    for (int decade = -12; decade <= 9; ++decade) {
      const double v = std::stod(std::to_string(m) + "e" + std::to_string(decade));
      CAPTURE(v);
      CHECK(parse_value(format_value(v)) == v);
      if (decade >= -1) CHECK(parse_value(format_code(v, Unit::ohm)) == v);
      if (decade <= -1) CHECK(parse_value(format_code(v, Unit::farad)) == v);
    }
  }
}

TEST_CASE("unit_symbol") {
  using shelfstage::units::unit_symbol;
  CHECK(unit_symbol(Unit::ohm) == "\xCE\xA9");
  CHECK(unit_symbol(Unit::farad) == "F");
  CHECK(unit_symbol(Unit::hertz) == "Hz");
  CHECK(unit_symbol(Unit::none).empty());
}

TEST_CASE("a capacitance states its scale: a multiplier, an exponent or the unit; a bare number is refused") {
  // The rule is ours (a bare "1" on a bag of capacitors means 1 uF far more often than 1 F):
  // every way of writing the scale is accepted, and only a bare number is refused.
  CHECK(parse_capacitance("100n") == 100e-9);
  CHECK(parse_capacitance("4u7") == 4.7e-6);
  CHECK(parse_capacitance("2.2 uF") == 2.2e-6);
  CHECK(parse_capacitance("1e-6") == 1e-6);
  CHECK(parse_capacitance("1F") == 1.0);
  CHECK(parse_capacitance("0.0047F") == 0.0047);
  for (const char* bare : {"1", "4.7", " 1 ", "0.0047", "+1", "100"}) {
    CAPTURE(bare);
    CHECK_THROWS_AS(parse_capacitance(bare), ParseError);
  }
  try {
    parse_capacitance("1");
  } catch (const ParseError& e) {
    CHECK(std::string(e.what()).starts_with("value '1': a capacitance needs its multiplier or unit"));
  }
  // Whatever parse_value refuses stays refused, with its own message.
  CHECK_THROWS_WITH_AS(parse_capacitance("4R7"), doctest::Contains("value '4R7'"), ParseError);
}

TEST_CASE("slew rates as datasheets write them: V/us, V/ms, V/s, or a bare figure in V/s") {
  using shelfstage::units::parse_slew_rate;
  // The same decimal conversion as parse_value (NOTES 1): 0.6 V/us is the double 6e5 exactly.
  CHECK(parse_slew_rate("0.5V/us") == 5e5);
  CHECK(parse_slew_rate("0.6V/us") == 6e5);
  CHECK(parse_slew_rate("13V/us") == 13e6);
  CHECK(parse_slew_rate(" 13 V/us ") == 13e6);
  CHECK(parse_slew_rate("13V/\xC2\xB5s") == 13e6);  // U+00B5 MICRO SIGN
  CHECK(parse_slew_rate("13/us") == 13e6);
  CHECK(parse_slew_rate("500V/ms") == 5e5);
  CHECK(parse_slew_rate("2.5V/s") == 2.5);
  CHECK(parse_slew_rate("500k") == 5e5);  // volts per second
  CHECK(parse_slew_rate("13M") == 13e6);
  // A volt without its time could be per microsecond or per second: refused, as is any
  // other time, and a bad number names the whole text.
  CHECK_THROWS_WITH_AS(parse_slew_rate("13V"), doctest::Contains("slew '13V': a slew rate is volts per time"),
                       ParseError);
  CHECK_THROWS_WITH_AS(parse_slew_rate("13V/ks"), doctest::Contains("'/ks' is not a unit here"), ParseError);
  CHECK_THROWS_WITH_AS(parse_slew_rate("1q3V/us"), doctest::Contains("slew '1q3V/us'"), ParseError);
  CHECK_THROWS_AS(parse_slew_rate("13A/us"), ParseError);
  CHECK_THROWS_AS(parse_slew_rate(""), ParseError);
}

TEST_CASE("open-loop gains: V/V with prefixes, V/mV, V/uV and dB") {
  using shelfstage::units::parse_open_loop_gain;
  CHECK(parse_open_loop_gain("200k") == 2e5);
  CHECK(parse_open_loop_gain("2e5") == 2e5);
  CHECK(parse_open_loop_gain("200V/mV") == 2e5);
  CHECK(parse_open_loop_gain("25 V/mV") == 25e3);
  CHECK(parse_open_loop_gain("1V/uV") == 1e6);
  CHECK(parse_open_loop_gain("200000V/V") == 2e5);
  // 20 log10: 100 dB is 1e5 V/V (IEC 60027-3), to the last bits of pow().
  CHECK(parse_open_loop_gain("100dB") == doctest::Approx(1e5).epsilon(1e-12));
  CHECK(parse_open_loop_gain("106 dB") == doctest::Approx(std::pow(10.0, 106.0 / 20.0)).epsilon(1e-12));
  CHECK_THROWS_WITH_AS(parse_open_loop_gain("200V"), doctest::Contains("gain '200V': an open-loop gain is V/V"),
                       ParseError);
  CHECK_THROWS_WITH_AS(parse_open_loop_gain("200V/nV"), doctest::Contains("'/nV' is not a unit here"), ParseError);
  CHECK_THROWS_WITH_AS(parse_open_loop_gain("100q"), doctest::Contains("gain '100q'"), ParseError);
}
