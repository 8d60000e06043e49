// When nothing fits: which constraint binds (each limit let go in turn, else the commonest
// stop, with the words for each), how close the stages come, and what to buy.
#include <algorithm>
#include <functional>
#include <map>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "detail.hpp"
#include "shelfstage/synth/purchases.hpp"
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

// The request as a diagnosis's own search puts it: only whether anything fits (the best
// design, no Monte Carlo, no diagnosis of its own).
Spec asking_whether_it_fits(const Spec& spec) {
  Spec s = spec;
  s.explain_failure = false;
  s.top = 1;
  s.mc_samples = 0;
  return s;
}

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
//     stops (binding_of, below) stays the answer, and the sentence says so (diagnose, which
//     only then probes how close the stages come to a gain none reaches).
Relaxed relax_each(const Spec& spec, const Inventory& inv, const Shelf& shelf) {
  Spec base = asking_whether_it_fits(spec);
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

namespace {

// The sentence for the binding constraint from the stop counts and the stages' reach.
std::string describe_binding(const std::string& binding, const Spec& spec, const SearchStats& t, bool all_past_rating) {
  if (binding == "gain" && t.least_gain < 1e300 && t.least_gain > spec.gain * (1.0 + spec.gain_tol))
    return fmt::format("no stage comes down to a gain of {:.3g} into {}: the lowest any stocked device gives is {:.3g}",
                       spec.gain, units::format_value(spec.load_ohm, units::Unit::ohm), t.least_gain);
  if (binding == "gain" && t.best_gain >= spec.gain * (1.0 - spec.gain_tol))
    return fmt::format(
        "stages reach a gain of {:.3g} (up to {:.3g} into {}), but none that does meets the rest of the "
        "request",
        spec.gain, t.best_gain, units::format_value(spec.load_ohm, units::Unit::ohm));
  // (The stages searched, and the probe of how close they come, keep the input impedance
  // asked: the words say so, since without it the gain may well be in reach.)
  if (binding == "gain")
    return fmt::format("no stage{} reaches a gain of {:.3g} into {}: the largest any stocked device reaches is {:.3g}",
                       spec.zin_min_ohm > 0 ? fmt::format(" with an input impedance of {} or more",
                                                          units::format_value(spec.zin_min_ohm, units::Unit::ohm))
                                            : std::string(),
                       spec.gain, units::format_value(spec.load_ohm, units::Unit::ohm), t.best_gain);
  if (binding == "swing" && spec.swing_vpp && *spec.swing_vpp >= spec.supply_lo_v)
    return fmt::format(
        "a swing of {:.3g} Vpp does not fit in a supply of {}: a stage's output swings within its "
        "rail (less its transistor's headroom)",
        *spec.swing_vpp, units::format_value(spec.supply_lo_v, units::Unit::volt));
  // Stages with the gain that swing enough at nominal, stopped by something else (the swing at
  // a corner, or another limit): the largest swing they reach says nothing against the swing.
  if (binding == "swing" && t.best_swing >= least_swing_peak(spec))
    return fmt::format(
        "stages with the gain swing {:.3g} Vpp at nominal (up to {:.3g} Vpp), but none that does meets the rest "
        "of the request",
        2 * least_swing_peak(spec), 2 * t.best_swing);
  if (binding == "swing")
    return fmt::format("no stage swings {:.3g} Vpp{} at every corner: the best reaches {:.3g} Vpp at nominal",
                       2 * least_swing_peak(spec),
                       spec.swing_vpp ? "" : " (the least room kept when no swing is asked: a tenth of the supply)",
                       2 * t.best_swing);
  // Likewise stages with the gain whose input impedance holds at nominal.
  if (binding == "zin" && t.best_zin >= spec.zin_min_ohm)
    return fmt::format(
        "stages with the gain keep their input impedance above {} at nominal (up to {}), but none that does meets "
        "the rest of the request",
        units::format_value(spec.zin_min_ohm, units::Unit::ohm), units::format_value(t.best_zin, units::Unit::ohm));
  if (binding == "zin")
    return fmt::format("no stage keeps its input impedance above {}: the best reaches {}",
                       units::format_value(spec.zin_min_ohm, units::Unit::ohm),
                       units::format_value(t.best_zin, units::Unit::ohm));
  if (binding == "current") return "every stage that works draws more than the current limit";
  if (binding == "band") return "no stage stays flat within 1 dB across the band at every corner";
  if (binding == "bias") return "no stage holds its transistor in the active region at every corner";
  if (binding == "stock" && spec.copies > 1)
    return fmt::format(
        "one copy can be built, but the stages that work need more pieces than the shelf holds for "
        "{} copies",
        spec.copies);
  if (binding == "stock") return "the stages that would work need more pieces than the shelf holds";
  if (binding == "capacitor")
    return "the shelf holds no capacitor large enough, or rated high enough, for the band and the supply (" +
           t.capacitor_need + ")";
  // A stop in words without its key ("rating: SQ-410 may hold ..." -> "SQ-410 may hold ...").
  const auto words = [](const std::string& stop) { return stop.substr(stop.find(':') + 2); };
  const auto example = [&](const std::string& k) {
    const auto it = t.corner_examples.find(k);
    return it == t.corner_examples.end() ? std::string() : " (for one: " + words(it->second) + ")";
  };
  if (binding == "rating" && all_past_rating)
    return fmt::format(
        "no stocked device may take a supply of {:.3g} V (common practice: a transistor holds at most {:.0f} % of "
        "its VCEO or VDS(max), an op-amp's span stays within its rating; for one: {})",
        std::abs(spec.supply_hi_v), 100 * kDeviceVoltageShare, words(t.past_rating_example));
  if (binding == "rating") return "every stage that works runs a part beyond its rating" + example("rating");
  if (binding == "stability")
    return fmt::format(
               "every feedback stage that works keeps less than the {:.0f}\u00b0 of phase margin asked at some corner, "
               "and no capacitor on the shelf across its feedback resistor brings it up",
               spec.least_margin_deg) +
           example("stability");
  if (binding == "polarity") return "every stage that works would reverse-bias an electrolytic" + example("polarity");
  if (binding == "distortion")
    return fmt::format("no stage keeps its THD within {:g} % at {:.3g} Vpp at every corner", 100 * spec.max_thd,
                       spec.swing_vpp.value_or(0)) +
           example("distortion");
  return "nothing on the shelf makes a working stage for this request";
}

// The constraint that stopped the most candidates (those that got furthest count first:
// a stage that works at nominal but not at a corner); a gain the stages reach is not the
// reason, the next most common stop is.
std::string most_common_stop(const SearchStats& tally) {
  const auto& stops = tally.corner_failures.empty() ? tally.failures : tally.corner_failures;
  std::string binding = "gain";
  long most = -1;
  for (const auto& [k, v] : stops)
    if (v > most) {
      most = v;
      binding = k;
    }
  if (binding == "gain" && tally.gain_met) {
    most = -1;
    for (const auto& [k, v] : stops)
      if (k != "gain" && v > most) {
        most = v;
        binding = k;
      }
  }
  return binding;
}

// Every job's device past its rating on this supply (Searcher::prepare): nothing drafted.
bool all_past_rating(const Run& run) {
  return !run.jobs.empty() && run.tally.past_rating >= static_cast<long>(run.jobs.size());
}

// Whether no working stage reached the gain.
bool no_stage_reaches_gain(const Run& run) {
  return !run.jobs.empty() && !all_past_rating(run) && !run.tally.gain_met &&
         run.tally.best_gain < run.spec.gain * (1.0 - run.spec.gain_tol);
}

// How close the stages come to a gain none reaches: a probe with the largest load resistors the
// headroom allows. For the words alone, so only when they are given: not for a diagnosis's own
// searches (which only ask whether anything fits) and not when letting a limit go names what
// binds (a third of a request that fits nothing went on these probes).
void probe_gain(const Run& run) {
  SearchStats probe;
  run_jobs(run.spec, run.shelf, run.jobs, probe, {}, true);
  run.tally.best_gain = std::max(run.tally.best_gain, probe.best_gain);
}

// What binds when nothing fits: the most common stop, unless the gain is out of reach, one
// copy fits where several do not, or the swing is beyond the supply.
std::string binding_of(const Run& run) {
  const Spec& spec = run.spec;
  SearchStats& tally = run.tally;
  std::string binding = most_common_stop(tally);
  // Every device past its rating on this supply binds, whatever the gain.
  const bool only_ratings = all_past_rating(run);
  if (only_ratings) binding = "rating";
  if (tally.proposals == 0 && !only_ratings) binding = run.jobs.empty() ? "devices" : "gain";
  // No working stage reached the gain: that binds first (how close the stages come:
  // probe_gain).
  if (no_stage_reaches_gain(run)) binding = "gain";
  // Several copies that the shelf holds too few pieces for: when one copy fits, the
  // quantity binds, whatever stopped the rest.
  if (spec.explain_failure && spec.copies > 1 && tally.failures.count("stock") && !run.jobs.empty()) {
    Spec one = asking_whether_it_fits(spec);
    one.copies = 1;
    if (!design_on(one, run.inv, run.shelf).candidates.empty()) binding = "stock";
  }
  // A swing beyond the supply binds before anything else: an output swings within its rail.
  if (spec.swing_vpp && *spec.swing_vpp >= spec.supply_lo_v) binding = "swing";
  return binding;
}

// How many stages were proposed, and what stopped them at nominal and at the corners.
std::string stop_counts(const SearchStats& tally) {
  auto list = [](const std::map<std::string, long>& m) {
    std::string out;
    for (const auto& [k, v] : m) out += fmt::format("{}{} {}", out.empty() ? "" : ", ", v, k);
    return out;
  };
  return fmt::format(" ({} stages proposed; stopped at nominal: {}; at the corners: {}{})", tally.proposals,
                     tally.failures.empty() ? "none" : list(tally.failures),
                     tally.corner_failures.empty() ? "none" : list(tally.corner_failures),
                     tally.past_rating > 0 ? fmt::format("; {} stage and device pairings not tried, the supply past "
                                                         "the device's rating",
                                                         tally.past_rating)
                                           : std::string());
}

// The smallest purchase that gives a design, as lines to buy and the design it makes.
void suggest_purchases(Diagnosis& d, const Spec& spec, const Inventory& inv) {
  auto bought = smallest_purchase(spec, inv);
  if (!bought) return;
  for (const auto& l : bought->buy) {
    const bool resistor = l.kind == store::PartKind::resistor;
    std::string roles;
    for (const auto& role : l.roles) roles += (roles.empty() ? "" : ", ") + role;
    d.suggestions.push_back(fmt::format(
        "buy {} x {} {}{} for {} of {} with {}{}", l.qty,
        units::format_value(l.value, resistor ? units::Unit::ohm : units::Unit::farad), units::format_tolerance(l.tol),
        resistor ? std::string() : fmt::format(" {}V {}", l.rating, l.dielectric), roles,
        bought->design.topology_name(), bought->design.device.name,
        l.held > 0 ? fmt::format(" (the shelf holds {} of the {} needed)", l.held, l.held + l.qty) : std::string()));
  }
  d.with_purchases = std::move(bought->design);
}

// What every stage takes and the shelf holds none of, in words (empty: it holds some of each):
// resistors, capacitors, or a piece of any transistor or op-amp type the stages take.
std::string shelf_lacks(const Run& run) {
  bool resistors = false, capacitors = false;
  for (const auto& p : run.inv.parts)
    if (!p.removed && p.available() > 0) {
      resistors |= p.kind == store::PartKind::resistor;
      capacitors |= p.kind == store::PartKind::capacitor;
    }
  if (!resistors || !capacitors)
    return fmt::format("the shelf holds no {} to build a stage with", !resistors && !capacitors
                                                                          ? "resistors or capacitors"
                                                                      : !resistors ? "resistors"
                                                                                   : "capacitors");
  const bool any_device = std::any_of(run.jobs.begin(), run.jobs.end(), [](const Job& j) {
    return j.device_available > 0 && (!j.device2 || j.device2_available > 0);
  });
  if (!run.jobs.empty() && !any_device)
    return "the shelf holds no piece of the transistor or op-amp types the stages take (their types are described, "
           "none is stocked)";
  return {};
}

}  // namespace

// A divider of two resistors fed from the source into the load with an input impedance of at
// least Zin reaches at most RL / (Rs + max(Zin, RL)) (the series resistor Zin - RL, nothing
// across the load). An attenuation within that reach is worth a word: the divider gives it
// without a transistor.
bool divider_reaches(const Spec& spec) {
  return spec.gain < 1.0 && spec.gain <= spec.load_ohm / (spec.source_ohm + std::max(spec.zin_min_ohm, spec.load_ohm));
}

void diagnose(Diagnosis& d, const Run& run) {
  const Spec& spec = run.spec;
  const bool searched = !run.jobs.empty();
  const bool only_ratings = all_past_rating(run);
  // A shelf without a kind of part every stage takes: that binds, whatever the counts say.
  const std::string lacks = searched && !only_ratings ? shelf_lacks(run) : std::string();
  const std::string binding = lacks.empty() ? binding_of(run) : "stock";
  // Each limit let go in turn names what binds, when one alone does (not the quantity: one copy
  // fits there, or the drawer lacks a kind of part; not a supply past every device's rating: no
  // other limit let go changes that).
  Relaxed relaxed;
  if (searched && spec.explain_failure && spec.stages_min <= 1 && binding != "stock" && !only_ratings)
    relaxed = relax_each(spec, run.inv, run.shelf);
  if (!lacks.empty()) {
    d.binding = "stock";
    d.detail = lacks;
  } else if (!relaxed.binding.empty()) {
    d.binding = relaxed.binding;
    d.detail = relaxed.detail;
  } else {
    if (binding == "gain" && spec.explain_failure && no_stage_reaches_gain(run)) probe_gain(run);
    d.binding = binding;
    d.detail = searched ? describe_binding(binding, spec, run.tally, only_ratings)
                        : "no stocked transistor fits the chosen topologies and device filters";
    if (relaxed.any && binding != "gain")
      d.detail += "; no one limit of the request, let go alone, gives a single stage that works";
  }
  // A pair takes two types: a filter naming only its input device leaves it no Q2.
  if (!searched && !spec.devices.empty())
    for (const auto* t : stages::registry())
      if (t->second_device() != stages::SecondDevice::none &&
          std::find(spec.topologies.begin(), spec.topologies.end(), t->name()) != spec.topologies.end()) {
        d.detail += " (a feedback pair takes two types: name its second transistor, Q2, with --device as well)";
        break;
      }
  if (divider_reaches(spec))
    d.detail = fmt::format(
        "a gain of {:.3g} is an attenuation of {:.1f} dB: two resistors as a divider give it without a "
        "transistor; {}",
        spec.gain, -units::to_db(spec.gain), d.detail);
  if (spec.stages_max >= 2 && !spec.piece && searched)
    d.detail += fmt::format("; no chain of up to {} stages meets it either", spec.stages_max);
  if (!run.tally.corner_failures.empty() && binding != "stock")
    d.detail +=
        "; stages that work at nominal fail at the worst-case corners of the device spread, "
        "tolerances or supply (a measured piece, --piece, narrows the spread)";
  if (!run.tally.failures.empty() || !run.tally.corner_failures.empty() || run.tally.past_rating > 0)
    d.detail += stop_counts(run.tally);
  if (searched && spec.explain_failure) suggest_purchases(d, spec, run.inv);
}

}  // namespace shelfstage::synth::detail
