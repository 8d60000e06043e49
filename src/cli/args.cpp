// Reading what a person types on the command line: counts, signed changes, values, ranges, files.
#include "args.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <limits>
#include <sstream>

#include "shelfstage/error.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::cli {

namespace detail {
namespace {

std::string_view trim(std::string_view s) {
  const auto first = s.find_first_not_of(" \t\r\n");
  if (first == std::string_view::npos) return {};
  const auto last = s.find_last_not_of(" \t\r\n");
  return s.substr(first, last - first + 1);
}

/// A signed whole number; false when the text is anything else. `too_big` tells overflow apart.
bool whole_number(std::string_view text, long long& out, bool& too_big) {
  too_big = false;
  std::string_view s = trim(text);
  bool negative = false;
  if (!s.empty() && (s.front() == '+' || s.front() == '-')) {
    negative = s.front() == '-';
    s.remove_prefix(1);
  }
  if (s.empty() || !std::all_of(s.begin(), s.end(), [](char c) { return c >= '0' && c <= '9'; })) return false;
  unsigned long long magnitude = 0;
  const auto [ptr, ec] = std::from_chars(s.data(), s.data() + s.size(), magnitude);
  if (ec == std::errc::result_out_of_range ||
      magnitude > static_cast<unsigned long long>(std::numeric_limits<int>::max())) {
    too_big = true;
    return false;
  }
  if (ec != std::errc() || ptr != s.data() + s.size()) return false;
  out = negative ? -static_cast<long long>(magnitude) : static_cast<long long>(magnitude);
  return true;
}

}  // namespace
}  // namespace detail

int parse_count(std::string_view field, std::string_view text) {
  long long n = 0;
  bool too_big = false;
  if (!detail::whole_number(text, n, too_big)) {
    if (too_big) throw InputError(fmt::format("{} '{}' is too large", field, units::clip(text)));
    throw InputError(fmt::format("{} '{}' is not a whole number", field, units::clip(text)));
  }
  if (n < 0) throw InputError(fmt::format("{} '{}' must not be negative", field, units::clip(text)));
  return static_cast<int>(n);
}

int parse_delta(std::string_view field, std::string_view text) {
  long long n = 0;
  bool too_big = false;
  if (!detail::whole_number(text, n, too_big)) {
    if (too_big) throw InputError(fmt::format("{} '{}' is too large", field, units::clip(text)));
    throw InputError(fmt::format("{} '{}' is not a whole number (write +5 or -3)", field, units::clip(text)));
  }
  if (n == 0) throw InputError(fmt::format("{} '{}' changes nothing", field, units::clip(text)));
  return static_cast<int>(n);
}

double parse_quantity(std::string_view field, std::string_view text, units::Unit unit) {
  try {
    return units::parse_value(text, unit);
  } catch (const units::ParseError& e) {
    throw InputError(name_field(e.what(), field));
  }
}

double parse_capacitance(std::string_view field, std::string_view text) {
  try {
    return units::parse_capacitance(text);
  } catch (const units::ParseError& e) {
    throw InputError(name_field(e.what(), field));
  }
}

std::string name_field(std::string_view message, std::string_view field) {
  const auto space = message.find(" '");
  const auto word = message.substr(0, space);
  if (space == std::string_view::npos || word.empty() || word.find(' ') != std::string_view::npos) {
    return fmt::format("{}: {}", field, message);
  }
  return std::string(field) + std::string(message.substr(space));
}

double parse_fraction(std::string_view field, std::string_view text) {
  std::string_view s = detail::trim(text);
  const bool percent = !s.empty() && s.back() == '%';
  if (percent) s = detail::trim(s.substr(0, s.size() - 1));
  double v = 0;
  if (!units::try_parse_value(s, v) || !std::isfinite(v)) {
    throw InputError(fmt::format("{} '{}' is not a percentage or fraction (3% or 0.03)", field, units::clip(text)));
  }
  if (v < 0) throw InputError(fmt::format("{} '{}' must not be negative", field, units::clip(text)));
  if (percent) return v / 100.0;
  if (v >= 1.0) {
    throw InputError(fmt::format("{} '{}' reads as {:g} %; write {}% if that is meant", field, units::clip(text),
                                 v * 100.0, units::clip(detail::trim(text))));
  }
  return v;
}

double parse_degrees(std::string_view field, std::string_view text) {
  std::string_view s = detail::trim(text);
  for (std::string_view suffix : {"degrees", "degree", "deg", "\u00b0"})
    if (s.size() > suffix.size() && s.ends_with(suffix)) {
      s = detail::trim(s.substr(0, s.size() - suffix.size()));
      break;
    }
  double v = 0;
  const bool digits_only = !s.empty() && s.find_first_not_of("0123456789.+-eE") == std::string_view::npos;
  if (!digits_only || !units::try_parse_value(s, v) || !std::isfinite(v))
    throw InputError(fmt::format("{} '{}' is not an angle in degrees (60, or 60deg)", field, units::clip(text)));
  return v;
}

double parse_gain_tolerance(std::string_view text) {
  constexpr std::string_view field = "--gain-tol";
  const auto out_of_range = [&] {
    return InputError(
        fmt::format("{} '{}': the gain window must be above 0 % and below 100 % of the requested "
                    "gain (10% when not given)",
                    field, units::clip(text)));
  };
  // A plain percentage of 100 or more is a window, not a tolerance: say so in those words.
  std::string_view s = detail::trim(text);
  if (!s.empty() && s.back() == '%') s = detail::trim(s.substr(0, s.size() - 1));
  if (double v = 0; units::try_parse_value(s, v) && (v >= 100 || v <= 0)) throw out_of_range();
  units::Tolerance tol;
  try {
    tol = units::parse_tolerance(text);
  } catch (const units::ParseError& e) {
    throw InputError(name_field(e.what(), field));
  }
  const double t = std::max(tol.minus, tol.plus);
  if (!(t > 0 && t < 1)) throw out_of_range();
  return t;
}

devices::Range parse_range(std::string_view field, std::string_view text, units::Unit unit) {
  devices::Range r;
  const auto dots = text.find("..");
  if (dots == std::string_view::npos) {
    r.min = r.max = parse_quantity(field, text, unit);
    return r;
  }
  const auto low = text.substr(0, dots);
  const auto high = text.substr(dots + 2);
  if (detail::trim(low).empty() || detail::trim(high).empty()) {
    throw InputError(fmt::format("{} '{}' needs both ends, as in 1m..5m", field, units::clip(text)));
  }
  r.min = parse_quantity(field, low, unit);
  r.max = parse_quantity(field, high, unit);
  if (r.min > r.max) std::swap(r.min, r.max);
  return r;
}

namespace {

/// The whole stream, refused beyond kLargestInput (an endless device such as /dev/zero, or a
/// file that is not a list of parts).
std::string read_limited(std::istream& in, std::string_view name) {
  constexpr std::size_t kLargestInput = std::size_t{256} << 20;
  std::string text;
  std::array<char, 1 << 16> chunk{};
  while (in) {
    in.read(chunk.data(), static_cast<std::streamsize>(chunk.size()));
    text.append(chunk.data(), static_cast<std::size_t>(in.gcount()));
    if (text.size() > kLargestInput)
      throw InputError(
          fmt::format("cannot read '{}': it is larger than {} MB, which no parts list is", name, kLargestInput >> 20));
  }
  if (in.bad()) throw InputError(fmt::format("cannot read '{}': read error", name));
  return text;
}

}  // namespace

std::string read_input(const std::string& path, std::istream& in) {
  if (path == "-") return read_limited(in, "stdin");
  const std::string shown = units::clip(path, 200);
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    throw InputError(fmt::format("cannot read '{}': it is a folder, not a file", shown));
  }
  std::ifstream file(path, std::ios::binary);
  if (!file) throw InputError(fmt::format("cannot read '{}': {}", shown, std::strerror(errno)));
  return read_limited(file, shown);
}

std::string input_name(const std::string& path) { return path == "-" ? "stdin" : units::clip(path, 200); }

CLI::Validator clean_text() {
  return CLI::Validator(
      [](std::string& value) -> std::string {
        const auto fault = units::find_text_fault(value);
        return fault ? fmt::format("'{}': {}", units::clip(value), units::fault_text(*fault)) : std::string();
      },
      "");
}

void add_encoding_option(CLI::App& cmd, std::string& encoding) {
  cmd.add_option("--encoding", encoding,
                 "The file's text encoding: utf-8 (default), latin1 (ISO 8859-1) or cp1252 (Windows-1252)")
      ->type_name("NAME")
      ->check(CLI::Validator(
          [](std::string& value) -> std::string {
            units::Encoding e{};
            return units::parse_encoding(value, e)
                       ? std::string()
                       : fmt::format("'{}' is not one of utf-8, latin1, cp1252", units::clip(value));
          },
          ""));
}

std::string read_csv_text(const std::string& path, std::istream& in, const std::string& encoding) {
  units::Encoding e = units::Encoding::utf8;
  if (!encoding.empty() && !units::parse_encoding(encoding, e))
    throw InputError(fmt::format("--encoding '{}' is not one of utf-8, latin1, cp1252", units::clip(encoding)));
  return units::to_utf8(read_input(path, in), e);
}

Supply parse_supply(std::string_view field, const std::string& text, bool allow_range) {
  const auto dots = text.find("..");
  if (dots != std::string::npos && !allow_range)
    throw InputError(fmt::format("{} '{}': give one voltage (9, or -9 for a negative rail)", field, text));
  const double a = parse_quantity(field, dots == std::string::npos ? text : text.substr(0, dots), units::Unit::volt);
  const double b = dots == std::string::npos ? a : parse_quantity(field, text.substr(dots + 2), units::Unit::volt);
  if (!std::isfinite(a) || !std::isfinite(b) || a == 0 || b == 0)
    throw InputError(fmt::format("{} '{}' must be a voltage other than zero (9, 7..9.6, -9)", field, text));
  if ((a < 0) != (b < 0))
    throw InputError(fmt::format("{} '{}': a range must not cross 0 V (one rail: 7..9.6 or -7..-9.6)", field, text));
  Supply s;
  s.negative = a < 0;
  if (!s.negative && b < a)
    throw InputError(fmt::format("{} '{}': the range is upside down (low end first)", field, text));
  s.lo_v = std::min(std::abs(a), std::abs(b));
  s.hi_v = std::max(std::abs(a), std::abs(b));
  return s;
}

}  // namespace shelfstage::cli
