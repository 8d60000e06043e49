// Piece-to-piece spread of a transistor type: the correlation model for JFET IDSS and VP,
// hFE for BJTs, corner sets and seeded Monte Carlo samples from one model.
#pragma once
#include <cstdint>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "shelfstage/devices/models.hpp"
#include "shelfstage/devices/record.hpp"

namespace shelfstage::devices {

/// One possible piece of a type, before temperature: the figures that vary between pieces.
struct PieceFigures {
  double idss_a = 0;    ///< JFET
  double vp_abs_v = 0;  ///< JFET |VP|
  double hfe = 0;       ///< BJT
  std::string tag;      ///< "nominal", "low-VP corner", "MC 17", ...
};

/// NOTES: the JFET spread model (documented in DEVELOPERS.md as well).
///  1. A piece is (|VP|, BETA) with IDSS = BETA * VP^2 (the square law's own parameters).
///  2. |VP| ranges over the datasheet's VP range. BETA (mobility, channel geometry) varies far
///     less between pieces than IDSS or VP: it lies within a band around the typical
///     BETA_typ = IDSS_typ / VP_typ^2 (typicals from the record, else the geometric means of
///     the ends), wide by the factor `beta_spread` each way (default 1.6: a judgement, stated
///     as such, that keeps the whole datasheet box reachable only along its diagonal).
///  3. A piece must also lie in the IDSS box. In log coordinates (x = ln|VP|, y = ln IDSS)
///     the three constraints are half-planes, so the set of real pieces is a convex polygon.
///     Its vertices are the corners; pairing the smallest IDSS with the largest |VP| lies
///     outside it, as no such piece exists.
///  4. Monte Carlo draws x and ln BETA uniformly (a flat prior over the published ranges)
///     and rejects draws outside the IDSS box: corners and samples share one model.
///  5. If the band and the box do not meet (an inconsistent record), the band is widened
///     until they do; the polygon is never empty.
///  6. A measured piece replaces the ranges by its figures +/- its uncertainty (same polygon
///     construction with a box of that width and no BETA band).
/// BJT: hFE over [min, max] (typical or geometric mean as nominal); a measured piece, +/- its
/// uncertainty.
struct SpreadOptions {
  double beta_spread = 1.6;  ///< BETA band factor each way around BETA_typ
};

class DeviceSpread {
 public:
  /// The spread of a stocked type.
  DeviceSpread(const DeviceRecord& record, SpreadOptions options = {});
  /// The spread of one measured piece of that type.
  DeviceSpread(const DeviceRecord& record, const MeasuredPiece& piece);

  const DeviceRecord& record() const { return record_; }
  /// The nominal piece (typical figures, or the polygon's centre in log coordinates).
  const PieceFigures& nominal() const { return nominal_; }
  /// Worst-case corner pieces (polygon vertices for JFETs; hFE ends for BJTs).
  const std::vector<PieceFigures>& corners() const { return corners_; }
  /// n pieces drawn from the same model, reproducible for a seed.
  std::vector<PieceFigures> samples(std::size_t n, std::uint64_t seed) const;
  /// True when (idss, |vp|) or hfe lies within the model (used by tests and fits).
  bool contains(const PieceFigures& f, double slack = 1e-9) const;
  /// "measured piece J3 (IDSS 4.1m +/- 3%)" or "datasheet spread".
  const std::string& description() const { return description_; }

  /// Instances at a temperature.
  JfetInstance jfet(const PieceFigures& f, double celsius = kNominalCelsius) const;
  BjtInstance bjt(const PieceFigures& f, double celsius = kNominalCelsius) const;

 private:
  void build_jfet(double vp_lo, double vp_hi, double id_lo, double id_hi,
                  std::optional<double> beta_lo, std::optional<double> beta_hi, double beta_nom,
                  double vp_nom);
  DeviceRecord record_;
  PieceFigures nominal_;
  std::vector<PieceFigures> corners_;
  std::string description_;
  // JFET model in log coordinates: x = ln|VP| in [x_lo, x_hi], y = ln IDSS in [y_lo, y_hi],
  // b = y - 2x = ln BETA in [b_lo, b_hi].
  double x_lo_ = 0, x_hi_ = 0, y_lo_ = 0, y_hi_ = 0, b_lo_ = 0, b_hi_ = 0;
  double hfe_lo_ = 0, hfe_hi_ = 0;
};

}  // namespace shelfstage::devices
