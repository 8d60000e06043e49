// Engineering values: SI prefix notation and the IEC 60062 letter-and-digit code, both ways.
#pragma once
#include <cstddef>
#include <string>
#include <string_view>

#include "shelfstage/error.hpp"

namespace shelfstage::units {

/// The physical unit a value may carry as a suffix.
enum class Unit { none, ohm, farad, volt, ampere, watt, hertz };

/// A parse failure: says what was wrong and where (0-based column in the text).
class ParseError : public InputError {
 public:
  ParseError(const std::string& message, std::size_t column) : InputError(message), column_(column) {}
  std::size_t column() const noexcept { return column_; }

 private:
  std::size_t column_;
};

/// Parses an engineering value. Accepts
///  - SI notation: `4.7k`, `100n`, `2.2u`, `2.2µ`, `1M`, `0.47`, `1e3`, `10meg` (SPICE style);
///  - the IEC 60062 code, the multiplier letter standing for the decimal point:
///    `4K7`, `R47`, `2M2`, `4n7`, `1R0`, `2u2`, `p68`;
///  - an optional unit after the number: `Ω`/`ohm`/`ohms`/`R` (only at the end), `F`, `V`,
///    `A`, `W`, `Hz`. When `expect` is not Unit::none a unit suffix must match it.
/// Surrounding white space is allowed, and a space before the prefix or unit (`1.5 k`).
/// Prefixes: p n u µ (U+00B5 or U+03BC) m k K M G (and `meg`, any case); P N U g are read as
/// p n u G, as parts are marked; `m` is milli and `M` mega, never folded. `F` also marks the
/// point of a farad code (4F7). A leading sign is accepted (`-2.5`): callers check ranges.
/// NaN, infinities, empty text, trailing junk and magnitudes outside 1e-24 ... 1e24 are
/// errors. Throws ParseError: "value '4.7q': unknown multiplier 'q' at column 4" (the message
/// counts columns from 1, in characters; ParseError::column() is the same place from 0).
double parse_value(std::string_view text, Unit expect = Unit::none);

/// A capacitance as a stock value: parse_value(text, Unit::farad), but the text must state
/// its scale with a multiplier (100n, 4u7, 2.2 µF), an exponent (1e-6) or the unit (1F,
/// 0.47F). A bare number ("1", "4.7", "0.0047") is refused: on a bag or in a list it is far
/// more often microfarads with the unit left out than farads. Throws ParseError.
double parse_capacitance(std::string_view text);

/// A slew rate in volts per second: `13V/us`, `0.5 V/µs`, `500V/ms`, `13M` (a bare figure
/// is V/s; a volt without its time is refused). Throws ParseError ("slew '13V': ...").
double parse_slew_rate(std::string_view text);

/// An open-loop gain in V/V, as datasheets write it: `200k`, `2e5` (V/V), `200V/mV`,
/// `1V/uV`, `106dB` (units::parse_gain). A unit without the ratio is refused. Throws
/// ParseError ("gain '200q': ..."). The sign is the caller's to check.
double parse_open_loop_gain(std::string_view text);

/// As parse_value, but returns false instead of throwing.
bool try_parse_value(std::string_view text, double& out, Unit expect = Unit::none) noexcept;

/// Formats a value as a technician writes it: three significant digits, trailing zeros
/// dropped, SI prefix: 4700 -> "4.7k", 2.2e-7 -> "220n", 1e6 -> "1M", 0.47 -> "0.47",
/// 10 -> "10", 1.5e-12 -> "1.5p". With a unit, the symbol follows ("4.7kΩ", "100nF").
/// Ohms below 1 are printed without prefix ("0.47"), as a resistor is marked; so are plain
/// numbers from 0.001 to 1. Micro is printed as the ASCII "u" (SPICE reads it). Values beyond
/// the prefixes p ... G are printed in scientific notation ("1.5e-15"). parse_value reads every
/// result back to within half a unit in the last printed digit.
std::string format_value(double value, Unit unit = Unit::none, int significant = 3);

/// The IEC 60062 letter-and-digit code for a resistance or capacitance (in ohms or farads):
/// 4700 -> "4K7", 0.47 -> "R47", 2.2e6 -> "2M2", 1 -> "1R0", 4.7e-9 -> "4n7", 1e-7 -> "100n".
/// Three significant digits; letters R K M G for ohms, p n u m F for farads; 0 ohms -> "0R".
/// Throws InputError for other units and for negative or non-finite values.
std::string format_code(double value, Unit unit);

/// The unit symbol ("Ω", "F", "V", "A", "W", "Hz"), empty for Unit::none.
std::string_view unit_symbol(Unit unit);

}  // namespace shelfstage::units
