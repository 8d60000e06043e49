// Tolerances (symmetric and asymmetric) and gain in V/V or dB.
#include "shelfstage/units/tolerance.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <optional>

#include <fmt/format.h>

#include "scan.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::units {

namespace {

using detail::fail;
using detail::fail_at;
using detail::match;
using detail::match_ci;
using detail::quoted;

// IEC 60062 tolerance letters (from memory: B 0.1 %, C 0.25 %, D 0.5 %, F 1 %, G 2 %,
// J 5 %, K 10 %, M 20 %, and Z for -20/+80 %).
struct ToleranceLetter {
  char letter;
  Tolerance tol;
};
constexpr std::array<ToleranceLetter, 9> tolerance_letters{{
    {'B', {0.001, 0.001}},
    {'C', {0.0025, 0.0025}},
    {'D', {0.005, 0.005}},
    {'F', {0.01, 0.01}},
    {'G', {0.02, 0.02}},
    {'J', {0.05, 0.05}},
    {'K', {0.10, 0.10}},
    {'M', {0.20, 0.20}},
    {'Z', {0.20, 0.80}},
}};

enum class Sign { none, plus, minus, both };

struct Term {
  Sign sign = Sign::none;
  double percent = 0;
  std::size_t pos = 0;  ///< where the term starts, for messages
};

Sign scan_sign(std::string_view text, std::size_t& pos) {
  if (match(text, pos, "\xC2\xB1") || match(text, pos, "+/-") || match(text, pos, "+-")) return Sign::both;
  if (match(text, pos, "+")) return Sign::plus;
  if (detail::match_minus(text, pos)) return Sign::minus;
  return Sign::none;
}

Term scan_term(std::string_view what, std::string_view text, std::size_t& pos) {
  Term t;
  t.pos = pos;
  t.sign = scan_sign(text, pos);
  detail::skip_space(text, pos);
  const std::size_t number_pos = pos;
  const detail::Decimal d = detail::scan_decimal(text, pos);
  if (!d.has_digits()) {
    const std::string_view c = detail::char_at(text, number_pos);
    fail_at(what, text, number_pos,
            c.empty() ? std::string("expected a number") : fmt::format("expected a number, found '{}'", quoted(c)));
  }
  if (pos < text.size() && text[pos] == ',') {
    fail_at(what, text, pos, "unexpected ',' (write the decimal point as '.')");
  }
  const std::optional<double> v = detail::to_double(false, d, 0);
  if (!v || *v > 1e6) fail_at(what, text, number_pos, "number out of range");
  t.percent = *v;
  std::size_t p = pos;
  detail::skip_space(text, p);
  if (match(text, p, "%")) pos = p;
  return t;
}

// A percentage as written in a tolerance: four significant digits at most, no exponent,
// trailing zeros dropped (5, 0.1, 0.25, 12.5).
std::string percent_text(double fraction) {
  const double pct = fraction * 100.0;
  if (pct == 0 || !std::isfinite(pct)) return pct == 0 ? "0" : fmt::format("{}", pct);
  const int magnitude = static_cast<int>(std::floor(std::log10(std::fabs(pct))));
  const int decimals = std::clamp(3 - magnitude, 0, 12);
  std::string s = fmt::format("{:.{}f}", pct, decimals);
  if (s.find('.') != std::string::npos) {
    while (s.back() == '0') s.pop_back();
    if (s.back() == '.') s.pop_back();
  }
  return s;
}

}  // namespace

Tolerance parse_tolerance(std::string_view text) {
  constexpr std::string_view what = "tolerance";
  std::size_t pos = 0;
  detail::skip_space(text, pos);
  if (pos == text.size()) fail(what, text, 0, "empty");

  // One IEC 60062 letter on its own (J, K, Z ...), either case.
  std::size_t end = text.size();
  while (end > pos && detail::is_space(text[end - 1])) --end;
  if (end - pos == 1) {
    char c = text[pos];
    if (c >= 'a' && c <= 'z') c = static_cast<char>(c - 'a' + 'A');
    if (c >= 'A' && c <= 'Z') {
      for (const ToleranceLetter& l : tolerance_letters) {
        if (l.letter == c) return l.tol;
      }
      fail_at(what, text, pos, fmt::format("unknown IEC 60062 tolerance letter '{}'", text[pos]));
    }
  }

  const Term first = scan_term(what, text, pos);
  detail::skip_space(text, pos);
  Tolerance tol;
  if (pos == text.size()) {
    if (first.sign == Sign::plus || first.sign == Sign::minus) {
      fail_at(what, text, first.pos, "give both sides ('-10/+50%') or neither ('5%')");
    }
    tol = {first.percent / 100.0, first.percent / 100.0};
  } else {
    // The second side of an asymmetric tolerance: "-20/+80%", "+80/-20%", "-10+50%".
    if (match(text, pos, "/") || match(text, pos, ",")) detail::skip_space(text, pos);
    if (pos == text.size()) fail_at(what, text, pos, "the second side is missing");
    const std::size_t second_pos = pos;
    const Term second = scan_term(what, text, pos);
    detail::skip_space(text, pos);
    if (pos != text.size()) {
      fail_at(what, text, pos, fmt::format("unexpected '{}'", quoted(detail::char_at(text, pos))));
    }
    const bool first_minus = first.sign == Sign::minus && second.sign == Sign::plus;
    const bool first_plus = first.sign == Sign::plus && second.sign == Sign::minus;
    if (!first_minus && !first_plus) {
      fail_at(what, text, second_pos, "an asymmetric tolerance needs one '-' side and one '+' side");
    }
    const double minus = first_minus ? first.percent : second.percent;
    const double plus = first_minus ? second.percent : first.percent;
    tol = {minus / 100.0, plus / 100.0};
  }
  // Above 99 % below nominal a "part" is no part; the limit also keeps every accepted
  // tolerance printable without rounding up to 100 % (fuzzing found 99.99999999999999%).
  if (tol.minus > 0.99) fail(what, text, pos, "the part cannot lie more than 99 % below its value");
  if (tol.plus > 10.0) fail(what, text, pos, "more than +1000 % is no tolerance");
  return tol;
}

std::string format_tolerance(const Tolerance& tol) {
  if (tol.symmetric()) return percent_text(tol.plus) + "%";
  return fmt::format("-{}/+{}%", percent_text(tol.minus), percent_text(tol.plus));
}

double parse_gain(std::string_view text) {
  constexpr std::string_view what = "gain";
  std::size_t pos = 0;
  detail::skip_space(text, pos);
  if (pos == text.size()) fail(what, text, 0, "empty");
  const std::size_t start = pos;
  bool negative = false;
  if (!match(text, pos, "+")) negative = detail::match_minus(text, pos);
  const std::size_t number_pos = pos;
  const detail::Decimal d = detail::scan_decimal(text, pos);
  if (!d.has_digits()) {
    const std::string_view c = detail::char_at(text, number_pos);
    fail_at(what, text, number_pos,
            c.empty() ? std::string("expected a number") : fmt::format("expected a number, found '{}'", quoted(c)));
  }
  long exponent = 0;
  detail::scan_exponent(text, pos, exponent);
  const std::optional<double> number = detail::to_double(negative, d, exponent);

  detail::skip_space(text, pos);
  const bool db = match_ci(text, pos, "dB");
  if (!db) {
    // V/V needs no suffix, but "V/V", "x" and U+00D7 "×" may follow the number.
    [[maybe_unused]] const bool suffix =
        match_ci(text, pos, "V/V") || match_ci(text, pos, "x") || match(text, pos, "\xC3\x97");
  }
  detail::skip_space(text, pos);
  if (pos != text.size()) {
    const std::string_view c = detail::char_at(text, pos);
    fail_at(what, text, pos,
            c == "," ? std::string("unexpected ',' (write the decimal point as '.')")
                     : fmt::format("unexpected '{}' (a gain is V/V, as 10 or 10x, or dB, as 20dB)", quoted(c)));
  }

  const auto out_of_range = [&] { fail(what, text, start, "out of range (1e-24 ... 1e24 V/V, +-480 dB)"); };
  if (!number) out_of_range();
  double gain = *number;
  if (db) {
    if (std::fabs(gain) > 480.0) out_of_range();
    gain = from_db(gain);
  } else {
    if (negative) {
      fail(what, text, start,
           "a gain in V/V is a magnitude: give it without a sign (an inverting stage's as well; a loss as a gain below "
           "one, or in negative dB)");
    }
    if (gain == 0) fail(what, text, start, "must be greater than zero");
    if (gain < detail::min_magnitude || gain > detail::max_magnitude) out_of_range();
  }
  return gain;
}

double to_db(double volts_per_volt) { return 20.0 * std::log10(std::fabs(volts_per_volt)); }

double from_db(double db) { return std::pow(10.0, db / 20.0); }

}  // namespace shelfstage::units
