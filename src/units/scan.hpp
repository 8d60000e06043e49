// Private scanning helpers shared by the units parsers: columns, quoting, error messages, numbers.
#pragma once
#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

namespace shelfstage::units::detail {

/// The 0-based column of byte offset pos, counted in UTF-8 code points (RFC 3629), as a
/// person counts characters on the screen.
std::size_t column_of(std::string_view text, std::size_t pos);

/// The text as it goes between quotes in a message: control bytes and bytes that do not form
/// UTF-8 are written as \xNN; text longer than 40 characters is cut and ends in "...".
std::string quoted(std::string_view text);

/// The one character (a whole UTF-8 sequence, or a single stray byte) at byte offset pos.
std::string_view char_at(std::string_view text, std::size_t pos);

/// Throws ParseError "<what> '<text>': <message> at column N", N counted from 1 for people;
/// ParseError::column() holds the same place counted from 0.
[[noreturn]] void fail_at(std::string_view what, std::string_view text, std::size_t pos, std::string_view message);
/// Throws ParseError "<what> '<text>': <message>" with column() = column_of(text, pos).
[[noreturn]] void fail(std::string_view what, std::string_view text, std::size_t pos, std::string_view message);

bool is_digit(char c);
bool is_space(char c);
void skip_space(std::string_view text, std::size_t& pos);
/// True (and pos moved past it) when word is at pos, exactly.
bool match(std::string_view text, std::size_t& pos, std::string_view word);
/// True (and pos moved past it) when word is at pos, ASCII letters compared case-insensitively.
bool match_ci(std::string_view text, std::size_t& pos, std::string_view word);
/// A minus sign: '-' or U+2212 MINUS SIGN (as datasheets typeset it).
bool match_minus(std::string_view text, std::size_t& pos);

/// A decimal number as written, not yet converted: [int_digits][.frac_digits].
struct Decimal {
  std::string int_digits;
  std::string frac_digits;
  bool point = false;  ///< a decimal point was written
  bool has_digits() const { return !int_digits.empty() || !frac_digits.empty(); }
};

/// Scans [digits][.digits] at pos (either side may be empty; a lone '.' is not consumed).
Decimal scan_decimal(std::string_view text, std::size_t& pos);

/// Scans an exponent e[+-]digits at pos if one is there (an 'e' not followed by digits is
/// left alone). Huge exponents saturate at +-1000000, which converts to out of range.
bool scan_exponent(std::string_view text, std::size_t& pos, long& exponent);

/// sign * int.frac * 10^exponent, correctly rounded; nullopt when it overflows or
/// underflows a double.
std::optional<double> to_double(bool negative, const Decimal& d, long exponent);

/// The magnitudes a parsed value may take (besides zero): 1e-24 ... 1e24, the span of the
/// SI prefixes. Nothing on a bench lies outside it, and keeping to it lets every parsed
/// value be formatted and parsed back.
inline constexpr double min_magnitude = 1e-24;
inline constexpr double max_magnitude = 1e24;

/// The significand digits (exactly `significant` of them) and the decimal exponent of the
/// first digit of |value| rounded to that many significant digits: 999.7, 3 -> {"100", 3}.
/// value must be finite and non-zero.
struct Rounded {
  std::string digits;
  int exponent = 0;
};
Rounded round_significant(double value, int significant);

}  // namespace shelfstage::units::detail
