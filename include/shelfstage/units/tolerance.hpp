// Tolerances (symmetric and asymmetric) and gain in V/V or dB.
#pragma once
#include <string>
#include <string_view>

namespace shelfstage::units {

/// A tolerance as two fractions of the nominal value: the part lies in
/// [nominal*(1 - minus), nominal*(1 + plus)]. 5 % is {0.05, 0.05}; -20/+80 % is {0.20, 0.80}.
struct Tolerance {
  double minus = 0.0;  ///< fraction below nominal, >= 0
  double plus = 0.0;   ///< fraction above nominal, >= 0
  double low(double nominal) const { return nominal * (1.0 - minus); }
  double high(double nominal) const { return nominal * (1.0 + plus); }
  bool symmetric() const { return minus == plus; }
  friend bool operator==(const Tolerance&, const Tolerance&) = default;
};

/// Parses `5%`, `5`, `±5%`, `+-5%`, `1 %`, `0.1%`, `-20/+80%`, `+80/-20%`, `-10+50%`, and the
/// IEC 60062 letters B C D F G J K M (0.1 ... 20 %) and Z (-20/+80 %). A lone `+5%` or `-5%`
/// is refused as ambiguous; above +1000 % is refused.
/// Throws units::ParseError (an InputError) on anything else, or a tolerance of 100 % or more below.
Tolerance parse_tolerance(std::string_view text);

/// "5%", "1%", "0.1%", "-20/+80%".
std::string format_tolerance(const Tolerance& tol);

/// Parses a voltage gain: a plain magnitude in V/V (`10`, `10x`, `10V/V`) or decibels
/// (`20dB`, `20 dB`, `-6dB`: attenuation is allowed). Returns the magnitude in V/V (> 0).
/// Throws units::ParseError for zero, a signed V/V figure, NaN, or beyond 1e-24 ... 1e24.
double parse_gain(std::string_view text);

/// 20*log10(|v|).
double to_db(double volts_per_volt);
/// 10^(db/20).
double from_db(double db);

}  // namespace shelfstage::units
