// Reading what a person types on the command line: counts, signed changes, values, ranges, files.
#pragma once
#include <istream>
#include <string>
#include <string_view>

#include "shelfstage/devices/record.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::cli {

/// A count of pieces: a whole number, 0 or more ("12", "+12"). Throws InputError naming the
/// field and the text: "qty 'ten' is not a whole number".
int parse_count(std::string_view field, std::string_view text);

/// A change of a count: a signed whole number other than zero ("+5", "-3", "5").
int parse_delta(std::string_view field, std::string_view text);

/// A value in SI or IEC 60062 notation with an optional unit suffix that must match `unit`
/// ("4k7", "100n", "6.3V"). The error names the field: "--volts '6,3': ...".
double parse_quantity(std::string_view field, std::string_view text, units::Unit unit);

/// A units::ParseError message ("value '6,3': ... at column 2") with its leading word
/// replaced by the option or column the person typed it into ("--volts '6,3': ...").
std::string name_field(std::string_view message, std::string_view field);

/// A fraction written as a percentage ("3%", "0.5 %") or as a plain fraction ("0.03"), as
/// the pieces CSV's uncertainty column reads it. A plain number of 1 or more is refused
/// (write 3% for three percent); so are negative or non-finite values. The error names the field.
double parse_fraction(std::string_view field, std::string_view text);

/// A datasheet range "MIN..MAX" (either order; the ends as parse_quantity reads them), or
/// one value for both ends. The result has min <= max.
devices::Range parse_range(std::string_view field, std::string_view text, units::Unit unit);

/// A supply as the user wired it: "9", "7..9.6" (low end first), "-9" or a range of
/// negatives in either order ("-7..-9.6"): a negative rail puts ground at the battery's +
/// terminal. Zero and ranges crossing 0 V are refused with the field and the text.
struct Supply {
  double lo_v = 0, hi_v = 0;  ///< magnitudes, lo <= hi
  bool negative = false;
};
Supply parse_supply(std::string_view field, const std::string& text, bool allow_range = true);

/// The whole content of a file, or of `in` when path is "-". Throws InputError naming the
/// file when it cannot be read.
std::string read_input(const std::string& path, std::istream& in);

/// The name a file goes by in messages: its path as given, "stdin" for "-".
std::string input_name(const std::string& path);

}  // namespace shelfstage::cli
