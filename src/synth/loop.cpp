// A feedback stage's loop gain over its corners (design.hpp, LoopFigures): the exact
// solver's double injection (stages/loop.hpp) at every corner piece and the nominal one, at
// both supply ends and both temperature ends, in the conditions the stage works in.
#include <cmath>
#include <fmt/format.h>

#include "detail.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::synth::detail {

std::string assess_loop(Candidate& c, const Spec& spec, std::vector<std::string>& cautions, const std::string& prefix,
                        double source_ohm) {
  c.loop.reset();
  const auto brk = c.topology->feedback_loop();
  if (!brk) return {};
  const std::size_t role = c.topology->role_index(brk->role);
  if (role >= c.topology->roles().size() || !(c.values[role] > 0)) return {};
  LoopFigures lf;
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
  try {
    {
      stages::Conditions cond = base;
      lf.nominal = *stages::loop_gain(*c.topology, c.values, c.nominal_device, cond, lf.f_mid_hz);
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
          join(*stages::loop_gain(*c.topology, c.values, make_transistor(spread, f, temp), cond, lf.f_mid_hz));
        }
  } catch (const Error& e) {
    return fmt::format("bias: {} (measuring the feedback loop)", e.what());
  }
  if (!lf.margin_deg.empty && lf.margin_deg.min < kLeastPhaseMarginDeg)
    cautions.push_back(fmt::format(
        "{}the feedback loop's phase margin falls to {:.0f}\u00b0 at a corner (common practice: at least "
        "{:.0f}\u00b0): "
        "expect peaking and ringing near {}, or oscillation; a smaller load capacitance, or a capacitor across {}, "
        "gives it room",
        prefix, lf.margin_deg.min, kLeastPhaseMarginDeg,
        units::format_value(lf.f_cross.empty ? 0.0 : lf.f_cross.min, units::Unit::hertz), designator));
  c.loop = std::move(lf);
  return {};
}

}  // namespace shelfstage::synth::detail
