// A feedback stage's loop gain over its corners (design.hpp, LoopFigures): the exact
// solver's double injection (stages/loop.hpp) at every corner piece and the nominal one, at
// both supply ends and both temperature ends, in the conditions the stage works in.
#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <numbers>

#include "detail.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::synth::detail {

std::string assess_loop(Candidate& c, const Spec& spec, const std::string& prefix, double source_ohm) {
  c.loop.reset();
  const auto brk = c.topology->feedback_loop();
  if (!brk) return {};
  const std::size_t role = c.topology->role_index(brk->role);
  if (role >= c.topology->roles().size() || !(c.values[role] > 0)) return {};
  LoopFigures lf;
  lf.least_margin_deg = spec.least_margin_deg;
  std::string designator(c.topology->roles()[role].designator);
  for (const auto& rp : c.parts)
    if (rp.role == brk->role) designator = rp.designator;
  lf.broken_at = fmt::format("{} ({}) at the {}", designator, brk->role, c.topology->net_words(brk->net));
  // Mid-band: the middle of the stage's own band, on a log scale.
  const double lo = c.nominal.f_low_hz, hi = c.nominal.f_high_hz;
  lf.f_mid_hz = lo > 0 && hi > lo ? std::sqrt(lo * hi) : 1e3;
  const StageSpread spread = spread_of(c);
  std::vector<StagePiece> pieces = spread.corners();
  pieces.push_back(spread.nominal());
  std::vector<double> temps = {spec.temp_nominal_c()};
  if (spec.temp_c) temps = {spec.temp_c->first, spec.temp_c->second};
  stages::Conditions base = c.conditions;
  if (source_ohm >= 0) base.source_ohm = source_ohm;
  stages::LoopMemo memo;  // builds whose broken loops are the same system are swept once
  try {
    {
      stages::Conditions cond = base;
      lf.nominal = *stages::loop_gain(*c.topology, c.values, c.nominal_device, cond, lf.f_mid_hz, &memo);
    }
    auto join = [&](const stages::LoopGain& g) {
      ++lf.corners;
      lf.mid.add(g.mid);
      if (g.crosses()) {
        ++lf.crossing;
        lf.f_cross.add(g.f_cross_hz);
        lf.margin_deg.add(g.phase_margin_deg);
      }
    };
    join(lf.nominal);
    for (const double temp : temps)
      for (const double vs : {spec.supply_lo_v, spec.supply_hi_v})
        for (const auto& f : pieces) {
          stages::Conditions cond = base;
          cond.supply_v = vs;
          cond.celsius = temp;
          join(*stages::loop_gain(*c.topology, c.values, make_transistor(spread, f, temp), cond, lf.f_mid_hz, &memo));
        }
  } catch (const Error& e) {
    return fmt::format("bias: {} (measuring the feedback loop)", e.what());
  }
  const bool short_margin = !lf.margin_deg.empty && lf.margin_deg.min < spec.least_margin_deg;
  const double least = lf.margin_deg.empty ? 0.0 : lf.margin_deg.min;
  const double f_cross = lf.f_cross.empty ? 0.0 : lf.f_cross.min;
  c.loop = std::move(lf);
  if (short_margin)
    return fmt::format(
        "stability: {}the feedback loop's phase margin falls to {:.0f}\u00b0 at a corner, under the {:.0f}\u00b0 "
        "asked for: expect peaking and ringing near {}, or oscillation; a smaller load capacitance, or a capacitor "
        "across {}, gives it room",
        prefix, least, spec.least_margin_deg, units::format_value(f_cross, units::Unit::hertz), designator);
  return {};
}

std::string finish_with_margin(Candidate& c, const Spec& spec, const Shelf& shelf) {
  const stages::Topology& t = *c.topology;
  const auto brk = t.feedback_loop();
  const std::size_t cf = t.role_index(stages::kRoleCompensation);
  const std::size_t rf = brk ? t.role_index(brk->role) : t.roles().size();
  if (cf >= t.roles().size() || c.values[cf] > 0 || rf >= t.roles().size() || !(c.values[rf] > 0))
    return finish_stage(c, spec);
  // The nominal pieces first (one sweep of the loop): a design short there goes straight to
  // the capacitors, one that holds there is finished and may still fall short at a corner.
  const double f_mid = 1e3;  // the margin does not depend on where |T| is read
  stages::LoopGain nominal;  // f_cross 0: not measured, or no crossover
  try {
    nominal = stages::loop_gain(t, c.values, c.nominal_device, c.conditions, f_mid).value_or(stages::LoopGain{});
  } catch (const Error&) {
  }
  std::string why;
  if (!nominal.crosses() || nominal.phase_margin_deg >= spec.least_margin_deg) {
    why = finish_stage(c, spec);
    if (!why.starts_with("stability") || !nominal.crosses()) return why;
  } else {
    why = fmt::format(
        "stability: the feedback loop's phase margin is {:.0f}\u00b0 with the nominal pieces, under the {:.0f}\u00b0 "
        "asked",
        nominal.phase_margin_deg, spec.least_margin_deg);
  }
  // The stock for every copy, counted with the design's other parts (nothing bought).
  std::vector<const Combo*> combos;
  for (const auto& rp : c.parts) combos.push_back(&rp.combo);
  combos.push_back(nullptr);  // the capacitor tried
  auto stocked = [&](const Combo& cb) {
    combos.back() = &cb;
    return parts_short(shelf, combos, spec.copies) == 0;
  };
  // A capacitor across RF leads the loop's phase by its zero, 1 / (2 pi RF CF): it acts within
  // a decade and a half of the crossover either way (common practice for lead compensation),
  // and its zero stays above the band's top edge, where it would otherwise take the gain down
  // toward one inside the band. It holds at most the rail (its DC and the swing).
  const double two_pi_rf = 2 * std::numbers::pi * c.values[rf], fc = nominal.f_cross_hz;
  double c_lo = 1.0 / (two_pi_rf * 30 * fc), c_hi = 30.0 / (two_pi_rf * fc);
  if (spec.band_hz) c_hi = std::min(c_hi, 1.0 / (two_pi_rf * spec.band_hz->second));
  std::vector<const Combo*> trials;
  double first = 0;
  for (const Combo& cb : shelf.capacitors()) {
    if (cb.nominal < c_lo) continue;
    // The smallest that holds and those up to twice it: fewer pieces first among them.
    if (cb.nominal > c_hi || (first > 0 && cb.nominal > 2 * first)) break;
    if (cb.polarised || cb.purchase) continue;
    if (cb.rating > 0 && cb.rating < 1.25 * spec.supply_hi_v) continue;
    if (!stocked(cb)) continue;
    // The corners only for one that holds at the nominal pieces with a few degrees to spare.
    stages::Values v = c.values;
    v[cf] = cb.nominal;
    try {
      const auto g = stages::loop_gain(t, v, c.nominal_device, c.conditions, f_mid);
      if (g && (!g->crosses() || g->phase_margin_deg >= spec.least_margin_deg + 3.0)) {
        trials.push_back(&cb);
        if (first == 0) first = cb.nominal;
      }
    } catch (const Error&) {
    }
  }
  std::stable_sort(trials.begin(), trials.end(), [](const Combo* a, const Combo* b) { return a->count < b->count; });
  if (trials.size() > 3) trials.resize(3);
  const Candidate before = c;
  for (const Combo* cb : trials) {
    c = before;
    c.values[cf] = cb->nominal;
    RolePart part = role_part(t, cf, *cb, shelf);
    auto at =
        std::find_if(c.parts.begin(), c.parts.end(), [&](const RolePart& rp) { return t.role_index(rp.role) > cf; });
    c.parts.insert(at, std::move(part));
    c.pieces += cb->count;
    finalize(c, shelf);
    const std::string v = finish_stage(c, spec);
    if (v.empty()) return {};
    if (!v.starts_with("stability")) why = v;
  }
  c = before;
  if (trials.empty())
    why += fmt::format(
        "; no capacitor on the shelf across {} brings it up (stocked for every copy, rated for the "
        "rail, its corner above the band)",
        t.roles()[rf].name);
  return why;
}

}  // namespace shelfstage::synth::detail
