// Tests of command-line argument reading: counts, changes, values, ranges, input files.
#include "args.hpp"

#include <doctest/doctest.h>

#include <fstream>
#include <sstream>

#include "shelfstage/error.hpp"
#include "temp_dir.hpp"

using namespace shelfstage;
using namespace shelfstage::cli;

namespace {

std::string message_of(auto&& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  return "(no error)";
}

}  // namespace

TEST_CASE("parse_count: whole numbers of pieces") {
  CHECK(parse_count("qty", "12") == 12);
  CHECK(parse_count("qty", "+12") == 12);
  CHECK(parse_count("qty", " 7 ") == 7);
  CHECK(parse_count("qty", "0") == 0);
  // The message form RULES.md gives as its example of naming the field and the value.
  CHECK(message_of([] { parse_count("qty", "ten"); }) == "qty 'ten' is not a whole number");
  CHECK(message_of([] { parse_count("qty", "-3"); }) == "qty '-3' must not be negative");
  CHECK(message_of([] { parse_count("qty", "1.5"); }) == "qty '1.5' is not a whole number");
  CHECK(message_of([] { parse_count("qty", ""); }) == "qty '' is not a whole number");
  CHECK(message_of([] { parse_count("qty", "12 pcs"); }) == "qty '12 pcs' is not a whole number");
  CHECK(message_of([] { parse_count("qty", "99999999999"); }) == "qty '99999999999' is too large");
  CHECK(message_of([] { parse_count("qty", "2147483648"); }) == "qty '2147483648' is too large");
  CHECK(parse_count("qty", "2147483647") == 2147483647);
}

TEST_CASE("parse_delta: a signed change other than zero") {
  CHECK(parse_delta("delta", "+5") == 5);
  CHECK(parse_delta("delta", "-3") == -3);
  CHECK(parse_delta("delta", "4") == 4);
  CHECK(message_of([] { parse_delta("delta", "0"); }) == "delta '0' changes nothing");
  CHECK(message_of([] { parse_delta("delta", "-"); }).starts_with("delta '-' is not a whole number"));
  CHECK(message_of([] { parse_delta("delta", "--3"); }).starts_with("delta '--3' is not a whole number"));
}

TEST_CASE("parse_quantity names the field when the value is bad") {
  // IEC 60062 letter-and-digit code: 4K7 is 4.7 kilohm.
  CHECK(parse_quantity("value", "4k7", units::Unit::ohm) == doctest::Approx(4700.0));
  CHECK(parse_quantity("--volts", "6.3", units::Unit::volt) == doctest::Approx(6.3));
  const auto msg = message_of([] { parse_quantity("--volts", "six", units::Unit::volt); });
  CHECK(msg.starts_with("--volts 'six': "));
}

TEST_CASE("parse_range: datasheet ranges in either order") {
  const auto idss = parse_range("--idss", "1m..5m", units::Unit::ampere);
  CHECK(idss.min == doctest::Approx(1e-3));
  CHECK(idss.max == doctest::Approx(5e-3));
  // VGS(off) of an N-channel part as a datasheet lists it: -0.5 .. -3 V.
  const auto vp = parse_range("--vp", "-0.5..-3", units::Unit::volt);
  CHECK(vp.min == doctest::Approx(-3.0));
  CHECK(vp.max == doctest::Approx(-0.5));
  const auto one = parse_range("--hfe", "250", units::Unit::none);
  CHECK(one.min == one.max);
  CHECK(message_of([] { parse_range("--idss", "1m..", units::Unit::ampere); }) ==
        "--idss '1m..' needs both ends, as in 1m..5m");
  CHECK(message_of([] { parse_range("--idss", "1m..x", units::Unit::ampere); }).starts_with("--idss 'x': "));
}

TEST_CASE("parse_fraction: a percentage or a plain fraction, as the pieces CSV reads uncertainty") {
  CHECK(parse_fraction("--uncertainty", "3%") == doctest::Approx(0.03));
  CHECK(parse_fraction("--uncertainty", " 0.5 % ") == doctest::Approx(0.005));
  CHECK(parse_fraction("--uncertainty", "0.03") == doctest::Approx(0.03));
  CHECK(parse_fraction("--rs-tol", "0%") == 0.0);
  CHECK(message_of([] { parse_fraction("--uncertainty", "3"); }) ==
        "--uncertainty '3' reads as 300 %; write 3% if that is meant");
  CHECK(message_of([] { parse_fraction("--uncertainty", "-1%"); }) == "--uncertainty '-1%' must not be negative");
  CHECK(message_of([] { parse_fraction("--meter-accuracy", "half"); }) ==
        "--meter-accuracy 'half' is not a percentage or fraction (3% or 0.03)");
}

TEST_CASE("read_input: a file, standard input, or an error naming the file") {
  test::TempDir dir;
  const auto file = dir / "stock.csv";
  std::ofstream(file) << "kind,value,qty\nR,4k7,3\n";
  std::istringstream none;
  CHECK(read_input(file.string(), none) == "kind,value,qty\nR,4k7,3\n");
  std::istringstream in("from stdin");
  CHECK(read_input("-", in) == "from stdin");
  CHECK(input_name("-") == "stdin");
  CHECK(input_name("a.csv") == "a.csv");
  const auto missing = (dir / "nope.csv").string();
  CHECK(message_of([&] { read_input(missing, none); }) == "cannot read '" + missing + "': No such file or directory");
  CHECK(message_of([&] { read_input(dir.path().string(), none); }).ends_with("it is a folder, not a file"));
}

TEST_CASE("name_field puts the option's name in front of a units message") {
  CHECK(name_field("value 'six': expected a number at column 1", "--volts") ==
        "--volts 'six': expected a number at column 1");
  CHECK(name_field("something odd", "--tol") == "--tol: something odd");
}
