// The curves of a designed stage from its netlist: frequency response over the device corners,
// bias spread with its safe region, and the large-signal transfer.
#include "shelfstage/report/curves.hpp"

#include <functional>

#include "shelfstage/stages/chain.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <complex>
#include <limits>
#include <numbers>
#include <random>

#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/draw/textplot.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::report {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string tol_text(const units::Tolerance& t) {
  const std::string minus = fmt::format("{:.2g}", t.minus * 100), plus = fmt::format("{:.2g}", t.plus * 100);
  return minus == plus ? plus + "%" : fmt::format("-{}/+{}%", minus, plus);
}

ResponseCurve sweep(const std::function<circuit::Circuit()>& build, const std::vector<double>& f, double celsius,
                    const std::string& tag) {
  ResponseCurve r;
  r.tag = tag;
  try {
    const circuit::Circuit net = build();
    circuit::SolverOptions so;
    so.celsius = celsius;
    const auto op = circuit::solve_dc(net, so);
    const auto h = circuit::ac_sweep(net, op, std::string(stages::kNetOut), f);
    double prev = 0;
    for (std::size_t i = 0; i < h.size(); ++i) {
      r.gain_db.push_back(20 * std::log10(std::max(std::abs(h[i]), 1e-300)));
      double deg = std::arg(h[i]) * 180 / std::numbers::pi;
      if (i > 0) deg += 360 * std::round((prev - deg) / 360);  // unwrap
      r.phase_deg.push_back(deg);
      prev = deg;
    }
    // Where the gain peaks, the phase is read within (-180, 180].
    const auto peak =
        static_cast<std::size_t>(std::max_element(r.gain_db.begin(), r.gain_db.end()) - r.gain_db.begin());
    const double shift = -360 * std::ceil((r.phase_deg[peak] - 180) / 360);
    for (double& p : r.phase_deg) p += shift;
    r.solved = true;
  } catch (const Error& e) {
    r.gain_db.clear();
    r.phase_deg.clear();
    r.problem = e.what();
  }
  return r;
}

/// The frequency where a curve falls through `level` between samples i and j (log interpolation).
double crossing(const std::vector<double>& f, const std::vector<double>& g, std::size_t i, std::size_t j,
                double level) {
  const double t = (level - g[i]) / (g[j] - g[i]);
  return std::exp(std::log(f[i]) + t * (std::log(f[j]) - std::log(f[i])));
}

/// Ray casting (even-odd rule) point-in-polygon.
bool inside(const std::vector<std::pair<double, double>>& poly, double x, double y) {
  bool in = false;
  for (std::size_t i = 0, j = poly.size() - 1; i < poly.size(); j = i++) {
    const auto [xi, yi] = poly[i];
    const auto [xj, yj] = poly[j];
    if ((yi > y) != (yj > y) && x < (xj - xi) * (y - yi) / (yj - yi) + xi) in = !in;
  }
  return in;
}

double interpolate(const std::vector<double>& xs, const std::vector<double>& ys, double x) {
  const auto it = std::lower_bound(xs.begin(), xs.end(), x);
  if (it == xs.begin()) return ys.front();
  if (it == xs.end()) return ys.back();
  const auto i = static_cast<std::size_t>(it - xs.begin());
  const double t = (x - xs[i - 1]) / (xs[i] - xs[i - 1]);
  return ys[i - 1] + t * (ys[i] - ys[i - 1]);
}

}  // namespace

StageUnderTest stage_under_test(const synth::Candidate& c) {
  StageUnderTest s;
  s.topology = c.topology;
  s.values = c.values;
  s.transistor = c.nominal_device;
  s.conditions = c.conditions;
  s.device = c.device.name;
  if (c.piece) s.piece = c.piece->label;
  for (const auto& rp : c.parts) {
    PartInfo info;
    info.role = rp.role;
    info.designator = rp.designator;
    info.recipe = rp.recipe;
    info.tol = tol_text(rp.tol);
    info.dielectric = rp.dielectric;
    info.rating = rp.rating;
    info.polarised = rp.polarised;
    info.fitted_plus_net = rp.plus_net;
    if (rp.kind == 'C' && !rp.dc.empty) {
      info.dc_known = true;
      info.dc_min_v = rp.dc.min;
      info.dc_max_v = rp.dc.max;
    }
    s.parts.push_back(info);
  }
  return s;
}

namespace {

// The sweep's frequencies: whole decades from a decade below the lower edge (of the stage's
// or the spec's band) to a decade above the upper.
std::vector<double> response_frequencies(const synth::Candidate& c, const synth::Spec& spec, int per_decade) {
  double lo = c.nominal.f_low_hz > 0 ? c.nominal.f_low_hz : 20.0;
  double hi = c.nominal.f_high_hz > 0 ? c.nominal.f_high_hz : 1e6;
  if (spec.band_hz) {
    lo = std::min(lo, spec.band_hz->first);
    hi = std::max(hi, spec.band_hz->second);
  }
  lo = std::clamp(std::pow(10.0, std::floor(std::log10(lo / 10) + 1e-9)), 0.01, 1e9);
  hi = std::clamp(std::pow(10.0, std::ceil(std::log10(hi * 10) - 1e-9)), lo * 10, 1e10);
  return circuit::log_sweep(lo, hi, per_decade);
}

// The nominal sweep and one per device corner into r.
void sweep_corners(const synth::Candidate& c, const synth::Spec& spec, Response& r) {
  const double celsius = spec.temp_nominal_c();
  const synth::StageSpread spread = synth::spread_of(c);
  // A stage: its corner pieces. A chain: each stage's corner pieces in turn, the other
  // stages at their nominal pieces.
  std::vector<stages::ChainStage> list = synth::chain_stages(c);
  auto build = [&](std::size_t stage, const stages::Transistor* q) {
    return [&c, list, stage, q]() mutable {
      if (!c.is_chain()) return c.topology->netlist(c.values, q ? *q : c.nominal_device, c.conditions);
      if (q) list[stage].q = *q;
      return stages::chain_netlist(list, c.conditions);
    };
  };
  std::vector<std::pair<std::size_t, synth::StageSpread>> spreads;
  if (c.is_chain())
    for (std::size_t k = 0; k < c.stages.size(); ++k) spreads.emplace_back(k, synth::spread_of(c.stages[k]));
  else
    spreads.emplace_back(0, spread);
  {
    const stages::Transistor q =
        c.is_chain() ? c.stages.front().nominal_device : synth::make_transistor(spread, spread.nominal(), celsius);
    r.nominal = sweep(build(0, c.is_chain() ? nullptr : &q), r.f_hz, celsius, "nominal");
  }
  for (const auto& [stage, sp] : spreads)
    for (const auto& f : sp.corners()) {
      const stages::Transistor q = synth::make_transistor(sp, f, celsius);
      r.corners.push_back(sweep(build(stage, &q), r.f_hz, celsius,
                                c.is_chain() ? fmt::format("stage {} {}", stage + 1, f.tag) : f.tag));
      // An inverting stage sits at +/-180 degrees: put every corner on the nominal's branch
      // (whole turns), so the envelope spans the spread, not the wrap.
      auto& k = r.corners.back();
      if (k.solved && r.nominal.solved) {
        const auto peak = static_cast<std::size_t>(
            std::max_element(r.nominal.gain_db.begin(), r.nominal.gain_db.end()) - r.nominal.gain_db.begin());
        const double turn = 360 * std::round((r.nominal.phase_deg[peak] - k.phase_deg[peak]) / 360);
        for (double& p : k.phase_deg) p += turn;
      }
    }
}

// The gain and phase envelope over the nominal and every solved corner.
void response_envelope(Response& r) {
  const std::size_t n = r.f_hz.size();
  r.gain_lo_db.assign(n, kNaN);
  r.gain_hi_db.assign(n, kNaN);
  r.phase_lo_deg.assign(n, kNaN);
  r.phase_hi_deg.assign(n, kNaN);
  auto widen = [&](const ResponseCurve& k) {
    if (!k.solved) return;
    for (std::size_t i = 0; i < n; ++i) {
      r.gain_lo_db[i] = std::isnan(r.gain_lo_db[i]) ? k.gain_db[i] : std::min(r.gain_lo_db[i], k.gain_db[i]);
      r.gain_hi_db[i] = std::isnan(r.gain_hi_db[i]) ? k.gain_db[i] : std::max(r.gain_hi_db[i], k.gain_db[i]);
      r.phase_lo_deg[i] = std::isnan(r.phase_lo_deg[i]) ? k.phase_deg[i] : std::min(r.phase_lo_deg[i], k.phase_deg[i]);
      r.phase_hi_deg[i] = std::isnan(r.phase_hi_deg[i]) ? k.phase_deg[i] : std::max(r.phase_hi_deg[i], k.phase_deg[i]);
    }
  };
  widen(r.nominal);
  for (const auto& k : r.corners) widen(k);
}

// The nominal's peak gain and its -3 dB edges.
void band_edges(Response& r) {
  if (!r.nominal.solved) return;
  const std::size_t n = r.f_hz.size();
  const auto& g = r.nominal.gain_db;
  const auto peak = static_cast<std::size_t>(std::max_element(g.begin(), g.end()) - g.begin());
  r.peak_gain_db = g[peak];
  const double level = g[peak] - 10 * std::log10(2.0);
  for (std::size_t i = peak; i-- > 0;)
    if (g[i] < level) {
      r.f_low_hz = crossing(r.f_hz, g, i, i + 1, level);
      break;
    }
  for (std::size_t i = peak + 1; i < n; ++i)
    if (g[i] < level) {
      r.f_high_hz = crossing(r.f_hz, g, i - 1, i, level);
      break;
    }
}

}  // namespace

Response frequency_response(const synth::Candidate& c, const synth::Spec& spec, int per_decade) {
  if (per_decade < 2) throw InputError(fmt::format("points per decade {} must be at least 2", per_decade));
  Response r;
  r.band_hz = spec.band_hz;
  r.requested_gain_db = spec.gain > 0 ? 20 * std::log10(spec.gain) : 0;
  r.f_hz = response_frequencies(c, spec, per_decade);
  sweep_corners(c, spec, r);
  response_envelope(r);
  band_edges(r);
  return r;
}

std::string response_text(const Response& r, int columns) {
  if (!r.nominal.solved) return fmt::format("no frequency response: {}\n", r.nominal.problem);
  draw::TextPlot p;
  p.x = r.f_hz;
  p.y = r.nominal.gain_db;
  if (!r.corners.empty()) {
    p.lo = r.gain_lo_db;
    p.hi = r.gain_hi_db;
  }
  if (r.band_hz) {
    p.span_lo = r.band_hz->first;
    p.span_hi = r.band_hz->second;
  }
  p.y_unit = "dB";
  p.columns = columns;
  std::string out = "Gain from the source to the load against frequency (Hz):\n" + draw::text_plot(p);
  auto hz = [](double f) {
    return f > 0 ? units::format_value(f, units::Unit::hertz) : std::string("beyond the sweep");
  };
  out += fmt::format("-3 dB points (nominal, from the peak of {:.1f} dB): {} and {}\n", r.peak_gain_db, hz(r.f_low_hz),
                     hz(r.f_high_hz));
  return out;
}

namespace {

// What the bias points of one stage are worked from.
struct BiasSetup {
  const synth::Candidate& c;
  const synth::Spec& spec;
  const synth::StageSpread& spread;
  const stages::Transistor& q0;
  double celsius;
};

// The DC operating point at the watched node of one build, or none if it does not solve.
std::optional<BiasPoint> bias_point(const stages::Topology& t, const std::string& node, const stages::Values& v,
                                    const stages::Transistor& q, const stages::Conditions& cond,
                                    const std::string& tag) {
  try {
    const circuit::Circuit net = t.netlist(v, q, cond);
    circuit::SolverOptions so;
    so.celsius = cond.celsius;
    const auto op = circuit::solve_dc(net, so);
    BiasPoint p;
    if (op.devices.empty()) return std::nullopt;  // no transistor: no bias point to draw
    p.v = op.v(net, node);
    p.i_a = std::abs(op.devices.front().i_main_a);
    p.tag = tag;
    return p;
  } catch (const Error&) {
    return std::nullopt;
  }
}

// Monte Carlo builds drawn in the synthesizer's order (synth/evaluate.cpp, monte_carlo).
void sample_bias(const BiasSetup& s, int samples, BiasSpread& b) {
  const auto& c = s.c;
  const auto& spec = s.spec;
  const auto& t = *c.topology;
  const auto pieces = s.spread.samples(static_cast<std::size_t>(samples), spec.seed);
  std::mt19937_64 rng(spec.seed ^ 0x9e3779b97f4a7c15ULL);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  const double t_lo = spec.temp_c ? spec.temp_c->first : spec.temp_nominal_c();
  const double t_hi = spec.temp_c ? spec.temp_c->second : spec.temp_nominal_c();
  for (const auto& f : pieces) {
    stages::Values v = c.values;
    for (const auto& rp : c.parts) v[t.role_index(rp.role)] = rp.combo.lo + (rp.combo.hi - rp.combo.lo) * u(rng);
    stages::Conditions cond = c.conditions;
    cond.supply_v = spec.supply_lo_v + (spec.supply_hi_v - spec.supply_lo_v) * u(rng);
    cond.celsius = t_lo + (t_hi - t_lo) * u(rng);
    if (auto p = bias_point(t, b.node, v, synth::make_transistor(s.spread, f, cond.celsius), cond, f.tag))
      b.samples.push_back(*p);
    else
      ++b.failed;
  }
}

// The safe region (see the header), worked in the N frame and placed on the rail; every
// point marked in or out of it.
void safe_region(const BiasSetup& s, BiasSpread& b) {
  const auto& c = s.c;
  const auto& q0 = s.q0;
  const bool follower = b.line.at_common;
  b.swing_peak_v = s.spec.swing_vpp ? *s.spec.swing_vpp / 2 : 0.0;
  const double vpk = b.swing_peak_v;
  const double supply = c.conditions.supply_v;
  const bool jfet = devices::is_jfet(q0.kind);
  double beta_min = jfet ? q0.jfet.beta() : 0;
  if (jfet)
    for (const auto& f : s.spread.corners())
      beta_min = std::min(beta_min, s.spread.first().jfet(f.first, s.celsius).beta());
  auto knee = [&](double i) { return jfet ? std::sqrt(i / beta_min) : q0.bjt.vce_sat_v; };
  const double r_ac = b.line.r_ac_ohm;
  const double r_unbypassed = b.line.r_unbypassed_ohm;
  const double r_common = b.line.r_common_ohm;
  double i_max_seen = b.nominal.i_a;
  for (const auto& p : b.corners) i_max_seen = std::max(i_max_seen, p.i_a);
  for (const auto& p : b.samples) i_max_seen = std::max(i_max_seen, p.i_a);
  const double i_lo = r_ac > 0 ? vpk / r_ac : 0.0;
  double i_hi = std::max(2 * i_max_seen, 1.5 * i_lo);
  if (s.spec.max_current_a) i_hi = std::min(i_hi, *s.spec.max_current_a);
  if (!(i_hi > i_lo && i_hi > 0)) return;
  constexpr int kSteps = 48;
  std::vector<std::pair<double, double>> poly;
  if (!follower) {
    for (int k = 0; k <= kSteps; ++k) {
      const double i = i_lo + (i_hi - i_lo) * k / kSteps;
      const double v_lo = i * r_common + knee(i) + vpk * (1 + (r_ac > 0 ? r_unbypassed / r_ac : 0));
      poly.push_back({std::min(v_lo, supply), i});
    }
    poly.push_back({supply, i_hi});
    poly.push_back({supply, i_lo});
  } else {
    poly.push_back({0, i_lo});
    poly.push_back({0, i_hi});
    for (int k = kSteps; k >= 0; --k) {
      const double i = i_lo + (i_hi - i_lo) * k / kSteps;
      poly.push_back({std::max(0.0, supply - knee(i) - vpk), i});
    }
  }
  const stages::Rail rail = stages::rail_of(q0, c.conditions);
  for (auto& [v, i] : poly) v = rail.real(v);
  b.safe_region = std::move(poly);
  auto mark = [&](BiasPoint& p) { p.safe = inside(b.safe_region, p.v, p.i_a); };
  mark(b.nominal);
  for (auto& p : b.corners) mark(p);
  for (auto& p : b.samples) mark(p);
}

}  // namespace

BiasSpread bias_spread(const synth::Candidate& c, const synth::Spec& spec, int samples) {
  if (samples < 0 || samples > 100000)
    throw InputError(fmt::format("bias samples {} must be from 0 to 100000", samples));
  const auto& t = *c.topology;
  if (c.device.kind == devices::DeviceKind::opamp)
    throw InputError(fmt::format("bias spread: {} is an op-amp stage, which has no load line to bias on", t.name()));
  const synth::StageSpread spread = synth::spread_of(c);
  const double celsius = spec.temp_nominal_c();
  const stages::Transistor q0 = synth::make_transistor(spread, spread.nominal(), celsius);
  BiasSpread b;
  b.line = t.load_line(c.values, c.conditions);
  b.node = std::string(t.node_names()[b.line.at_common ? 1 : 2]);

  if (auto p = bias_point(t, b.node, c.values, q0, c.conditions, "nominal")) b.nominal = *p;
  for (const auto& f : spread.corners())
    if (auto p = bias_point(t, b.node, c.values, synth::make_transistor(spread, f, celsius), c.conditions, f.tag))
      b.corners.push_back(*p);

  const BiasSetup setup{c, spec, spread, q0, celsius};
  if (samples > 0) sample_bias(setup, samples, b);
  safe_region(setup, b);
  return b;
}

Transfer transfer_curve(const synth::Candidate& c, const synth::Spec& spec) {
  const auto& t = *c.topology;
  const synth::StageSpread spread = synth::spread_of(c);
  const double celsius = spec.temp_nominal_c();
  const stages::Transistor q = synth::make_transistor(spread, spread.nominal(), celsius);
  const circuit::Circuit net = t.netlist(c.values, q, c.conditions);
  circuit::SolverOptions so;
  so.celsius = celsius;
  const auto op = circuit::solve_dc(net, so);
  circuit::Circuit h = circuit::with_capacitors_held(
      net, op, [](const circuit::Component& e) { return stages::open_at_mid_band(e.role); });
  const std::string out = std::string(stages::kNetOut);
  auto at = [&](double x) {
    h.set_value("VSIG", x);
    try {
      const auto p = circuit::solve_dc(h, so);
      return p.v(h, out);
    } catch (const Error&) {
      return kNaN;
    }
  };

  Transfer r;
  if (spec.swing_vpp && *spec.swing_vpp > 0) {
    r.rated_peak_v = *spec.swing_vpp / 2;
    r.rated_what = "the requested swing";
  } else if (c.nominal.swing_peak_v > 0) {
    r.rated_peak_v = c.nominal.swing_peak_v;
    r.rated_what = "the design's swing";
  } else {
    r.rated_peak_v = 1;
    r.rated_what = "1 V";
  }
  const double probe = 1e-4 * r.rated_peak_v / std::max(std::abs(c.nominal.gain), 1e-3);
  r.gain = (at(probe) - at(-probe)) / (2 * probe);
  if (!std::isfinite(r.gain) || r.gain == 0) r.gain = c.nominal.gain;
  const double in_peak = r.rated_peak_v / std::max(std::abs(r.gain), 1e-6);
  constexpr int kSteps = 160;
  for (int k = 0; k <= kSteps; ++k) {
    const double x = -2.5 * in_peak + 5.0 * in_peak * k / kSteps;
    r.v_in.push_back(x);
    r.v_out.push_back(at(x));
  }
  // Interpolate over the solved points only.
  std::vector<double> xs, ys;
  for (std::size_t i = 0; i < r.v_in.size(); ++i)
    if (std::isfinite(r.v_out[i])) xs.push_back(r.v_in[i]), ys.push_back(r.v_out[i]);
  if (xs.size() < 2) return r;
  for (int k = 0; k <= 120; ++k) {
    const double deg = 3.0 * k;
    const double s = std::sin(deg * std::numbers::pi / 180);
    r.phase_deg.push_back(deg);
    r.ideal_rated.push_back(r.gain * in_peak * s);
    r.out_rated.push_back(interpolate(xs, ys, in_peak * s));
    r.ideal_over.push_back(r.gain * 2 * in_peak * s);
    r.out_over.push_back(interpolate(xs, ys, 2 * in_peak * s));
  }
  return r;
}

}  // namespace shelfstage::report
