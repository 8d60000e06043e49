// Test support for the synthesizer's tests: a Monte Carlo of a candidate's builds written
// here, independent of src/synth/evaluate.cpp, to check the yield it reports.
//
// The independent sampling (own_errors and own_yield below) draws builds the way docs/worst-case.md and
// README.md ("How candidates are ranked") describe them, with its own random engine:
//  - a JFET piece: ln|VP| and ln BETA uniform over the model and draws outside the IDSS range
//    rejected (docs/worst-case.md, "Transistor pieces"), the BETA band worked out here from the
//    record as that page states it (the diagonal pieces' and the typical BETA, widened by 1.25
//    each way);
//  - a BJT piece: hFE over its datasheet range and VBE within +/- the record's spread. The docs
//    state the ranges, not the shape; the draw here is log-uniform in hFE and uniform in the VBE
//    shift (as the code's NOTES in devices/spread.hpp say), so this part checks the sampling's
//    wiring (ranges, temperature, parts) rather than a documented distribution;
//  - every part uniform within its bounds, the supply and the temperature uniform over their
//    ranges;
//  - a build meets the request when it is biased and active, gives the swing (without one, the
//    least room before clipping docs/worst-case.md states), stays within the
//    current budget, keeps Zin and loses at most 1 dB at the band's edges, and its gain is
//    within gain_tol of the request (the request's meaning as README.md gives it).
// The physics of one build (the closed forms, the device at a temperature) is shared with the
// program: what is checked is the sampling and counting, which a Monte Carlo returning a
// constant, or one that ignored a source of spread, would get wrong.
#pragma once
#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "shelfstage/stages/chain.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::test {

// One random source for the test's own draws, unrelated to the program's seed handling.
struct Dice {
  std::minstd_rand rng;
  std::uniform_real_distribution<double> u{0.0, 1.0};
  explicit Dice(unsigned seed) : rng(seed) {}
  double operator()() { return u(rng); }
  double between(double a, double b) { return a + (b - a) * u(rng); }
};

// A piece drawn from the documented model (see the file comment).
inline stages::Transistor own_piece(const devices::DeviceRecord& d, double celsius, Dice& dice) {
  stages::Transistor q;
  q.kind = d.kind;
  if (devices::is_jfet(d.kind)) {
    const auto& p = d.jfet;
    const double id_lo = std::min(p.idss_a.min, p.idss_a.max), id_hi = std::max(p.idss_a.min, p.idss_a.max);
    const double vp_lo = std::min(std::abs(p.vp_v.min), std::abs(p.vp_v.max));
    const double vp_hi = std::max(std::abs(p.vp_v.min), std::abs(p.vp_v.max));
    const double id_typ = p.idss_a.typ ? *p.idss_a.typ : std::sqrt(id_lo * id_hi);
    const double vp_typ = p.vp_v.typ ? std::abs(*p.vp_v.typ) : std::sqrt(vp_lo * vp_hi);
    const double betas[] = {id_lo / (vp_lo * vp_lo), id_hi / (vp_hi * vp_hi), id_typ / (vp_typ * vp_typ)};
    const double b_lo = std::log(*std::min_element(std::begin(betas), std::end(betas)) / 1.25);
    const double b_hi = std::log(*std::max_element(std::begin(betas), std::end(betas)) * 1.25);
    for (;;) {
      const double x = dice.between(std::log(vp_lo), std::log(vp_hi));
      const double b = dice.between(b_lo, b_hi);
      const double idss = std::exp(b + 2 * x);
      if (idss < id_lo || idss > id_hi) continue;
      q.jfet = devices::jfet_at(p, d.kind, idss, std::exp(x), celsius);
      return q;
    }
  }
  const auto& p = d.bjt;
  const double lo = std::min(p.hfe.min, p.hfe.max), hi = std::max(p.hfe.min, p.hfe.max);
  const double hfe = std::exp(dice.between(std::log(lo), std::log(hi)));
  const double shift = dice.between(-p.vbe_spread_v, p.vbe_spread_v);
  q.bjt = devices::bjt_at(p, d.kind, hfe, celsius, shift);
  return q;
}

/// A stage's devices drawn the same way: Q1, and a feedback pair's Q2 from its own record.
inline stages::Transistor own_pieces(const synth::Candidate& s, double celsius, Dice& dice) {
  stages::Transistor q = own_piece(s.device, celsius, dice);
  if (s.device2) {
    q.paired = true;
    q.bjt2 = own_piece(*s.device2, celsius, dice).bjt;
  }
  return q;
}

// The request's hard constraints (README.md: what "meets the request" means), gain aside.
inline bool constraints_hold(const synth::Spec& spec, const stages::Performance& p) {
  if (!p.valid || !p.active) return false;
  if (spec.swing_vpp && p.swing_peak_v < *spec.swing_vpp / 2) return false;
  // No swing asked: the room before clipping docs/worst-case.md asks all the same.
  if (!spec.swing_vpp && std::max(p.clip_peak_v, p.swing_peak_v) < spec.least_swing * spec.supply_lo_v / 2)
    return false;
  if (spec.max_current_a && p.supply_current_a > *spec.max_current_a) return false;
  if (p.zin_ohm < spec.zin_min_ohm) return false;
  if (spec.band_hz && (p.loss_lo_db > 1.0 || p.loss_hi_db > 1.0)) return false;
  return true;
}

// One build of a single stage or a chain: its gain error |gain|/G - 1, or NaN when a hard
// constraint fails.
inline double own_build(const synth::Candidate& c, const synth::Spec& spec, Dice& dice) {
  const double supply = dice.between(spec.supply_lo_v, spec.supply_hi_v);
  const double t_lo = spec.temp_c ? spec.temp_c->first : spec.temp_nominal_c();
  const double t_hi = spec.temp_c ? spec.temp_c->second : spec.temp_nominal_c();
  const double temp = dice.between(t_lo, t_hi);
  stages::Conditions cond = c.conditions;  // the candidate's own load, source, band, level
  cond.supply_v = supply;
  cond.celsius = temp;
  const auto draw_values = [&](const synth::Candidate& s) {
    stages::Values v = s.values;
    for (const auto& rp : s.parts) v[s.topology->role_index(rp.role)] = dice.between(rp.combo.lo, rp.combo.hi);
    return v;
  };
  stages::Performance p;
  if (c.is_chain()) {
    // A chain: every stage its own piece and parts, one supply and temperature; the gain
    // scaled by the exact solver's nominal over the fast chain's nominal, as the ranking
    // scales it (design.hpp: the chain's nominal figures are the exact solver's).
    std::vector<stages::ChainStage> list = synth::chain_stages(c);
    const double fast = stages::evaluate_chain(list, c.conditions).whole.gain;
    for (std::size_t k = 0; k < c.stages.size(); ++k) {
      list[k].values = draw_values(c.stages[k]);
      list[k].q = own_pieces(c.stages[k], temp, dice);
    }
    p = stages::evaluate_chain(list, cond).whole;
    p.gain *= c.nominal.gain / fast;
  } else {
    const stages::Values v = draw_values(c);
    p = c.topology->evaluate(v, own_pieces(c, temp, dice), cond);
  }
  return constraints_hold(spec, p) ? std::abs(std::abs(p.gain) / spec.gain - 1.0) : std::nan("");
}

inline std::vector<double> own_errors(const synth::Candidate& c, const synth::Spec& spec, int n, unsigned seed) {
  Dice dice(seed);
  std::vector<double> e;
  for (int i = 0; i < n; ++i) e.push_back(own_build(c, spec, dice));
  return e;
}

inline double share_within(const std::vector<double>& errors, double tol) {
  const auto n = std::count_if(errors.begin(), errors.end(), [&](double e) { return !std::isnan(e) && e <= tol; });
  return static_cast<double>(n) / static_cast<double>(errors.size());
}

/// The share of n own builds that meet the request with the gain within spec.gain_tol.
inline double own_yield(const synth::Candidate& c, const synth::Spec& spec, int n, unsigned seed = 20240611u) {
  return share_within(own_errors(c, spec, n, seed), spec.gain_tol);
}

}  // namespace shelfstage::test
