// Characterising the pieces in the drawer: a JFET's IDSS and VP from self-bias readings, a
// BJT's hFE from its base and collector currents, and how a measured piece compares with its
// datasheet.
#pragma once
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "shelfstage/devices/record.hpp"

namespace shelfstage::devices {

/// One self-bias reading: the gate at ground, a known resistor from the source to ground, the
/// drain on a supply; the voltage read across the source resistor. Then ID = |VS|/RS and
/// VGS = -VS.
struct SelfBiasReading {
  double rs_ohm = 0;  ///< the source resistor, > 0
  /// The source voltage as read: positive for an N-channel piece; for a P-channel piece
  /// negative (the source sits below ground) or all given as magnitudes.
  double vs_v = 0;
};

/// How exact the readings are, as bounds (a meter's or a resistor's specification): each is
/// taken as a rectangular distribution over +/- the bound (standard uncertainty bound/sqrt 3,
/// as ISO/IEC Guide 98-3 (GUM) 4.3.7 treats a bound with nothing more known) and independent
/// between readings.
struct ReadingAccuracy {
  /// Voltmeter accuracy, a fraction of the reading. Default 0.5 %: a common handheld
  /// multimeter's DC-volts figure (from memory; read yours from its manual).
  double meter = 0.005;
  /// Source resistor tolerance, a fraction. Default 1 %: metal film (common practice).
  /// Resistors measured with the meter: pass the meter's accuracy.
  double resistor = 0.01;
};

/// How the piece was wired on the bench, beyond the readings themselves. Without a drain
/// supply the fitted IDSS is the piece's at the bench's drain-source voltage (as a datasheet
/// states IDSS at its own VDS). With one, the fit models channel-length modulation, ID =
/// IDSS (1 - VGS/VP)^2 (1 + lambda VDS) with VDS = VDD - |VS| (SPICE level 1), so IDSS comes out
/// at VDS = 0 as the models here take it; and it checks that the piece was in saturation.
struct BenchConditions {
  double lambda_per_v = 0;               ///< 1/V, the type's figure; used with a drain supply only
  std::optional<double> drain_supply_v;  ///< drain to ground; signed by the kind or a magnitude
};

/// Limits beyond which a fitted piece is no small-signal JFET but a sign of wrong readings
/// (a judgement, stated as such: small-signal parts stay far inside them).
inline constexpr double kFitMaxIdssA = 1.0;
inline constexpr double kFitMaxVpV = 50.0;

/// One reading and how the fitted square law meets it.
struct FittedReading {
  double rs_ohm = 0;
  double vs_v = 0;         ///< as the source sits: positive N-channel, negative P-channel
  double id_a = 0;         ///< |VS|/RS, a magnitude
  double fitted_vs_v = 0;  ///< what the fitted piece gives across this RS (same sign as vs_v)
  double residual_v = 0;   ///< vs_v - fitted_vs_v
};

/// The result of fit_self_bias. Uncertainties are expanded uncertainties with coverage
/// factor k = 2 (about 95 %; GUM 6.2) and magnitudes.
struct SelfBiasFit {
  DeviceKind kind = DeviceKind::njfet;
  double idss_a = 0;  ///< > 0
  double vp_v = 0;    ///< signed as on a datasheet: < 0 N-channel, > 0 P-channel
  double idss_uncertainty_a = 0;
  double vp_uncertainty_v = 0;
  double gm0_s = 0;  ///< 2 IDSS/|VP|, the transconductance at VGS = 0
  double gm0_uncertainty_s = 0;
  /// Correlation of the IDSS and |VP| estimates: negative for self-bias readings (the line
  /// sqrt(ID) against |VS| pivots about the readings: steeper, it meets the ID axis higher and
  /// the VS axis sooner).
  double correlation = 0;
  std::vector<FittedReading> readings;  ///< in the order given
  /// With more than two readings: the root-mean-square weighted residual, in units of the
  /// stated accuracy (about 1 when the readings scatter as the meter and resistors allow).
  /// 0 with two readings (they fix the two figures exactly).
  double scatter = 0;
  /// True when the scatter exceeded 1 and widened the uncertainties.
  bool widened_by_scatter = false;
  /// Things a person should know that do not make the readings impossible.
  std::vector<std::string> notes;

  /// The larger of the relative uncertainties of IDSS and VP, rounded up to two significant
  /// digits: what a stored MeasuredPiece carries as its one uncertainty.
  double piece_uncertainty() const;
};

/// Fits IDSS and VP of the square law ID = IDSS (1 - VGS/VP)^2 to two or more self-bias
/// readings of one piece.
/// NOTES
///  1. Start: sqrt(ID) = a - b*|VS| is a straight line (a = sqrt(IDSS), b = a/|VP|); its
///     least-squares line gives IDSS = a^2, |VP| = a/b, exact for two readings.
///  2. Refinement: Gauss-Newton (with step halving) on the source voltages themselves. For
///     each RS the fitted piece gives |VS| = |VP| u, u the root in [0, 1) of
///     c (1 - u)^2 = u, c = RS IDSS/|VP|. Residuals are relative to the reading and weighted
///     by the reading's standard uncertainty: the meter's, and the resistor's carried through
///     d ln VS / d ln RS = 1/(1 + gm RS) (degeneration hides most of a resistor error). The
///     parameters are ln IDSS and ln |VP|, so both stay positive.
///  3. Uncertainty: the covariance (J^T J)^-1 of the weighted problem is the readings'
///     uncertainty carried through the fit. With more than two readings it is multiplied by
///     the reduced chi-square chi^2/(n - 2) when that exceeds 1 (the readings scatter more
///     than stated: the Birge-ratio expansion), never shrunk below what the stated accuracy
///     allows. Reported as expanded, k = 2; a scatter estimated from a few readings is itself
///     uncertain, so the coverage of a widened figure is below 95 % (about 85 % with five
///     readings, see fit_test.cpp).
///  4. Impossible readings (InputError naming the reading): fewer than two readings or fewer
///     than two different resistors; RS not above zero; VS zero or of the wrong sign for the
///     kind; a pair in which the larger RS does not give the larger |VS| and the smaller ID
///     (beyond what the stated accuracy allows; every JFET's current falls as its gate goes
///     more negative); a line with ID not falling as |VS| grows; a fit beyond kFitMaxIdssA or
///     kFitMaxVpV. With a drain supply: a source at or above it, or a supply below the fitted
///     |VP| (the piece was not in saturation, where the square law holds).
/// Throws InputError for those; kind must be a JFET kind, the accuracies fractions in
/// [0, 0.5], lambda in [0, 0.2] per volt.
SelfBiasFit fit_self_bias(std::span<const SelfBiasReading> readings, DeviceKind kind = DeviceKind::njfet,
                          const ReadingAccuracy& accuracy = {}, const BenchConditions& bench = {});

/// |VS| of a square-law piece self-biased with the gate at ground and rs_ohm from source to
/// ground, in saturation: the root with |VS| < |VP|. With bench.drain_supply_v, channel-length
/// modulation as in BenchConditions (idss_a is then the VDS = 0 figure).
double self_bias_source_voltage(double idss_a, double vp_abs_v, double rs_ohm, const BenchConditions& bench = {});

/// hFE = IC/IB from a measured base and collector current (magnitudes). Throws InputError when
/// either is not above zero or not finite, or when IB is not below IC.
double hfe_from_currents(double ib_a, double ic_a);

/// Where a measured piece lies outside its type's datasheet range: one sentence a figure
/// ("IDSS 6.2mA is above SJ-101's datasheet range 1mA..5mA"); empty when inside.
std::vector<std::string> datasheet_departures(const DeviceRecord& record, const MeasuredPiece& piece);

}  // namespace shelfstage::devices
