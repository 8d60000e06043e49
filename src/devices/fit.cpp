// Characterising pieces: the self-bias fit of a JFET's IDSS and VP (NOTES in fit.hpp), hFE from
// two currents, and how a measured piece compares with its datasheet.
#include "shelfstage/devices/fit.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <utility>

#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::devices {

namespace {

using units::Unit;

/// Gate and source voltages as datasheets write them ("-1.45V"), other figures in notation.
std::string volts_text(double v) { return fmt::format("{:.3g}V", v); }

/// "2 (RS 1kΩ, VS 0.8V)" and "self-bias reading 2 (RS 1kΩ, VS 0.8V)": the reading as the
/// person gave it, counted from 1.
std::string reading_figures(std::size_t i, const SelfBiasReading& r) {
  return fmt::format("{} (RS {}, VS {})", i + 1, units::format_value(r.rs_ohm, Unit::ohm), volts_text(r.vs_v));
}
std::string reading_text(std::size_t i, const SelfBiasReading& r) {
  return "self-bias reading " + reading_figures(i, r);
}

/// The square law across one source resistor: |VS| and its derivatives with respect to
/// ln IDSS and ln |VP|, and d ln VS / d ln RS.
struct SelfBiasPoint {
  double vs_v = 0;
  double d_ln_idss = 0;  ///< d|VS| / d ln IDSS, volts
  double d_ln_vp = 0;    ///< d|VS| / d ln |VP|, volts
  double rs_gain = 0;    ///< d ln|VS| / d ln RS = 1/(1 + gm RS) without lambda
};

/// u = |VS|/|VP| solves F(u) = c (1 - u)^2 m(u) - u = 0, c = RS IDSS/|VP|, with the channel-
/// length factor m(u) = 1 + lambda (VDD - |VP| u) (1 without a drain supply). Without lambda the
/// root below 1 is 2c / ((2c + 1) + sqrt(4c + 1)) (the product of the two roots is 1; stable
/// for small c); with it, a few Newton steps from there (lambda |VP| is small). Derivatives
/// by the implicit function theorem: du/dt = -(dF/dt)/(dF/du).
SelfBiasPoint self_bias_point(double idss_a, double vp_abs_v, double rs_ohm, const BenchConditions& bench) {
  const double c = rs_ohm * idss_a / vp_abs_v;
  const double lambda = bench.drain_supply_v ? bench.lambda_per_v : 0.0;
  const double vdd = bench.drain_supply_v ? std::abs(*bench.drain_supply_v) : 0.0;
  auto m = [&](double u) { return 1.0 + lambda * (vdd - vp_abs_v * u); };
  auto root = [](double k) { return 2.0 * k / ((2.0 * k + 1.0) + std::sqrt(4.0 * k + 1.0)); };
  double u = root(c * m(0.0));
  auto dF_du = [&](double x) {
    return c * (-2.0 * (1.0 - x) * m(x) - (1.0 - x) * (1.0 - x) * lambda * vp_abs_v) - 1.0;
  };
  for (int it = 0; lambda != 0.0 && it < 50; ++it) {
    const double f = c * (1.0 - u) * (1.0 - u) * m(u) - u;
    const double next = std::clamp(u - f / dF_du(u), 0.0, 1.0);
    const bool done = std::abs(next - u) <= 1e-15;
    u = next;
    if (done) break;
  }
  const double fu = dF_du(u);
  const double dF_dln_idss = u;                                                     // c (1-u)^2 m = u
  const double dF_dln_vp = -u - c * (1.0 - u) * (1.0 - u) * lambda * vp_abs_v * u;  // c ~ 1/|VP|, m
  const double du_dln_idss = -dF_dln_idss / fu, du_dln_vp = -dF_dln_vp / fu;
  return {vp_abs_v * u, vp_abs_v * du_dln_idss, vp_abs_v * (u + du_dln_vp), -1.0 / fu};
}

/// The weighted relative residuals of the readings against a piece (ln IDSS, ln |VP|), and
/// their Jacobian.
struct Weighted {
  Eigen::VectorXd r;
  Eigen::MatrixX2d j;
  double cost = 0;
};

/// A weighted residual beyond this many standard uncertainties is named in a note.
constexpr double kOutlierSigmas = 4.0;

/// No reading is taken as more exact than this (a floor that keeps zero stated accuracy finite).
constexpr double kSigmaFloor = 1e-6;

/// The readings as the fit sees them: resistors, |VS|, the standard uncertainties and the bench.
struct Readings {
  std::vector<double> rs_ohm, vs_abs_v;
  double sigma_meter = 0, sigma_resistor = 0;
  BenchConditions bench;
  Readings without(std::size_t i) const {
    Readings r = *this;
    r.rs_ohm.erase(r.rs_ohm.begin() + static_cast<std::ptrdiff_t>(i));
    r.vs_abs_v.erase(r.vs_abs_v.begin() + static_cast<std::ptrdiff_t>(i));
    return r;
  }
  Readings only(std::size_t i) const {
    Readings r = *this;
    r.rs_ohm = {rs_ohm[i]};
    r.vs_abs_v = {vs_abs_v[i]};
    return r;
  }
};

Weighted weigh(const Readings& p, double ln_idss, double ln_vp) {
  const auto n = static_cast<Eigen::Index>(p.rs_ohm.size());
  Weighted w{Eigen::VectorXd(n), Eigen::MatrixX2d(n, 2), 0};
  const double idss = std::exp(ln_idss), vp = std::exp(ln_vp);
  for (Eigen::Index i = 0; i < n; ++i) {
    const auto k = static_cast<std::size_t>(i);
    const SelfBiasPoint pt = self_bias_point(idss, vp, p.rs_ohm[k], p.bench);
    const double sigma = std::max(kSigmaFloor, std::hypot(p.sigma_meter, pt.rs_gain * p.sigma_resistor));
    const double scale = 1.0 / (p.vs_abs_v[k] * sigma);
    w.r(i) = (p.vs_abs_v[k] - pt.vs_v) * scale;
    w.j(i, 0) = -pt.d_ln_idss * scale;
    w.j(i, 1) = -pt.d_ln_vp * scale;
  }
  w.cost = w.r.squaredNorm();
  return w;
}

struct Refined {
  double ln_idss = 0, ln_vp = 0;
  Weighted w;
};

/// NOTES 2: Gauss-Newton with step halving from a start, until the step vanishes.
Refined refine(const Readings& p, double ln_idss, double ln_vp) {
  Weighted w = weigh(p, ln_idss, ln_vp);
  const double ln_limit = std::log(10.0 * std::max(kFitMaxVpV, kFitMaxIdssA));
  for (int it = 0; it < 200; ++it) {
    const Eigen::Matrix2d normal = w.j.transpose() * w.j;
    const Eigen::Vector2d step = normal.ldlt().solve(-(w.j.transpose() * w.r));
    if (!step.allFinite()) break;
    double f = 1.0;
    bool better = false;
    for (int h = 0; h < 40; ++h, f *= 0.5) {
      Weighted trial = weigh(p, ln_idss + f * step(0), ln_vp + f * step(1));
      if (trial.cost <= w.cost) {
        ln_idss += f * step(0);
        ln_vp += f * step(1);
        w = std::move(trial);
        better = true;
        break;
      }
    }
    if (!better || f * step.norm() < 1e-13) break;
    if (ln_vp > ln_limit || ln_idss > ln_limit) break;  // running away: the caller judges
  }
  return {ln_idss, ln_vp, std::move(w)};
}

/// With four or more readings that scatter beyond the stated accuracy: the one reading whose
/// removal leaves the others on one square law (within twice the stated accuracy) while it
/// lies more than kOutlierSigmas off that law. Least squares spreads one bad reading's misfit
/// over all, so the largest residual of the full fit need not be it; leaving each out in
/// turn finds it. Returns its index and its weighted residual, or nothing.
std::optional<std::pair<std::size_t, double>> lone_outlier(const Readings& p, const Refined& full) {
  const std::size_t n = p.rs_ohm.size();
  if (n < 4) return std::nullopt;
  std::optional<std::pair<std::size_t, double>> best;
  double best_cost = std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < n; ++i) {
    const Refined f = refine(p.without(i), full.ln_idss, full.ln_vp);
    if (!(f.w.cost < best_cost)) continue;
    best_cost = f.w.cost;
    // The left-out reading against the others' law.
    best = std::pair{i, std::abs(weigh(p.only(i), f.ln_idss, f.ln_vp).r(0))};
  }
  const double rest_scatter = std::sqrt(best_cost / static_cast<double>(n - 3));
  if (!best || rest_scatter > 2.0 || best->second <= kOutlierSigmas) return std::nullopt;
  return best;
}

void check_fraction(const char* what, double f) {
  if (!std::isfinite(f) || f < 0.0 || f > 0.5)
    throw InputError(fmt::format("{} {:g}% must lie between 0% and 50%", what, f * 100.0));
}

/// Rejects a pair of readings that no JFET gives: with the larger resistor, |VS| must be larger
/// and ID smaller. Allows for the stated accuracy; resistors whose tolerance bands overlap
/// have no known order and are not compared.
void check_order(std::span<const SelfBiasReading> readings, const std::vector<double>& x_v,
                 const ReadingAccuracy& acc) {
  const double m = acc.meter, t = acc.resistor;
  for (std::size_t i = 0; i < readings.size(); ++i) {
    for (std::size_t j = 0; j < readings.size(); ++j) {
      const double rs_i = readings[i].rs_ohm, rs_j = readings[j].rs_ohm;
      if (!(rs_j * (1 - t) > rs_i * (1 + t))) continue;  // j is not surely the larger resistor
      if (x_v[j] * (1 + m) < x_v[i] * (1 - m)) {
        throw InputError(fmt::format(
            "{} and {} contradict each other: the larger source resistor must give the larger source voltage",
            reading_text(i, readings[i]), reading_text(j, readings[j])));
      }
      const double id_i_high = x_v[i] * (1 + m) / (rs_i * (1 - t));
      const double id_j_low = x_v[j] * (1 - m) / (rs_j * (1 + t));
      if (id_j_low > id_i_high) {
        throw InputError(fmt::format(
            "{} and {} contradict each other: the larger source resistor must give the smaller drain current "
            "(ID = VS/RS: {} and {})",
            reading_text(i, readings[i]), reading_text(j, readings[j]),
            units::format_value(x_v[i] / rs_i, Unit::ampere), units::format_value(x_v[j] / rs_j, Unit::ampere)));
      }
    }
  }
}

/// Checks each reading on its own (NOTES 4) and gives the resistors and the |VS|.
void check_each(std::span<const SelfBiasReading> readings, DeviceKind kind, const BenchConditions& bench,
                std::vector<double>& rs, std::vector<double>& x_v) {
  const bool n_channel = kind == DeviceKind::njfet;
  const bool p_negative = !n_channel && readings.front().vs_v < 0;
  for (std::size_t i = 0; i < readings.size(); ++i) {
    const auto& r = readings[i];
    if (!std::isfinite(r.rs_ohm) || r.rs_ohm <= 0)
      throw InputError(fmt::format("{}: RS must be above zero", reading_text(i, r)));
    if (!std::isfinite(r.vs_v) || r.vs_v == 0)
      throw InputError(
          fmt::format("{}: VS must not be zero (no drain current flows: is the drain supplied?)", reading_text(i, r)));
    if (n_channel && r.vs_v < 0)
      throw InputError(
          fmt::format("{}: an N-channel source sits above ground; a negative reading means swapped "
                      "meter leads or a P-channel part",
                      reading_text(i, r)));
    if (!n_channel && (r.vs_v < 0) != p_negative)
      throw InputError(
          fmt::format("{}: give every P-channel reading as measured (negative) or every one as a "
                      "magnitude, not a mixture",
                      reading_text(i, r)));
    if (bench.drain_supply_v && std::abs(r.vs_v) >= std::abs(*bench.drain_supply_v))
      throw InputError(fmt::format("{}: the source cannot sit at or beyond the drain supply {}", reading_text(i, r),
                                   volts_text(*bench.drain_supply_v)));
    rs.push_back(r.rs_ohm);
    x_v.push_back(std::abs(r.vs_v));
  }
}

/// Rounds a positive fraction up to two significant digits (0.02345 -> 0.024).
double round_up_2(double x) {
  if (!(x > 0) || !std::isfinite(x)) return x;
  const double scale = std::pow(10.0, std::floor(std::log10(x)) - 1.0);
  const double up = std::ceil(x / scale * (1.0 - 1e-12)) * scale;
  return std::round(up / scale) * scale;
}

}  // namespace

double SelfBiasFit::piece_uncertainty() const {
  const double rel_idss = idss_uncertainty_a / idss_a;
  const double rel_vp = vp_uncertainty_v / std::abs(vp_v);
  return round_up_2(std::max(rel_idss, rel_vp));
}

double self_bias_source_voltage(double idss_a, double vp_abs_v, double rs_ohm, const BenchConditions& bench) {
  if (!(idss_a > 0) || !(vp_abs_v > 0) || !(rs_ohm >= 0))
    throw InputError(
        fmt::format("self-bias: IDSS {:g}, |VP| {:g} and RS {:g} must be above zero", idss_a, vp_abs_v, rs_ohm));
  return self_bias_point(idss_a, vp_abs_v, rs_ohm, bench).vs_v;
}

namespace {

/// Rejects a fit request that cannot stand before any reading is looked at.
void check_request(std::span<const SelfBiasReading> readings, DeviceKind kind, const ReadingAccuracy& accuracy,
                   const BenchConditions& bench) {
  if (!is_jfet(kind))
    throw InputError(fmt::format("kind {} is not a JFET: self-bias readings fit JFETs only", kind_name(kind)));
  check_fraction("meter accuracy", accuracy.meter);
  check_fraction("resistor tolerance", accuracy.resistor);
  if (!std::isfinite(bench.lambda_per_v) || bench.lambda_per_v < 0 || bench.lambda_per_v > 0.2)
    throw InputError(fmt::format("lambda {:g}/V must lie between 0 and 0.2/V", bench.lambda_per_v));
  if (bench.drain_supply_v) {
    const double vdd = *bench.drain_supply_v;
    if (!std::isfinite(vdd) || vdd == 0)
      throw InputError(fmt::format("drain supply {} must not be zero", volts_text(vdd)));
    if (kind == DeviceKind::njfet && vdd < 0)
      throw InputError(fmt::format("drain supply {}: an N-channel drain needs a positive supply", volts_text(vdd)));
  }
  if (readings.size() < 2)
    throw InputError(fmt::format("self-bias readings: {} given, two or more are needed (two resistors fix IDSS and VP)",
                                 readings.size()));
}

/// The readings checked and reduced to resistors and |VS|, with the smallest and largest RS.
struct Sample {
  std::vector<double> rs, x_v;  // resistor, |VS|
  std::size_t lo_i = 0, hi_i = 0;
  std::string span_text;  // the readings with the smallest and largest RS, for messages
};

/// Each reading on its own, then the pairs against each other.
Sample sample_of(std::span<const SelfBiasReading> readings, DeviceKind kind, const ReadingAccuracy& accuracy,
                 const BenchConditions& bench) {
  Sample s;
  check_each(readings, kind, bench, s.rs, s.x_v);
  const auto [rs_lo, rs_hi] = std::minmax_element(s.rs.begin(), s.rs.end());
  if (*rs_hi <= *rs_lo * (1 + 1e-9))
    throw InputError(fmt::format("self-bias readings: every one uses RS {}; two different source resistors are needed",
                                 units::format_value(*rs_lo, Unit::ohm)));
  check_order(readings, s.x_v, accuracy);
  s.lo_i = static_cast<std::size_t>(rs_lo - s.rs.begin());
  s.hi_i = static_cast<std::size_t>(rs_hi - s.rs.begin());
  // "self-bias readings 1 (RS 100Ω, VS 0.21V) to 3 (RS 2.2kΩ, VS 0.9V)": the smallest and largest RS.
  s.span_text = fmt::format("self-bias readings {} to {}", reading_figures(s.lo_i, readings[s.lo_i]),
                            reading_figures(s.hi_i, readings[s.hi_i]));
  return s;
}

/// NOTES 1: the straight line sqrt(ID) = a - b |VS|; returns {a, b}.
std::pair<double, double> straight_line(const Sample& s) {
  const auto n = static_cast<double>(s.rs.size());
  double mx = 0, my = 0;
  for (std::size_t i = 0; i < s.rs.size(); ++i) {
    mx += s.x_v[i] / n;
    my += std::sqrt(s.x_v[i] / s.rs[i]) / n;
  }
  double sxx = 0, sxy = 0;
  for (std::size_t i = 0; i < s.rs.size(); ++i) {
    sxx += (s.x_v[i] - mx) * (s.x_v[i] - mx);
    sxy += (s.x_v[i] - mx) * (std::sqrt(s.x_v[i] / s.rs[i]) - my);
  }
  const double b = sxx > 0 ? -sxy / sxx : 0.0;
  const double a = my + b * mx;
  if (!(sxx > 0) || !(b > 0) || !(a > 0)) {
    throw InputError(
        fmt::format("{}: no square-law piece gives these readings: the drain current does not fall as "
                    "the gate goes more negative",
                    s.span_text));
  }
  return {a, b};
}

/// Rejects a fitted IDSS and |VP| beyond any small-signal JFET, or a bench not in saturation.
void check_fitted(const SelfBiasFit& out, double vp, const Sample& s, const BenchConditions& bench) {
  if (!(out.idss_a <= kFitMaxIdssA) || !(vp <= kFitMaxVpV)) {
    throw InputError(fmt::format(
        "{}: the readings imply IDSS {} and |VP| {}, beyond any small-signal JFET (IDSS up to {}, |VP| up to {}): "
        "the drain current hardly changes between the resistors ({} and {})",
        s.span_text, units::format_value(out.idss_a, Unit::ampere), volts_text(vp),
        units::format_value(kFitMaxIdssA, Unit::ampere), volts_text(kFitMaxVpV),
        units::format_value(s.x_v[s.lo_i] / s.rs[s.lo_i], Unit::ampere),
        units::format_value(s.x_v[s.hi_i] / s.rs[s.hi_i], Unit::ampere)));
  }

  if (bench.drain_supply_v && std::abs(*bench.drain_supply_v) < vp) {
    throw InputError(fmt::format(
        "drain supply {} is below the fitted |VP| {}: the piece was not in saturation, where the square law "
        "holds; take the readings again with the drain supply well above |VP|",
        volts_text(*bench.drain_supply_v), volts_text(vp)));
  }
}

/// NOTES 3: the uncertainty of IDSS, VP and gm0, widened by the readings' scatter.
void add_uncertainty(SelfBiasFit& out, const Weighted& w, std::size_t count, double vp) {
  const auto n = static_cast<double>(count);
  Eigen::Matrix2d cov = (w.j.transpose() * w.j).inverse();
  if (count > 2) {
    const double reduced = w.cost / (n - 2.0);
    out.scatter = std::sqrt(reduced);
    if (reduced > 1.0) {
      cov *= reduced;
      out.widened_by_scatter = true;
    }
    if (out.scatter > 3.0) {
      out.notes.push_back(fmt::format(
          "the readings scatter {:.1f} times more than the stated meter accuracy and resistor tolerance allow; the "
          "uncertainty is widened to match (check the readings, or the piece follows the square law loosely)",
          out.scatter));
    }
  }
  constexpr double k = 2.0;  // coverage factor
  const double rel_idss = std::sqrt(cov(0, 0)), rel_vp = std::sqrt(cov(1, 1));
  out.idss_uncertainty_a = k * out.idss_a * rel_idss;
  out.vp_uncertainty_v = k * vp * rel_vp;
  out.gm0_s = 2.0 * out.idss_a / vp;
  out.gm0_uncertainty_s = k * out.gm0_s * std::sqrt(std::max(0.0, cov(0, 0) + cov(1, 1) - 2.0 * cov(0, 1)));
  out.correlation = (rel_idss > 0 && rel_vp > 0) ? cov(0, 1) / (rel_idss * rel_vp) : 0.0;
}

/// Each reading beside the fitted law's source voltage for its resistor.
void add_readings(SelfBiasFit& out, const Sample& s, double vp, const BenchConditions& bench, bool n_channel) {
  const double sign = n_channel ? 1.0 : -1.0;
  for (std::size_t i = 0; i < s.rs.size(); ++i) {
    FittedReading f;
    f.rs_ohm = s.rs[i];
    f.vs_v = sign * s.x_v[i];
    f.id_a = s.x_v[i] / s.rs[i];
    f.fitted_vs_v = sign * self_bias_source_voltage(out.idss_a, vp, s.rs[i], bench);
    f.residual_v = f.vs_v - f.fitted_vs_v;
    out.readings.push_back(f);
  }
}

}  // namespace

SelfBiasFit fit_self_bias(std::span<const SelfBiasReading> readings, DeviceKind kind, const ReadingAccuracy& accuracy,
                          const BenchConditions& bench) {
  check_request(readings, kind, accuracy, bench);
  const bool n_channel = kind == DeviceKind::njfet;
  const Sample sample = sample_of(readings, kind, accuracy, bench);
  const auto [a, b] = straight_line(sample);

  // --- NOTES 2: Gauss-Newton on the weighted source voltages ---
  const Readings problem{sample.rs, sample.x_v, accuracy.meter / std::sqrt(3.0), accuracy.resistor / std::sqrt(3.0),
                         bench};
  const Refined fitted = refine(problem, 2.0 * std::log(a), std::log(a / b));

  SelfBiasFit out;
  out.kind = kind;
  out.idss_a = std::exp(fitted.ln_idss);
  const double vp = std::exp(fitted.ln_vp);
  out.vp_v = n_channel ? -vp : vp;
  check_fitted(out, vp, sample, bench);
  add_uncertainty(out, fitted.w, readings.size(), vp);
  add_readings(out, sample, vp, bench, n_channel);
  if (out.scatter > 2.0) {
    if (const auto lone = lone_outlier(problem, fitted)) {
      const auto i = lone->first;
      out.notes.push_back(fmt::format(
          "{} lies {:.1f} times its stated accuracy off the law the other readings fit: a misread meter, a resistor "
          "other than marked, or (near pinch-off) the square law's limits",
          reading_text(i, readings[i]), lone->second));
    }
  }
  return out;
}

double hfe_from_currents(double ib_a, double ic_a) {
  if (!std::isfinite(ib_a) || ib_a <= 0)
    throw InputError(fmt::format("base current IB {} must be above zero", units::format_value(ib_a, Unit::ampere)));
  if (!std::isfinite(ic_a) || ic_a <= 0)
    throw InputError(
        fmt::format("collector current IC {} must be above zero", units::format_value(ic_a, Unit::ampere)));
  if (ib_a >= ic_a)
    throw InputError(fmt::format("base current IB {} must be below the collector current IC {} (hFE = IC/IB above 1)",
                                 units::format_value(ib_a, Unit::ampere), units::format_value(ic_a, Unit::ampere)));
  return ic_a / ib_a;
}

std::vector<std::string> datasheet_departures(const DeviceRecord& record, const MeasuredPiece& piece) {
  std::vector<std::string> out;
  auto compare = [&](const char* what, std::optional<double> value, const Range& range, auto text) {
    if (!value) return;
    const char* side = *value < range.min ? "below" : *value > range.max ? "above" : nullptr;
    if (side == nullptr) return;
    out.push_back(fmt::format("{} {} is {} {}'s datasheet range {}..{}", what, text(*value), side, record.name,
                              text(range.min), text(range.max)));
  };
  if (is_jfet(record.kind)) {
    compare("IDSS", piece.idss_a, record.jfet.idss_a, [](double v) { return units::format_value(v, Unit::ampere); });
    compare("VP", piece.vp_v, record.jfet.vp_v, volts_text);
  } else if (is_bjt(record.kind)) {
    compare("hFE", piece.hfe, record.bjt.hfe, [](double v) { return fmt::format("{:g}", v); });
  }
  return out;
}

}  // namespace shelfstage::devices
