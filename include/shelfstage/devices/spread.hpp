// Piece-to-piece spread of a transistor type: the correlation model for JFET IDSS and VP,
// hFE for BJTs, corner sets and seeded Monte Carlo samples from one model.
#pragma once
#include <cstdint>
#include <optional>
#include <random>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/devices/models.hpp"
#include "shelfstage/devices/opamp.hpp"
#include "shelfstage/devices/record.hpp"

namespace shelfstage::devices {

/// One possible piece of a type, before temperature: the figures that vary between pieces.
struct PieceFigures {
  double idss_a = 0;       ///< JFET
  double vp_abs_v = 0;     ///< JFET |VP|
  double hfe = 0;          ///< BJT
  std::string tag{};       ///< "nominal", "corner 2 (IDSS 1 mA, |VP| 0.5 V)", "MC 17", ...
  double vbe_shift_v = 0;  ///< BJT: the piece's VBE above the type's at one current
  OpampInstance opamp{};   ///< op-amp: the piece's figures at 25 °C (opamp.hpp)
};

/// Which JFET pieces a worst case covers (every output names the one it used).
enum class SpreadModel {
  /// Pieces between and around the datasheet box's diagonal: BETA = IDSS/VP^2 between the
  /// BETAs of the two diagonal pieces (smallest IDSS with smallest |VP|, largest with
  /// largest) and the typical piece's, widened by SpreadOptions::band_margin each way. Every
  /// IDSS and VP limit the datasheet states is reached, and both diagonal pieces are corners.
  correlated,
  /// The whole datasheet box: all four corners of IDSS x VP, for a design that must hold
  /// whatever a supplier ships (the pairings a real process rarely makes included).
  box,
};
/// "correlated" or "box".
std::string_view spread_model_name(SpreadModel m);
/// Parses those names (also "band" and "diagonal" for correlated, "full" for box); false
/// for anything else.
bool parse_spread_model(std::string_view text, SpreadModel& out);

/// NOTES: the JFET spread model (documented in README.md and docs/ as well).
///  1. A piece is (|VP|, BETA) with IDSS = BETA * VP^2 (the square law's own parameters). In
///     log coordinates x = ln|VP|, y = ln IDSS, b = ln BETA = y - 2x.
///  2. The datasheet box: x within the VP range, y within the IDSS range. Both models keep
///     every piece inside it and reach every one of its four edges: no correlation assumption
///     may narrow a limit the datasheet states.
///  3. Correlated (the default): a piece with a large |VP| tends to have a large IDSS, as
///     BETA varies less than either. The band b in [b_lo, b_hi] holds the two diagonal
///     pieces' BETAs (and the typical BETA when the record gives one), widened by
///     band_margin (default 1.25, a judgement) each way. The real pieces are then the convex
///     polygon box x band; its vertices are the corners: both diagonal pieces, and the pieces
///     at each VP limit with the IDSS the band allows there. Only the anti-diagonal pieces
///     (smallest IDSS with largest |VP| and the reverse, which no datasheet range pairs on
///     purpose) are cut off.
///  4. Box: no band; the four corners of the box.
///  5. Monte Carlo draws x and b uniformly over the model (a flat prior over the published
///     ranges) and rejects draws outside it: corners and samples share one model.
///  6. A measured piece replaces the ranges by its figures +/- its uncertainty (a box of
///     that width, no band).
/// BJT: hFE over [min, max] (typical or geometric mean as nominal) crossed with VBE shifted by
/// +/- BjtParams::vbe_spread_v (IS scaled by exp(-+shift/VT)): four corners; a measured piece,
/// hFE +/- its uncertainty with the same VBE spread.
/// Op-amp: the datasheet's limits (opamp_corners: 16 pieces); the Monte Carlo draws one
/// process figure between the minimum and typical GBW, slew rate and open-loop gain (a slow
/// piece is slow in all three), the offset uniform within +/- its maximum and each bias
/// current uniform within +/- its maximum, the two inputs apart by at most the offset current.
/// The JFET model options do not apply; a measured op-amp piece is refused.
struct SpreadOptions {
  SpreadModel model = SpreadModel::correlated;
  double band_margin = 1.25;  ///< correlated: factor beyond the diagonal pieces' BETAs, each way
};

class DeviceSpread {
 public:
  /// The spread of a stocked transistor or op-amp type.
  explicit DeviceSpread(const DeviceRecord& record, SpreadOptions options = {});
  /// The spread of one measured piece of that type (transistors only: an op-amp is refused,
  /// InputError naming it).
  DeviceSpread(const DeviceRecord& record, const MeasuredPiece& piece);

  const DeviceRecord& record() const { return record_; }
  /// The nominal piece (typical figures, or the polygon's centre in log coordinates).
  const PieceFigures& nominal() const { return nominal_; }
  /// Worst-case corner pieces (polygon vertices for JFETs; hFE ends x VBE ends for BJTs).
  const std::vector<PieceFigures>& corners() const { return corners_; }
  /// n pieces drawn from the same model, reproducible for a seed.
  std::vector<PieceFigures> samples(std::size_t n, std::uint64_t seed) const;
  /// True when (idss, |vp|) or hfe lies within the model (used by tests and fits).
  bool contains(const PieceFigures& f, double slack = 1e-9) const;
  /// For people: "correlated datasheet spread (BETA 0.44..5 mA/V², both diagonal pieces)",
  /// "whole datasheet box (IDSS 1..5 mA x |VP| 0.5..3 V)" or "measured piece J3 (+/-3%)".
  const std::string& description() const { return description_; }
  /// For scripts: "correlated", "box" or "measured".
  std::string_view model_name() const;
  /// JFET: the two diagonal pieces (smallest IDSS with smallest |VP|, largest with
  /// largest), as the datasheet's box has them; empty for BJTs and measured pieces.
  std::vector<PieceFigures> diagonal_pieces() const;

  /// Instances at a temperature.
  JfetInstance jfet(const PieceFigures& f, double celsius = kNominalCelsius) const;
  BjtInstance bjt(const PieceFigures& f, double celsius = kNominalCelsius) const;
  OpampInstance opamp(const PieceFigures& f, double celsius = kNominalCelsius) const;

 private:
  void build_jfet(double vp_lo, double vp_hi, double id_lo, double id_hi, std::optional<double> beta_lo,
                  std::optional<double> beta_hi, double beta_nom, double vp_nom);
  void build_bjt(double hfe_lo, double hfe_hi, double hfe_nom);
  void build_opamp();
  DeviceRecord record_;
  bool measured_ = false;
  SpreadModel model_ = SpreadModel::correlated;
  PieceFigures nominal_;
  std::vector<PieceFigures> corners_;
  std::string description_;
  // JFET model in log coordinates: x = ln|VP| in [x_lo, x_hi], y = ln IDSS in [y_lo, y_hi],
  // b = y - 2x = ln BETA in [b_lo, b_hi].
  double x_lo_ = 0, x_hi_ = 0, y_lo_ = 0, y_hi_ = 0, b_lo_ = 0, b_hi_ = 0;
  double hfe_lo_ = 0, hfe_hi_ = 0, vbe_spread_ = 0;
};

}  // namespace shelfstage::devices
