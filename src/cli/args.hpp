// Reading what a person types on the command line: counts, signed changes, values, ranges, files.
#pragma once
#include <CLI/CLI.hpp>

#include <istream>
#include <string>
#include <string_view>

#include "shelfstage/devices/record.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::cli {

/// A count of pieces: a whole number, 0 or more ("12", "+12"). Throws InputError naming the
/// field and the text: "qty 'ten' is not a whole number".
int parse_count(std::string_view field, std::string_view text);

/// A change of a count: a signed whole number other than zero ("+5", "-3", "5").
int parse_delta(std::string_view field, std::string_view text);

/// A value in SI or IEC 60062 notation with an optional unit suffix that must match `unit`
/// ("4k7", "100n", "6.3V"). The error names the field: "--volts '6,3': ...".
double parse_quantity(std::string_view field, std::string_view text, units::Unit unit);

/// A capacitor's value (units::parse_capacitance: a bare number is refused), the error
/// naming the field.
double parse_capacitance(std::string_view field, std::string_view text);

/// A units::ParseError message ("value '6,3': ... at column 2") with its leading word
/// replaced by the option or column the person typed it into ("--volts '6,3': ...").
std::string name_field(std::string_view message, std::string_view field);

/// A fraction written as a percentage ("3%", "0.5 %") or as a plain fraction ("0.03"), as
/// the pieces CSV's uncertainty column reads it. A plain number of 1 or more is refused
/// (write 3% for three percent); so are negative or non-finite values. The error names the field.
double parse_fraction(std::string_view field, std::string_view text);

/// An angle in degrees: "60", "60deg", "60 °" (a plain number is degrees; SI prefixes are
/// refused: "60m" is no angle a person means). The error names the field; the range is the
/// request's to check.
double parse_degrees(std::string_view field, std::string_view text);

/// The gain window of a design request ("10%", "2.5 %", "±5%", or "-5/+10%", whose wider side
/// counts): a share above 0 and below 1. The errors name --gain-tol and speak of the gain.
double parse_gain_tolerance(std::string_view text);

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

/// The name a file goes by in messages: its path as given (cut when long), "stdin" for "-".
std::string input_name(const std::string& path);

/// A check for options whose text the stock keeps (bins, notes, names, reasons): clean text
/// (units/text.hpp), or the parse error "--bin: 'A\xE9': byte 2 (0xE9) is not UTF-8".
CLI::Validator clean_text();

/// Adds `--encoding NAME` (utf-8, latin1, cp1252) to an import command.
void add_encoding_option(CLI::App& cmd, std::string& encoding);

/// A CSV file's text (read_input) in UTF-8, re-encoded from the declared encoding.
std::string read_csv_text(const std::string& path, std::istream& in, const std::string& encoding);

/// Runs an import; a CsvError that found text which is not UTF-8 gets a hint about
/// --encoding added to its summary.
template <class F>
decltype(auto) with_encoding_hint(F&& import) {
  try {
    return import();
  } catch (const store::CsvError& e) {
    if (!e.not_utf8()) throw;
    throw store::CsvError(std::string(e.what()) +
                              "; if the file is Latin-1 or Windows-1252, import it with --encoding latin1 or "
                              "--encoding cp1252",
                          e.problems(), true);
  }
}

}  // namespace shelfstage::cli
