// The spread model of a transistor type: a convex polygon of real JFET pieces in log space,
// an hFE interval for BJTs, and corners and seeded samples drawn from the same model.
#include "shelfstage/devices/spread.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <fmt/format.h>
#include <limits>

#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::devices {

namespace {

double geo_mean(double a, double b) { return std::sqrt(a * b); }

struct Pt {
  double x, y;
};

// Vertices of {x in [xl,xh], y in [yl,yh], y - 2x in [bl,bh]}, counter-clockwise.
std::vector<Pt> polygon(double xl, double xh, double yl, double yh, double bl, double bh) {
  // Each boundary as a*x + b*y = c.
  struct Line {
    double a, b, c;
  };
  std::vector<Line> lines = {{1, 0, xl}, {1, 0, xh}, {0, 1, yl}, {0, 1, yh}};
  if (std::isfinite(bl)) lines.push_back({-2, 1, bl});
  if (std::isfinite(bh)) lines.push_back({-2, 1, bh});
  const double eps = 1e-9;
  auto inside = [&](Pt p) {
    return p.x >= xl - eps && p.x <= xh + eps && p.y >= yl - eps && p.y <= yh + eps && p.y - 2 * p.x >= bl - eps &&
           p.y - 2 * p.x <= bh + eps;
  };
  std::vector<Pt> pts;
  for (std::size_t i = 0; i < lines.size(); ++i) {
    for (std::size_t j = i + 1; j < lines.size(); ++j) {
      const double det = lines[i].a * lines[j].b - lines[j].a * lines[i].b;
      if (std::abs(det) < 1e-12) continue;
      Pt p{(lines[i].c * lines[j].b - lines[j].c * lines[i].b) / det,
           (lines[i].a * lines[j].c - lines[j].a * lines[i].c) / det};
      if (!inside(p)) continue;
      bool dup = false;
      for (const Pt& q : pts) dup = dup || (std::abs(q.x - p.x) < 1e-7 && std::abs(q.y - p.y) < 1e-7);
      if (!dup) pts.push_back(p);
    }
  }
  if (pts.empty()) return pts;
  Pt c{0, 0};
  for (const Pt& p : pts) {
    c.x += p.x / static_cast<double>(pts.size());
    c.y += p.y / static_cast<double>(pts.size());
  }
  std::sort(pts.begin(), pts.end(),
            [&](Pt a, Pt b) { return std::atan2(a.y - c.y, a.x - c.x) < std::atan2(b.y - c.y, b.x - c.x); });
  return pts;
}

}  // namespace

std::string_view spread_model_name(SpreadModel m) { return m == SpreadModel::box ? "box" : "correlated"; }

bool parse_spread_model(std::string_view text, SpreadModel& out) {
  std::string t;
  for (char ch : text) t += static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  if (t == "correlated" || t == "band" || t == "diagonal") {
    out = SpreadModel::correlated;
    return true;
  }
  if (t == "box" || t == "full") {
    out = SpreadModel::box;
    return true;
  }
  return false;
}

namespace {

/// A measured piece is a transistor's: an op-amp record is refused by name.
void refuse_opamp(const DeviceRecord& record) {
  if (!is_transistor(record.kind))
    throw InputError(fmt::format("device {} is an op-amp: a measured piece is a transistor's", record.name));
}

}  // namespace

DeviceSpread::DeviceSpread(const DeviceRecord& record, SpreadOptions options) : record_(record), model_(options.model) {
  if (record.kind == DeviceKind::opamp) {
    build_opamp();
    return;
  }
  if (is_jfet(record.kind)) {
    const JfetParams& p = record.jfet;
    const double id_lo = std::min(p.idss_a.min, p.idss_a.max);
    const double id_hi = std::max(p.idss_a.min, p.idss_a.max);
    const double vp_lo = std::min(std::abs(p.vp_v.min), std::abs(p.vp_v.max));
    const double vp_hi = std::max(std::abs(p.vp_v.min), std::abs(p.vp_v.max));
    if (!(id_lo > 0) || !(vp_lo > 0))
      throw InputError(fmt::format("device {}: IDSS and VP ranges must be non-zero", record.name));
    const double id_typ = p.idss_a.typ ? *p.idss_a.typ : geo_mean(id_lo, id_hi);
    const double vp_typ = p.vp_v.typ ? std::abs(*p.vp_v.typ) : geo_mean(vp_lo, vp_hi);
    const double beta_typ = id_typ / (vp_typ * vp_typ);
    if (options.model == SpreadModel::box) {
      build_jfet(vp_lo, vp_hi, id_lo, id_hi, std::nullopt, std::nullopt, beta_typ, vp_typ);
      description_ = fmt::format("whole datasheet box (IDSS {:.3g}..{:.3g} mA x |VP| {:.3g}..{:.3g} V)", id_lo * 1e3,
                                 id_hi * 1e3, vp_lo, vp_hi);
    } else {
      // NOTES 3: the band holds both diagonal pieces and the typical one, with a margin.
      const double beta_small = id_lo / (vp_lo * vp_lo), beta_large = id_hi / (vp_hi * vp_hi);
      const double k = std::max(1.0, options.band_margin);
      const double lo = std::min({beta_small, beta_large, beta_typ}) / k;
      const double hi = std::max({beta_small, beta_large, beta_typ}) * k;
      build_jfet(vp_lo, vp_hi, id_lo, id_hi, lo, hi, beta_typ, vp_typ);
      description_ = fmt::format(
          "correlated datasheet spread (BETA {:.3g}..{:.3g} mA/V², both diagonal pieces; "
          "IDSS {:.3g}..{:.3g} mA, |VP| {:.3g}..{:.3g} V)",
          lo * 1e3, hi * 1e3, id_lo * 1e3, id_hi * 1e3, vp_lo, vp_hi);
    }
  } else {
    const Range& h = record.bjt.hfe;
    const double lo = std::min(h.min, h.max), hi = std::max(h.min, h.max);
    if (!(lo > 0)) throw InputError(fmt::format("device {}: hFE range must be positive", record.name));
    build_bjt(lo, hi, h.typ ? std::clamp(*h.typ, lo, hi) : geo_mean(lo, hi));
    description_ = fmt::format("datasheet spread (hFE {:g}..{:g}, VBE ±{:g} mV)", lo, hi, vbe_spread_ * 1e3);
  }
}

DeviceSpread::DeviceSpread(const DeviceRecord& record, const MeasuredPiece& piece) : record_(record), measured_(true) {
  refuse_opamp(record);
  const double u = std::clamp(piece.uncertainty, 0.0, 0.5);
  if (is_jfet(record.kind)) {
    if (!piece.idss_a || !piece.vp_v)
      throw InputError(fmt::format("piece {}: a JFET piece needs both idss and vp", piece.label));
    const double id = *piece.idss_a, vp = std::abs(*piece.vp_v);
    if (!(id > 0) || !(vp > 0)) throw InputError(fmt::format("piece {}: idss and vp must be non-zero", piece.label));
    build_jfet(vp * (1 - u), vp * (1 + u), id * (1 - u), id * (1 + u), std::nullopt, std::nullopt, id / (vp * vp), vp);
    description_ = fmt::format("measured piece {} (+/-{:g}%)", piece.label, u * 100);
  } else {
    if (!piece.hfe || !(*piece.hfe > 0)) throw InputError(fmt::format("piece {}: a BJT piece needs hfe", piece.label));
    build_bjt(*piece.hfe * (1 - u), *piece.hfe * (1 + u), *piece.hfe);
    description_ =
        fmt::format("measured piece {} (hFE +/-{:g}%, VBE ±{:g} mV)", piece.label, u * 100, vbe_spread_ * 1e3);
  }
}

void DeviceSpread::build_opamp() {
  const OpampParams& p = record_.opamp;
  nominal_.opamp = opamp_nominal(p);
  nominal_.tag = "nominal";
  int k = 0;
  for (auto& piece : opamp_corners(p)) {
    PieceFigures f;
    f.opamp = piece.figures;
    f.tag = fmt::format("corner {} ({})", ++k, piece.tag);
    corners_.push_back(std::move(f));
  }
  description_ = fmt::format("datasheet limits (GBW {}..{}, slew {}..{} V/µs, Vos ±{}, Ib ±{})",
                             units::format_value(p.gbw_low_hz(), units::Unit::hertz),
                             units::format_value(p.gbw_hz.typ, units::Unit::hertz), p.slew_low_v_per_s() * 1e-6,
                             p.slew_v_per_s.typ * 1e-6, units::format_value(p.vos_max_v, units::Unit::volt),
                             units::format_value(p.ib_max_a, units::Unit::ampere));
}

std::string_view DeviceSpread::model_name() const {
  if (measured_) return "measured";
  if (record_.kind == DeviceKind::opamp) return "limits";
  return spread_model_name(model_);
}

std::vector<PieceFigures> DeviceSpread::diagonal_pieces() const {
  if (!is_jfet(record_.kind) || measured_) return {};
  PieceFigures small{
      .idss_a = std::exp(y_lo_), .vp_abs_v = std::exp(x_lo_), .tag = "diagonal piece: smallest IDSS, smallest |VP|"};
  PieceFigures large{
      .idss_a = std::exp(y_hi_), .vp_abs_v = std::exp(x_hi_), .tag = "diagonal piece: largest IDSS, largest |VP|"};
  return {small, large};
}

void DeviceSpread::build_bjt(double hfe_lo, double hfe_hi, double hfe_nom) {
  hfe_lo_ = hfe_lo;
  hfe_hi_ = hfe_hi;
  vbe_spread_ = std::max(0.0, record_.bjt.vbe_spread_v);
  nominal_.hfe = hfe_nom;
  nominal_.tag = "nominal";
  corners_.clear();
  for (double hfe : {hfe_lo_, hfe_hi_}) {
    for (double dv : {-vbe_spread_, vbe_spread_}) {
      PieceFigures f;
      f.hfe = hfe;
      f.vbe_shift_v = dv;
      f.tag = fmt::format("hFE {} ({:g}), VBE {:+g} mV", hfe == hfe_lo_ ? "min" : "max", hfe, dv * 1e3);
      corners_.push_back(f);
      if (vbe_spread_ == 0) break;
    }
  }
}

void DeviceSpread::build_jfet(double vp_lo, double vp_hi, double id_lo, double id_hi, std::optional<double> beta_lo,
                              std::optional<double> beta_hi, double beta_nom, double vp_nom) {
  x_lo_ = std::log(vp_lo);
  x_hi_ = std::log(vp_hi);
  y_lo_ = std::log(id_lo);
  y_hi_ = std::log(id_hi);
  const double inf = std::numeric_limits<double>::infinity();
  b_lo_ = beta_lo ? std::log(*beta_lo) : -inf;
  b_hi_ = beta_hi ? std::log(*beta_hi) : inf;
  std::vector<Pt> poly = polygon(x_lo_, x_hi_, y_lo_, y_hi_, b_lo_, b_hi_);
  // The band always meets the box (it holds both diagonal pieces); kept as a guard for
  // callers that pass a band of their own.
  for (int i = 0; poly.empty() && i < 60; ++i) {
    b_lo_ -= 0.25;
    b_hi_ += 0.25;
    poly = polygon(x_lo_, x_hi_, y_lo_, y_hi_, b_lo_, b_hi_);
  }
  corners_.clear();
  for (std::size_t i = 0; i < poly.size(); ++i) {
    PieceFigures f;
    f.vp_abs_v = std::exp(poly[i].x);
    f.idss_a = std::exp(poly[i].y);
    // Which datasheet limits the piece sits on, for people.
    const auto at = [](double v, double end) { return std::abs(v - end) < 1e-7; };
    const bool vlo = at(poly[i].x, x_lo_), vhi = at(poly[i].x, x_hi_);
    const bool ilo = at(poly[i].y, y_lo_), ihi = at(poly[i].y, y_hi_);
    std::string where;
    if ((vlo && ilo) || (vhi && ihi))
      where = "diagonal piece, ";
    else if ((vlo && ihi) || (vhi && ilo))
      where = "anti-diagonal piece, ";
    else if (vlo || vhi)
      where = vlo ? "smallest |VP|, " : "largest |VP|, ";
    else if (ilo || ihi)
      where = ilo ? "smallest IDSS, " : "largest IDSS, ";
    f.tag = fmt::format("corner {} ({}IDSS {:.3g} mA, |VP| {:.3g} V)", i + 1, where, f.idss_a * 1e3, f.vp_abs_v);
    corners_.push_back(f);
  }
  // Nominal: typical BETA at the typical |VP| (set by the caller), pulled into the polygon.
  nominal_.tag = "nominal";
  const double x_nom = std::clamp(std::log(vp_nom), x_lo_, x_hi_);
  const double b_nom = std::clamp(std::log(beta_nom), b_lo_, b_hi_);
  nominal_.vp_abs_v = std::exp(x_nom);
  nominal_.idss_a = std::exp(std::clamp(b_nom + 2 * x_nom, y_lo_, y_hi_));
}

bool DeviceSpread::contains(const PieceFigures& f, double slack) const {
  if (record_.kind == DeviceKind::opamp) {
    const OpampParams& p = record_.opamp;
    const OpampInstance& q = f.opamp;
    auto within = [&](double v, double lo, double hi) { return v >= lo * (1 - slack) && v <= hi * (1 + slack); };
    return within(q.gbw_hz, p.gbw_low_hz(), p.gbw_hz.typ) && within(q.aol, p.aol_low(), p.aol.typ) &&
           within(q.slew_v_per_s, p.slew_low_v_per_s(), p.slew_v_per_s.typ) &&
           std::abs(q.vos_v) <= p.vos_max_v * (1 + slack) + slack &&
           std::abs(q.ib_plus_a) <= p.ib_max_a * (1 + slack) + slack &&
           std::abs(q.ib_minus_a) <= p.ib_max_a * (1 + slack) + slack;
  }
  if (is_jfet(record_.kind)) {
    const double x = std::log(f.vp_abs_v), y = std::log(f.idss_a);
    return x >= x_lo_ - slack && x <= x_hi_ + slack && y >= y_lo_ - slack && y <= y_hi_ + slack &&
           y - 2 * x >= b_lo_ - slack && y - 2 * x <= b_hi_ + slack;
  }
  return f.hfe >= hfe_lo_ * (1 - slack) && f.hfe <= hfe_hi_ * (1 + slack) &&
         std::abs(f.vbe_shift_v) <= vbe_spread_ + slack;
}

std::vector<PieceFigures> DeviceSpread::samples(std::size_t n, std::uint64_t seed) const {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> u01(0.0, 1.0);
  std::vector<PieceFigures> out;
  out.reserve(n);
  if (record_.kind == DeviceKind::opamp) {
    const OpampParams& p = record_.opamp;
    const double ios = std::min(p.ios_max_a.value_or(p.ib_max_a), p.ib_max_a);
    for (std::size_t i = 0; i < n; ++i) {
      PieceFigures f;
      f.opamp = opamp_nominal(p);
      const double slow = u01(rng);  // one process: 0 typical, 1 at the minima
      auto between = [&](double typ, double low) {
        return std::exp(std::log(typ) + slow * (std::log(low) - std::log(typ)));
      };
      f.opamp.gbw_hz = between(p.gbw_hz.typ, p.gbw_low_hz());
      f.opamp.slew_v_per_s = between(p.slew_v_per_s.typ, p.slew_low_v_per_s());
      f.opamp.aol = between(p.aol.typ, p.aol_low());
      if (f.opamp.pole2_hz > 0) f.opamp.pole2_hz *= f.opamp.gbw_hz / p.gbw_hz.typ;
      f.opamp.vos_v = p.vos_max_v * (2 * u01(rng) - 1);
      const double ib = p.ib_max_a * (2 * u01(rng) - 1);
      const double apart = ios * (2 * u01(rng) - 1);
      f.opamp.ib_plus_a = std::clamp(ib + 0.5 * apart, -p.ib_max_a, p.ib_max_a);
      f.opamp.ib_minus_a = std::clamp(ib - 0.5 * apart, -p.ib_max_a, p.ib_max_a);
      f.tag = fmt::format("MC {}", i + 1);
      out.push_back(std::move(f));
    }
    return out;
  }
  if (is_jfet(record_.kind)) {
    const double inf = std::numeric_limits<double>::infinity();
    // Finite sampling range for BETA: the band, or (measured piece) what the box allows.
    const double bl = b_lo_ > -inf ? b_lo_ : y_lo_ - 2 * x_hi_;
    const double bh = b_hi_ < inf ? b_hi_ : y_hi_ - 2 * x_lo_;
    std::size_t tries = 0;
    while (out.size() < n) {
      const double x = x_lo_ + (x_hi_ - x_lo_) * u01(rng);
      const double b = bl + (bh - bl) * u01(rng);
      const double y = b + 2 * x;
      if (++tries > 1000 * (n + 1)) {
        // Degenerate polygon: fall back to points between the nominal and a corner.
        const PieceFigures& c = corners_[out.size() % corners_.size()];
        const double t = u01(rng);
        PieceFigures f{.idss_a = std::exp((1 - t) * std::log(nominal_.idss_a) + t * std::log(c.idss_a)),
                       .vp_abs_v = std::exp((1 - t) * std::log(nominal_.vp_abs_v) + t * std::log(c.vp_abs_v))};
        f.tag = fmt::format("MC {}", out.size() + 1);
        out.push_back(f);
        continue;
      }
      if (y < y_lo_ || y > y_hi_) continue;
      PieceFigures f{.idss_a = std::exp(y), .vp_abs_v = std::exp(x), .tag = fmt::format("MC {}", out.size() + 1)};
      out.push_back(f);
    }
  } else {
    const double lo = std::log(hfe_lo_), hi = std::log(hfe_hi_);
    for (std::size_t i = 0; i < n; ++i) {
      PieceFigures f{.hfe = std::exp(lo + (hi - lo) * u01(rng)), .tag = fmt::format("MC {}", i + 1)};
      f.vbe_shift_v = vbe_spread_ * (2 * u01(rng) - 1);
      out.push_back(f);
    }
  }
  return out;
}

JfetInstance DeviceSpread::jfet(const PieceFigures& f, double celsius) const {
  return jfet_at(record_.jfet, record_.kind, f.idss_a, f.vp_abs_v, celsius);
}

BjtInstance DeviceSpread::bjt(const PieceFigures& f, double celsius) const {
  return bjt_at(record_.bjt, record_.kind, f.hfe, celsius, f.vbe_shift_v);
}

OpampInstance DeviceSpread::opamp(const PieceFigures& f, double celsius) const {
  return opamp_at(f.opamp, record_.opamp, celsius);
}

}  // namespace shelfstage::devices
