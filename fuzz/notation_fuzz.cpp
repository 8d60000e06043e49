// libFuzzer target: arbitrary bytes into the value, tolerance and gain parsers; whatever they
// accept must print and read back within 0.5 %, and whatever they refuse must be a ParseError.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string>
#include <string_view>

#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace {

using namespace shelfstage::units;

// Within half a unit in the last of `significant` printed digits: 0.5 % for three digits.
bool close(double a, double b, int significant = 3) {
  if (b == 0) return a == 0;
  return std::fabs(a - b) <= 0.5 * std::pow(10.0, 1 - significant) * std::fabs(b) * (1 + 1e-12);
}

// Parses text that the library itself printed; a refusal there is a bug.
double reparse(const std::string& text, Unit unit) {
  try {
    return parse_value(text, unit);
  } catch (const ParseError&) {
    std::abort();
  }
}

void check_value(std::string_view text, Unit unit) {
  double v = 0;
  try {
    v = parse_value(text, unit);
  } catch (const ParseError&) {
    double ignored = 0;
    if (try_parse_value(text, ignored, unit)) std::abort();
    return;
  }
  double again = 0;
  if (!try_parse_value(text, again, unit) || again != v) std::abort();
  if (!std::isfinite(v)) std::abort();
  if (v != 0 && (std::fabs(v) < 1e-24 || std::fabs(v) > 1e24)) std::abort();
  for (const int significant : {3, 2, 4}) {
    if (!close(reparse(format_value(v, unit, significant), unit), v, significant)) std::abort();
  }
  if (unit == Unit::ohm && v >= 0) {
    if (!close(reparse(format_code(v, Unit::ohm), Unit::ohm), v)) std::abort();
  }
  if (unit == Unit::farad && v > 0) {
    if (!close(reparse(format_code(v, Unit::farad), Unit::farad), v)) std::abort();
  }
}

void check_tolerance(std::string_view text) {
  Tolerance t;
  try {
    t = parse_tolerance(text);
  } catch (const ParseError&) {
    return;
  }
  if (!(t.minus >= 0 && t.minus < 1 && t.plus >= 0 && t.plus <= 10)) std::abort();
  Tolerance back;
  try {
    back = parse_tolerance(format_tolerance(t));
  } catch (const ParseError&) {
    std::abort();
  }
  const auto near = [](double a, double b) { return std::fabs(a - b) <= 0.005 * std::fabs(b) + 1e-9; };
  if (!near(back.minus, t.minus) || !near(back.plus, t.plus)) std::abort();
}

void check_gain(std::string_view text) {
  double g = 0;
  try {
    g = parse_gain(text);
  } catch (const ParseError&) {
    return;
  }
  if (!(g > 0) || !std::isfinite(g)) std::abort();
  if (!close(reparse(format_value(g), Unit::none), g)) std::abort();
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  for (const Unit unit : {Unit::none, Unit::ohm, Unit::farad, Unit::volt, Unit::hertz}) check_value(text, unit);
  check_tolerance(text);
  check_gain(text);
  return 0;
}
