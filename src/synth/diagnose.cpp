// When nothing fits: which constraint binds, found by letting each go in turn.
#include <algorithm>
#include <functional>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "detail.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::synth::detail {

namespace {

using units::format_value;
using units::Unit;

std::string ohms(double v) { return format_value(v, Unit::ohm); }
std::string amps(double v) { return format_value(v, Unit::ampere); }
std::string percent(double v) { return fmt::format("{:.2g} %", 100 * v); }

/// One constraint a request may relax: whether the request has it, how to let it go, and what
/// the best design without it says about it.
struct Relaxation {
  const char* binding;
  std::function<bool(const Spec&)> applies;
  std::function<void(Spec&)> relax;
  std::function<std::string(const Spec&, const Candidate&)> said;
};

std::string stage_words(const Candidate& c) { return fmt::format("{} with {}", c.topology_name(), c.device.name); }

const std::vector<Relaxation>& relaxations() {
  static const std::vector<Relaxation> all = {
      {"zin", [](const Spec& s) { return s.zin_min_ohm > 0; }, [](Spec& s) { s.zin_min_ohm = 0; },
       [](const Spec& s, const Candidate& c) {
         return fmt::format(
             "the input impedance binds: a gain of {:.3g} needs Zin of {} or less with the stages and parts here "
             "(the best without the limit, {}, has Zin {} at its worst corner; {} or more was asked)",
             s.gain, ohms(c.worst.zin.min), stage_words(c), ohms(c.worst.zin.min), ohms(s.zin_min_ohm));
       }},
      {"distortion", [](const Spec& s) { return s.swing_vpp.has_value() && s.max_thd < 0.3; },
       [](Spec& s) { s.max_thd = 0.3; },
       [](const Spec& s, const Candidate& c) {
         return fmt::format(
             "the distortion bound binds: at {:.3g} Vpp the best stage ({}) reaches {} THD at its worst corner, "
             "above the {} asked (--max-distortion)",
             *s.swing_vpp, stage_words(c), percent(c.worst.thd.max), percent(s.max_thd));
       }},
      {"swing", [](const Spec& s) { return s.swing_vpp.has_value(); },
       [](Spec& s) {
         s.swing_vpp.reset();
         s.least_swing = 0;
       },
       [](const Spec& s, const Candidate& c) {
         // (The stage named is the most accurate one without the limit, not the one that swings
         // most: its swing says what that stage gives, not what the supply allows.)
         return fmt::format(
             "the swing binds: without it a stage meets the rest of the request, but none holds the swing at every "
             "corner within {} THD (the most accurate without the limit, {}, gives {:.3g} Vpp, short of the {:.3g} "
             "Vpp asked)",
             percent(s.max_thd), stage_words(c), 2 * c.worst.swing_peak.min, *s.swing_vpp);
       }},
      {"stability", [](const Spec& s) { return s.least_margin_deg > kLeastPhaseMarginDeg; },
       [](Spec& s) { s.least_margin_deg = kLeastPhaseMarginDeg; },
       [](const Spec& s, const Candidate& c) {
         return fmt::format(
             "the phase margin binds: the best stage without it ({}) keeps {:.0f}\u00b0 at its worst corner, short "
             "of the {:.0f}\u00b0 asked (--phase-margin), and no capacitor on the shelf across its feedback "
             "resistor brings it up",
             stage_words(c), c.loop && !c.loop->margin_deg.empty ? c.loop->margin_deg.min : 0.0, s.least_margin_deg);
       }},
      {"current", [](const Spec& s) { return s.max_current_a.has_value(); }, [](Spec& s) { s.max_current_a.reset(); },
       [](const Spec& s, const Candidate& c) {
         return fmt::format(
             "the current budget binds: the best stage without it ({}) draws {} at its worst corner, "
             "against the {} allowed",
             stage_words(c), amps(c.worst.supply_current.max), amps(*s.max_current_a));
       }},
      {"band", [](const Spec& s) { return s.band_hz.has_value(); }, [](Spec& s) { s.band_hz.reset(); },
       [](const Spec& s, const Candidate& c) {
         const double loss = std::max(c.worst.loss_lo_db.empty ? 0.0 : c.worst.loss_lo_db.max,
                                      c.worst.loss_hi_db.empty ? 0.0 : c.worst.loss_hi_db.max);
         return fmt::format(
             "the band binds: the best stage without it ({}) has its -3 dB points at {} and {} at its worst "
             "corners{}, where {}..{} within 1 dB was asked",
             stage_words(c), format_value(c.worst.f_low.max, Unit::hertz),
             c.worst.f_high.empty || c.worst.f_high.min <= 0 ? std::string("none")
                                                             : format_value(c.worst.f_high.min, Unit::hertz),
             loss > 0 ? fmt::format(" (a loss of {:.2g} dB at the band's edge)", loss) : std::string(),
             format_value(s.band_hz->first, Unit::hertz), format_value(s.band_hz->second, Unit::hertz));
       }},
  };
  return all;
}

}  // namespace

// NOTES:
//  1. Each relaxation is a whole search of single stages (the best one, no Monte Carlo, no
//     diagnosis of its own), with one constraint let go and every other kept. The first that
//     finds a design names the binding constraint, with its figure against the request.
//  2. The order goes from the constraint most often set by habit to the one least often:
//     input impedance, distortion (before the swing it qualifies), swing, phase margin,
//     current, band.
//  3. When no single relaxation finds a design, more than one constraint binds: the count of
//     stops (design.cpp) stays the answer, and the sentence says so (diagnose in design.cpp,
//     which only then probes how close the stages come to a gain none reaches).
Relaxed relax_each(const Spec& spec, const Inventory& inv, const Shelf& shelf) {
  Spec base = spec;
  base.explain_failure = false;
  base.top = 1;
  base.mc_samples = 0;
  base.stages_min = 1;
  base.stages_max = 1;
  Relaxed out;
  for (const Relaxation& r : relaxations()) {
    if (!r.applies(spec)) continue;
    out.any = true;
    Spec probe = base;
    r.relax(probe);
    const DesignResult got = design_on(probe, inv, shelf);
    if (got.candidates.empty()) continue;
    out.binding = r.binding;
    out.detail = r.said(spec, got.candidates.front());
    break;
  }
  return out;
}

}  // namespace shelfstage::synth::detail
