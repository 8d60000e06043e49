// Engineering values: SI prefix notation and the IEC 60062 letter-and-digit code, both ways.
//
// NOTES
//  1. Parsing never goes through a product such as 2.2 * 1e-6: the digits and the prefix
//     exponent are written out again as one decimal ("2.2e-6") and converted once, so that
//     parse_value("2u2") == 2.2e-6 exactly, the same double as the literal.
//  2. Prefix letters: p n u µ (U+00B5) μ (U+03BC) m k M G and `meg`. Upper-case P, N, U and K
//     are accepted because parts are marked that way ("100P", "4N7", "10UF", "4K7") and SI
//     gives them no other meaning here (peta is not accepted); `m` (milli) and `M` (mega) are
//     never folded. `f` and `a` (femto, atto) are not prefixes, so farads and amperes must be
//     written upper-case (`F`, `A`).
//  3. `R` is the ohm: as the decimal marker of the code (4R7) or as a unit at the very end
//     (100R). It is refused where a unit other than ohms is expected, so that a capacitor's
//     "4R7" (EIA style for 4.7 pF) is caught instead of read as 4.7 ohms. `F` likewise marks
//     the point of a capacitance of farads (IEC 60062: 4F7).
//  4. format_value prints micro as the ASCII "u" (SPICE reads it; every keyboard has it).
#include "shelfstage/units/notation.hpp"

#include <array>
#include <cmath>
#include <optional>

#include <fmt/format.h>

#include "scan.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::units {

namespace {

using detail::fail;
using detail::fail_at;
using detail::match;
using detail::match_ci;
using detail::quoted;

struct Prefix {
  std::string_view text;
  int exponent;
  bool any_case;
};

// Longest first: "meg" before "m".
constexpr std::array<Prefix, 16> prefixes{{
    {"meg", 6, true},
    {"\xC2\xB5", -6, false},  // U+00B5 MICRO SIGN
    {"\xCE\xBC", -6, false},  // U+03BC GREEK SMALL LETTER MU
    {"p", -12, false},
    {"P", -12, false},
    {"n", -9, false},
    {"N", -9, false},
    {"u", -6, false},
    {"U", -6, false},
    {"m", -3, false},
    {"k", 3, false},
    {"K", 3, false},
    {"M", 6, false},
    {"G", 9, false},
    {"g", 9, false},
    {"", 0, false},
}};

bool match_prefix(std::string_view text, std::size_t& pos, int& exponent, bool allow_meg = true) {
  for (const Prefix& p : prefixes) {
    if (p.text.empty()) break;
    if (!allow_meg && p.any_case) continue;
    if (p.any_case ? match_ci(text, pos, p.text) : match(text, pos, p.text)) {
      exponent = p.exponent;
      return true;
    }
  }
  return false;
}

struct UnitWord {
  std::string_view text;
  Unit unit;
  bool any_case;
};

// Longest first: "ohms" before "ohm". `R` is handled apart (only at the end).
constexpr std::array<UnitWord, 10> unit_words{{
    {"ohms", Unit::ohm, true},
    {"ohm", Unit::ohm, true},
    {"\xCE\xA9", Unit::ohm, false},      // U+03A9 GREEK CAPITAL LETTER OMEGA
    {"\xE2\x84\xA6", Unit::ohm, false},  // U+2126 OHM SIGN
    {"Hz", Unit::hertz, true},
    {"F", Unit::farad, false},
    {"V", Unit::volt, true},
    {"A", Unit::ampere, false},
    {"W", Unit::watt, true},
    {"", Unit::none, false},
}};

bool match_unit(std::string_view text, std::size_t& pos, Unit& unit) {
  for (const UnitWord& w : unit_words) {
    if (w.text.empty()) break;
    if (w.any_case ? match_ci(text, pos, w.text) : match(text, pos, w.text)) {
      unit = w.unit;
      return true;
    }
  }
  // `R` as the unit only at the very end, so that "4R7" stays a code.
  std::size_t p = pos;
  if (match_ci(text, p, "r")) {
    std::size_t rest = p;
    detail::skip_space(text, rest);
    if (rest == text.size()) {
      pos = p;
      unit = Unit::ohm;
      return true;
    }
  }
  return false;
}

std::string_view unit_noun(Unit unit) {
  switch (unit) {
    case Unit::ohm: return "ohms";
    case Unit::farad: return "farads";
    case Unit::volt: return "volts";
    case Unit::ampere: return "amperes";
    case Unit::watt: return "watts";
    case Unit::hertz: return "hertz";
    case Unit::none: break;
  }
  return "a plain number";
}

bool is_letter(std::string_view c) {
  if (c.empty()) return false;
  const auto b = static_cast<unsigned char>(c[0]);
  return (b >= 'a' && b <= 'z') || (b >= 'A' && b <= 'Z') || b >= 0x80;
}

// Floor division by 3, times 3: the engineering exponent of a decimal exponent.
int engineering(int exponent) { return (exponent >= 0 ? exponent / 3 : -((-exponent + 2) / 3)) * 3; }

// Drops trailing zeros (and a trailing point) from a decimal written with a point.
std::string trim_fraction(std::string s) {
  if (s.find('.') == std::string::npos) return s;
  while (!s.empty() && s.back() == '0') s.pop_back();
  if (!s.empty() && s.back() == '.') s.pop_back();
  return s;
}

// digits (a significand) placed with int_len digits before the point: ("470", 1) -> "4.7".
std::string place_point(const std::string& digits, int int_len) {
  std::string s;
  if (int_len <= 0) {
    s = "0." + std::string(static_cast<std::size_t>(-int_len), '0') + digits;
  } else if (static_cast<std::size_t>(int_len) >= digits.size()) {
    s = digits + std::string(static_cast<std::size_t>(int_len) - digits.size(), '0');
  } else {
    s = digits.substr(0, static_cast<std::size_t>(int_len)) + "." + digits.substr(static_cast<std::size_t>(int_len));
  }
  return trim_fraction(s);
}

std::string_view prefix_symbol(int exponent) {
  switch (exponent) {
    case -12: return "p";
    case -9: return "n";
    case -6: return "u";
    case -3: return "m";
    case 3: return "k";
    case 6: return "M";
    case 9: return "G";
    default: return "";
  }
}

}  // namespace

namespace {

constexpr std::string_view kWhat = "value";

// What parse_value has read of a value so far.
struct Reading {
  bool negative = false;
  detail::Decimal d;
  long exponent = 0;
  std::optional<Unit> unit;  // the unit written, if any
  std::size_t unit_pos = 0;  // where it is written
  bool code = false;         // an IEC 60062 code
  bool prefix_given = false;
  bool unit_given = false;
};

// The IEC 60062 code: a multiplier letter stands for the decimal point and digits follow it
// (4K7, R47, 2M2, 4n7, p68). Digits before the letter may be absent (R47), a point may not.
void read_code(std::string_view text, std::size_t& pos, Reading& r) {
  if (r.d.point) return;
  std::size_t p = pos;
  int e = 0;
  std::optional<Unit> marks;  // R and F stand for the point and name the unit too
  if (match_ci(text, p, "r")) {
    marks = Unit::ohm;
  } else if (match(text, p, "F")) {
    marks = Unit::farad;
  } else if (!match_prefix(text, p, e, false)) {
    p = pos;
  }
  if (p == pos || p >= text.size() || !detail::is_digit(text[p])) return;
  r.code = true;
  if (marks) {
    r.unit = marks;
    r.unit_pos = pos;
  }
  r.exponent = e;
  pos = p;
  while (pos < text.size() && detail::is_digit(text[pos])) r.d.frac_digits += text[pos++];
}

// A plain number's exponent and multiplier (not after a code).
void read_multiplier(std::string_view text, std::size_t& pos, std::size_t number_pos, Reading& r) {
  if (!r.d.has_digits()) {
    const std::string_view c = detail::char_at(text, number_pos);
    fail_at(kWhat, text, number_pos,
            c.empty() ? std::string("expected a number") : fmt::format("expected a number, found '{}'", quoted(c)));
  }
  detail::scan_exponent(text, pos, r.exponent);
  std::size_t p = pos;
  detail::skip_space(text, p);
  int e = 0;
  if (match_prefix(text, p, e)) {
    r.exponent += e;
    r.prefix_given = true;
    pos = p;
  }
}

// The unit, if one is written; it must agree with a code letter that names one.
void read_unit(std::string_view text, std::size_t& pos, Reading& r) {
  std::size_t p = pos;
  detail::skip_space(text, p);
  Unit written = Unit::none;
  const std::size_t written_pos = p;
  if (!match_unit(text, p, written)) return;
  r.unit_given = true;
  pos = p;
  if (r.unit && *r.unit != written) {
    fail_at(kWhat, text, written_pos,
            fmt::format("unit '{}' after the code letter '{}', which marks {}",
                        quoted(text.substr(written_pos, p - written_pos)), text[r.unit_pos], unit_noun(*r.unit)));
  }
  if (!r.unit) {
    r.unit = written;
    r.unit_pos = written_pos;
  }
}

// Nothing but white space may follow: else the error that names what is there.
void refuse_trailing(std::string_view text, std::size_t pos, const Reading& r) {
  detail::skip_space(text, pos);
  if (pos == text.size()) return;
  const std::string_view c = detail::char_at(text, pos);
  std::size_t q = pos;
  int e = 0;
  if (match_prefix(text, q, e)) {
    fail_at(kWhat, text, pos, fmt::format("second multiplier '{}' (a value takes one)", quoted(c)));
  } else if (c == ",") {
    fail_at(kWhat, text, pos, "unexpected ',' (write the decimal point as '.')");
  } else if (is_letter(c) && !r.unit_given && !r.prefix_given && !r.code) {
    fail_at(kWhat, text, pos, fmt::format("unknown multiplier '{}'", quoted(c)));
  } else if (is_letter(c) && !r.unit_given) {
    fail_at(kWhat, text, pos, fmt::format("unknown unit '{}'", quoted(c)));
  } else {
    fail_at(kWhat, text, pos, fmt::format("unexpected '{}'", quoted(c)));
  }
}

// The unit written must be the one expected (none expected: any).
void check_unit(std::string_view text, Unit expect, const Reading& r) {
  if (expect == Unit::none || !r.unit || *r.unit == expect) return;
  // The unit as written: a word such as "ohm" or "Hz", or the one letter R of a code.
  std::size_t word_end = r.unit_pos;
  Unit ignored = Unit::none;
  if (!match_unit(text, word_end, ignored)) word_end = r.unit_pos + 1;
  fail_at(kWhat, text, r.unit_pos,
          fmt::format("unit '{}' where {} are expected", quoted(text.substr(r.unit_pos, word_end - r.unit_pos)),
                      unit_noun(expect)));
}

/// parse_value, times 10^scale (converted once, NOTES 1); `unit_given` tells whether a unit
/// was written.
double parse_scaled(std::string_view text, Unit expect, long scale, bool* unit_given = nullptr) {
  std::size_t pos = 0;
  detail::skip_space(text, pos);
  if (pos == text.size()) fail(kWhat, text, 0, "empty");
  const std::size_t start = pos;

  Reading r;
  if (!match(text, pos, "+")) r.negative = detail::match_minus(text, pos);
  const std::size_t number_pos = pos;
  r.d = detail::scan_decimal(text, pos);
  read_code(text, pos, r);
  if (!r.code) read_multiplier(text, pos, number_pos, r);
  read_unit(text, pos, r);
  refuse_trailing(text, pos, r);
  check_unit(text, expect, r);
  if (unit_given != nullptr) *unit_given = r.unit_given || r.unit.has_value();

  const std::optional<double> value = detail::to_double(r.negative, r.d, r.exponent + scale);
  const bool zero = r.d.int_digits.find_first_not_of('0') == std::string::npos &&
                    r.d.frac_digits.find_first_not_of('0') == std::string::npos;
  if (zero) return 0.0;  // "-0" is zero, not a signed zero
  if (!value || std::fabs(*value) < detail::min_magnitude || std::fabs(*value) > detail::max_magnitude) {
    fail(kWhat, text, start, "out of range (the magnitude must lie between 1e-24 and 1e24)");
  }
  return *value;
}

/// A figure of its own notation: "NUMBER[unit]/PER" (13V/us, 200V/mV), the number in `unit`
/// and the denominator one of `pers` (its power of ten), or a bare number without a unit.
/// Errors name `what` and the whole text ("slew '13V/ks': ..."); the columns they give are
/// the whole text's, as the number comes first.
struct Per {
  std::string_view text;
  long scale;
};
template <std::size_t N>
double parse_figure(std::string_view what, std::string_view text, Unit unit, const std::array<Per, N>& pers,
                    std::string_view expected, std::string_view bare_unit_refusal) {
  try {
    const std::size_t slash = text.rfind('/');
    if (slash == std::string_view::npos) {
      bool unit_given = false;
      const double v = parse_scaled(text, Unit::none, 0, &unit_given);
      if (unit_given) fail(kWhat, text, 0, bare_unit_refusal);
      return v;
    }
    std::size_t pos = slash + 1;
    detail::skip_space(text, pos);
    std::size_t end = text.size();
    while (end > pos && detail::is_space(text[end - 1])) --end;
    const std::string_view per = text.substr(pos, end - pos);
    for (const Per& p : pers)
      if (per == p.text) return parse_scaled(text.substr(0, slash), unit, -p.scale);
    fail_at(kWhat, text, pos, fmt::format("'/{}' is not a unit here (write {})", quoted(per), expected));
  } catch (const ParseError& e) {
    const std::string m = e.what();
    const auto colon = m.find("': ");
    throw ParseError(
        fmt::format("{} '{}': {}", what, quoted(text), colon == std::string::npos ? m : m.substr(colon + 3)),
        e.column());
  }
}

}  // namespace

double parse_value(std::string_view text, Unit expect) { return parse_scaled(text, expect, 0); }

double parse_slew_rate(std::string_view text) {
  static constexpr std::array<Per, 5> kPers{{{"us", -6}, {"\xC2\xB5s", -6}, {"\xCE\xBCs", -6}, {"ms", -3}, {"s", 0}}};
  // A bare figure is volts per second; a volt without its time would be read a million
  // times too slow if it was meant per microsecond, so it is refused.
  return parse_figure("slew", text, Unit::volt, kPers, "V/us, V/ms or V/s",
                      "a slew rate is volts per time: write 13V/us, 0.5V/us, or volts per second as 13M");
}

double parse_open_loop_gain(std::string_view text) {
  static constexpr std::array<Per, 5> kPers{{{"mV", -3}, {"uV", -6}, {"\xC2\xB5V", -6}, {"\xCE\xBCV", -6}, {"V", 0}}};
  std::size_t end = text.size();
  while (end > 0 && detail::is_space(text[end - 1])) --end;
  std::size_t at = end >= 2 ? end - 2 : 0;
  if (end >= 2 && match_ci(text, at, "dB")) return parse_gain(text);
  return parse_figure("gain", text, Unit::volt, kPers, "V/mV, V/uV or V/V",
                      "an open-loop gain is V/V (200k), V/mV (200V/mV) or dB (106dB)");
}

double parse_capacitance(std::string_view text) {
  const double v = parse_value(text, Unit::farad);
  // Parsed, so the text is a number with what follows it: is anything after the digits?
  std::size_t pos = 0;
  detail::skip_space(text, pos);
  if (!match(text, pos, "+")) detail::match_minus(text, pos);
  detail::scan_decimal(text, pos);
  detail::skip_space(text, pos);
  if (pos == text.size())
    fail("value", text, pos,
         "a capacitance needs its multiplier or unit (100n, 4u7, 2.2uF, 1e-6, 1F); a bare number would be farads");
  return v;
}

bool try_parse_value(std::string_view text, double& out, Unit expect) noexcept {
  try {
    out = parse_value(text, expect);
    return true;
  } catch (...) {
    return false;
  }
}

std::string format_value(double value, Unit unit, int significant) {
  const std::string_view symbol = unit_symbol(unit);
  if (std::isnan(value)) return "nan";
  if (std::isinf(value)) return value < 0 ? "-inf" : "inf";
  if (value == 0) return fmt::format("0{}", symbol);
  if (significant < 1) significant = 1;
  if (significant > 17) significant = 17;

  const detail::Rounded r = detail::round_significant(value, significant);
  const std::string_view sign = value < 0 ? "-" : "";
  // A resistor marked 0.47 (and a plain ratio) reads better without a prefix below 1.
  if ((unit == Unit::ohm || unit == Unit::none) && r.exponent >= -3 && r.exponent < 0) {
    return fmt::format("{}{}{}", sign, place_point(r.digits, r.exponent + 1), symbol);
  }
  const int p = engineering(r.exponent);
  if (p < -12 || p > 9) {  // beyond the prefixes: plain scientific, which parse_value reads back
    return fmt::format("{}{}e{}{}", sign, place_point(r.digits, 1), r.exponent, symbol);
  }
  return fmt::format("{}{}{}{}", sign, place_point(r.digits, r.exponent - p + 1), prefix_symbol(p), symbol);
}

std::string format_code(double value, Unit unit) {
  if (unit != Unit::ohm && unit != Unit::farad) {
    throw InputError(fmt::format("IEC 60062 code: a value in {} has no code (only ohms and farads)", unit_noun(unit)));
  }
  if (!std::isfinite(value) || value < 0 || (value == 0 && unit == Unit::farad)) {
    throw InputError(fmt::format("IEC 60062 code: {} '{}' must be positive", unit_noun(unit), value));
  }
  if (value == 0) return "0R";  // zero-ohm link (common practice)

  // The letter that stands for the decimal point, by engineering exponent: resistance
  // R K M G, capacitance p n u m F (IEC 60062; micro printed as "u"; tera left out, as
  // parse_value does not read it).
  const bool ohms = unit == Unit::ohm;
  const int lowest = ohms ? 0 : -12;
  const int highest = ohms ? 9 : 0;
  const detail::Rounded r = detail::round_significant(value, 3);
  int p = engineering(r.exponent);
  if (p < lowest) p = lowest;
  if (p > highest) p = highest;
  char letter = 'R';
  if (ohms) {
    constexpr std::string_view letters = "RKMG";
    letter = letters[static_cast<std::size_t>(p / 3)];
  } else {
    constexpr std::string_view letters = "pnumF";
    letter = letters[static_cast<std::size_t>((p + 12) / 3)];
  }

  const int int_len = r.exponent - p + 1;
  std::string digits = r.digits;
  while (digits.size() > 1 && digits.back() == '0' && static_cast<int>(digits.size()) > int_len) digits.pop_back();
  if (int_len <= 0) {  // below the smallest letter: R47, p68, R047; at least two digits
    std::string frac = std::string(static_cast<std::size_t>(-int_len), '0') + digits;
    if (frac.size() < 2) frac += '0';
    return fmt::format("{}{}", letter, frac);
  }
  const auto n = static_cast<std::size_t>(int_len);
  if (digits.size() <= n) {
    std::string whole = digits + std::string(n - digits.size(), '0');
    // 1R0, 4K0: a lone digit keeps a zero after the letter, so the letter reads as a point.
    return n == 1 ? fmt::format("{}{}0", whole, letter) : fmt::format("{}{}", whole, letter);
  }
  return fmt::format("{}{}{}", digits.substr(0, n), letter, digits.substr(n));
}

std::string_view unit_symbol(Unit unit) {
  switch (unit) {
    case Unit::ohm: return "\xCE\xA9";  // U+03A9, the form Unicode recommends for the ohm
    case Unit::farad: return "F";
    case Unit::volt: return "V";
    case Unit::ampere: return "A";
    case Unit::watt: return "W";
    case Unit::hertz: return "Hz";
    case Unit::none: break;
  }
  return "";
}

}  // namespace shelfstage::units
