// Private scanning helpers shared by the units parsers: columns, quoting, error messages, numbers.
#include "scan.hpp"

#include <charconv>
#include <cmath>
#include <cstdlib>
#include <system_error>

#include <fmt/format.h>

#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::units::detail {

namespace {

bool is_continuation(unsigned char c) { return c >= 0x80 && c <= 0xBF; }

}  // namespace

std::size_t column_of(std::string_view text, std::size_t pos) {
  std::size_t column = 0;
  for (std::size_t i = 0; i < pos && i < text.size(); ++i) {
    if (!is_continuation(static_cast<unsigned char>(text[i]))) ++column;
  }
  return column;
}

std::string quoted(std::string_view text) { return clip(text, 40); }

std::string_view char_at(std::string_view text, std::size_t pos) {
  if (pos >= text.size()) return {};
  const std::size_t n = utf8_sequence_length(text, pos);
  return text.substr(pos, n == 0 ? 1 : n);
}

void fail_at(std::string_view what, std::string_view text, std::size_t pos, std::string_view message) {
  const std::size_t column = column_of(text, pos);
  throw ParseError(fmt::format("{} '{}': {} at column {}", what, quoted(text), message, column + 1), column);
}

void fail(std::string_view what, std::string_view text, std::size_t pos, std::string_view message) {
  throw ParseError(fmt::format("{} '{}': {}", what, quoted(text), message), column_of(text, pos));
}

bool is_digit(char c) { return c >= '0' && c <= '9'; }
bool is_space(char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\v' || c == '\f'; }

void skip_space(std::string_view text, std::size_t& pos) {
  while (pos < text.size() && is_space(text[pos])) ++pos;
}

bool match(std::string_view text, std::size_t& pos, std::string_view word) {
  if (text.substr(pos, word.size()) != word) return false;
  pos += word.size();
  return true;
}

bool match_ci(std::string_view text, std::size_t& pos, std::string_view word) {
  if (pos + word.size() > text.size()) return false;
  for (std::size_t i = 0; i < word.size(); ++i) {
    char a = text[pos + i];
    char b = word[i];
    if (a >= 'A' && a <= 'Z') a = static_cast<char>(a - 'A' + 'a');
    if (b >= 'A' && b <= 'Z') b = static_cast<char>(b - 'A' + 'a');
    if (a != b) return false;
  }
  pos += word.size();
  return true;
}

bool match_minus(std::string_view text, std::size_t& pos) {
  return match(text, pos, "-") || match(text, pos, "\xE2\x88\x92");  // U+2212 MINUS SIGN
}

Decimal scan_decimal(std::string_view text, std::size_t& pos) {
  Decimal d;
  while (pos < text.size() && is_digit(text[pos])) d.int_digits += text[pos++];
  if (pos < text.size() && text[pos] == '.') {
    const bool digit_after = pos + 1 < text.size() && is_digit(text[pos + 1]);
    if (d.int_digits.empty() && !digit_after) return d;  // a lone '.' is no number
    d.point = true;
    ++pos;
    while (pos < text.size() && is_digit(text[pos])) d.frac_digits += text[pos++];
  }
  return d;
}

bool scan_exponent(std::string_view text, std::size_t& pos, long& exponent) {
  std::size_t p = pos;
  if (p >= text.size() || (text[p] != 'e' && text[p] != 'E')) return false;
  ++p;
  bool negative = false;
  if (p < text.size() && (text[p] == '+' || text[p] == '-')) {
    negative = text[p] == '-';
    ++p;
  }
  if (p >= text.size() || !is_digit(text[p])) return false;
  long e = 0;
  while (p < text.size() && is_digit(text[p])) {
    if (e < 1000000) e = e * 10 + (text[p] - '0');
    ++p;
  }
  if (e > 1000000) e = 1000000;
  exponent = negative ? -e : e;
  pos = p;
  return true;
}

std::optional<double> to_double(bool negative, const Decimal& d, long exponent) {
  // Written out again as one plain decimal so that from_chars rounds once, correctly:
  // "2.2" with the prefix u becomes "2.2e-6", the same double as the literal 2.2e-6.
  std::string s = d.int_digits.empty() ? "0" : d.int_digits;
  if (!d.frac_digits.empty()) {
    s += '.';
    s += d.frac_digits;
  }
  s += 'e';
  s += std::to_string(exponent);
  double value = 0;
  const auto [end, ec] = std::from_chars(s.data(), s.data() + s.size(), value);
  if (ec != std::errc() || end != s.data() + s.size() || !std::isfinite(value)) return std::nullopt;
  return negative ? -value : value;
}

Rounded round_significant(double value, int significant) {
  // to_chars in scientific form rounds correctly: 999.7 with 2 decimals is "1.00e+03".
  char buf[64];
  const auto [end, ec] =
      std::to_chars(buf, buf + sizeof buf, std::fabs(value), std::chars_format::scientific, significant - 1);
  Rounded r;
  if (ec != std::errc()) return r;
  const std::string_view s(buf, static_cast<std::size_t>(end - buf));
  const std::size_t e = s.find('e');
  for (std::size_t i = 0; i < e; ++i) {
    if (is_digit(s[i])) r.digits += s[i];
  }
  r.exponent = std::atoi(std::string(s.substr(e + 1)).c_str());
  return r;
}

}  // namespace shelfstage::units::detail
