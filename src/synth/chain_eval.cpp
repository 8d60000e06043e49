// A chain of stages evaluated: each stage at its corners in the conditions the chain puts it
// in (detail::chain_corners), and the whole chain by the exact solver (detail::chain_exact).
#include <algorithm>
#include <cmath>
#include <fmt/format.h>

#include "detail.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/stages/exact.hpp"

namespace shelfstage::synth {

std::string Candidate::topology_name() const {
  if (!is_chain()) return topology ? std::string(topology->name()) : std::string();
  std::string s;
  for (const auto& st : stages) s += (s.empty() ? "" : " > ") + st.topology_name();
  return s;
}

stages::ChainStage chain_stage(const Candidate& c) { return {c.topology, c.values, c.nominal_device}; }

std::vector<stages::ChainStage> chain_stages(const Candidate& chain) {
  std::vector<stages::ChainStage> list;
  for (const auto& s : chain.stages) list.push_back(chain_stage(s));
  return list;
}

namespace detail {

namespace {

void rescore(Candidate& ch, const Spec& spec) {
  const double g = spec.gain;
  ch.error_nominal = std::abs(ch.nominal.gain) / g - 1.0;
  ch.error_worst = std::max({std::abs(std::abs(ch.worst.gain.min) / g - 1.0),
                             std::abs(std::abs(ch.worst.gain.max) / g - 1.0), std::abs(ch.error_nominal)});
  ch.score = score_of(ch) + kStagePoints * static_cast<double>(ch.stages.size() - 1);
}

}  // namespace

std::string chain_corners(Candidate& ch, const Spec& spec, long& evaluations) {
  const std::size_t n = ch.stages.size();
  const double t_nom = spec.temp_nominal_c();
  for (auto& s : ch.stages) {
    const devices::DeviceSpread spread = spread_of(s);
    s.nominal_device = make_transistor(spread, spread.nominal(), t_nom);
  }
  const std::vector<stages::ChainStage> list = chain_stages(ch);
  const stages::Conditions cond = conditions(spec, spec.supply_nominal_v(), t_nom);
  const stages::ChainPerformance cp = stages::evaluate_chain(list, cond, stages::Detail::core);
  ch.conditions = cond;
  evaluations += static_cast<long>(n);
  if (const std::string v = violation(spec, cp.whole); !v.empty()) return v + ": the whole chain";
  // From the last stage back, so each knows the smallest gain after it (for its peak).
  double after_min = 1.0, after_max = 1.0;
  Worst w;
  const double out_peak = spec.swing_vpp ? *spec.swing_vpp / 2 : 0.0;
  std::vector<Spec> subs(n);
  for (std::size_t k = n; k-- > 0;) {
    Candidate& s = ch.stages[k];
    s.conditions = cp.conditions[k];
    // The coupling capacitor to the next stage holds the DC between the two stages' bias
    // points, not the DC to ground a stage alone would put on it: its polarity and rating are
    // checked for the link below, not in the stage's own corner pass.
    RolePart* link = nullptr;
    std::string link_plus;
    if (k + 1 < n)
      for (auto& rp : s.parts)
        if (rp.role == "COUT") link = &rp;
    if (link) {
      link_plus = link->plus_net;
      link->plus_net.clear();
    }
    Spec& sub = subs[k];
    sub = spec;
    sub.gain = std::abs(cp.each[k].gain);
    sub.load_ohm = s.conditions.load_ohm;
    sub.source_ohm = s.conditions.source_ohm;
    sub.zin_min_ohm = k == 0 ? spec.zin_min_ohm : 0.0;
    sub.max_current_a.reset();
    sub.swing_vpp.reset();
    if (out_peak > 0) sub.swing_vpp = 2.0 * out_peak / after_min;
    sub.topologies = {std::string(s.topology->name())};
    // The next stage's input impedance moves over its own corners (a follower's with hFE):
    // this stage is checked into the lowest (the heaviest load: least gain and swing), and its
    // gain range widened by the highest.
    const std::string v = [&]() -> std::string {
      if (k + 1 < n && !ch.stages[k + 1].worst.zin.empty) {
        const Range& z = ch.stages[k + 1].worst.zin;
        Candidate light = s;
        Spec sub_hi = sub;
        sub_hi.load_ohm = z.max;
        if (std::string v_hi = evaluate_worst(light, sub_hi, evaluations); !v_hi.empty()) return v_hi;
        sub.load_ohm = z.min;
        if (std::string v_lo = evaluate_worst(s, sub, evaluations); !v_lo.empty()) return v_lo;
        s.worst.gain.add(light.worst.gain.min);
        s.worst.gain.add(light.worst.gain.max);
        s.worst.evaluations += light.worst.evaluations;
        return {};
      }
      return evaluate_worst(s, sub, evaluations);
    }();
    if (link) link->plus_net = link_plus;
    if (!v.empty()) return fmt::format("{}: stage {}", v, k + 1);
    s.nominal = s.topology->evaluate(s.values, s.nominal_device, s.conditions, stages::Detail::full);
    s.error_nominal = s.error_worst = s.score = 0;
    const double lo = std::min(std::abs(s.worst.gain.min), std::abs(s.worst.gain.max));
    const double hi = std::max(std::abs(s.worst.gain.min), std::abs(s.worst.gain.max));
    // Output-referred swing: this stage's smallest peak times the smallest gain after it.
    w.swing_peak.add(s.worst.swing_peak.min * after_min);
    w.swing_peak.add(s.worst.swing_peak.max * after_max);
    w.supply_current.min += s.worst.supply_current.min;
    w.supply_current.max += s.worst.supply_current.max;
    after_min *= lo;
    after_max *= hi;
  }
  w.supply_current.empty = false;
  if (spec.max_current_a && w.supply_current.max > *spec.max_current_a) return "current";
  // The capacitor between stages now holds the DC from the stage's output node to the next
  // stage's gate or base instead of to ground: its rating, and an electrolytic's polarity,
  // at every corner of both.
  for (std::size_t k = 0; k + 1 < n; ++k) {
    Candidate& s = ch.stages[k];
    const auto it = std::find_if(s.parts.begin(), s.parts.end(), [](const RolePart& rp) { return rp.role == "COUT"; });
    if (it == s.parts.end()) continue;
    const std::string inner(stages::output_node(*s.topology));
    const Range& node = stages::output_at_main(*s.topology) ? s.worst.v_out : s.worst.v_common;
    const Range& next = ch.stages[k + 1].worst.v_in;
    // Real node voltages on the one rail: positive when the stage's node sits higher.
    const double lo = node.min - next.max;
    const double hi = node.max - next.min;
    if (it->polarised) {
      // An electrolytic wants a forward DC of a few tenths of a volt at every corner (common
      // practice); where the next stage's input sits higher, it turns round.
      if (lo >= 0.3) {
        it->plus_net = inner;
      } else if (hi <= -0.3) {
        it->plus_net = std::string(stages::kNetOut);
      } else {
        return fmt::format("polarity: {} (COUT of stage {}) has {:.2f}..{:.2f} V across it with stage {}'s bias",
                           it->designator, k + 1, lo, hi, k + 2);
      }
    }
    const double peak = spec.swing_vpp ? *spec.swing_vpp / 2 : s.nominal.swing_peak_v;
    if (it->rating > 0 && it->rating < 1.25 * (std::max(std::abs(lo), std::abs(hi)) + peak))
      return fmt::format("rating: {} (COUT of stage {}) holds up to {:.3g} V DC", it->designator, k + 1,
                         std::max(std::abs(lo), std::abs(hi)));
  }
  const Candidate& first = ch.stages.front();
  const double sign = cp.whole.gain < 0 ? -1.0 : 1.0;
  w.gain.add(sign * after_min);
  w.gain.add(sign * after_max);
  w.bias_current = first.worst.bias_current;
  w.v_in = first.worst.v_in;
  w.v_common = first.worst.v_common;
  w.v_out = first.worst.v_out;
  w.zin = first.worst.zin;
  w.zout = ch.stages.back().worst.zout;
  for (const auto& s : ch.stages) w.evaluations += s.worst.evaluations;
  ch.worst = w;
  ch.topology = nullptr;
  ch.device = first.device;
  ch.piece = first.piece;
  ch.nominal_device = first.nominal_device;
  ch.conditions = cond;
  ch.nominal = cp.whole;
  ch.pieces = 0;
  ch.purchases = 0;
  for (const auto& s : ch.stages) {
    ch.pieces += s.pieces;
    ch.purchases += s.purchases;
  }
  // Every stage's cautions (after the links have turned their electrolytics), the
  // hazardous-voltage one once.
  for (std::size_t k = 0; k < n; ++k) add_cautions(ch.stages[k], subs[k], k + 1 < n ? static_cast<int>(k) + 2 : 0);
  ch.cautions.clear();
  for (std::size_t k = 0; k < n; ++k)
    for (const auto& text : ch.stages[k].cautions) {
      if (text.rfind("hazardous voltage", 0) == 0) {
        if (std::find(ch.cautions.begin(), ch.cautions.end(), text) == ch.cautions.end())
          ch.cautions.insert(ch.cautions.begin(), text);
      } else {
        ch.cautions.push_back(fmt::format("stage {}: {}", k + 1, text));
      }
    }
  rescore(ch, spec);
  return {};
}

std::string chain_exact(Candidate& ch, const Spec& spec, stages::Detail detail, bool scale_worst) {
  const std::vector<stages::ChainStage> list = chain_stages(ch);
  const stages::Performance fast = stages::evaluate_chain(list, ch.conditions).whole;
  stages::Performance p;
  try {
    const circuit::Circuit net = stages::chain_netlist(list, ch.conditions);
    p = stages::evaluate_circuit(net, stages::chain_transistors(list), ch.conditions, detail);
  } catch (const Error& e) {
    return fmt::format("bias: {}", e.what());
  }
  if (const std::string v = violation(spec, p); !v.empty()) return v;
  if (!gain_ok(spec, p.gain)) return "gain: the whole chain";
  if (scale_worst) {
    const double ratio = fast.gain != 0 ? std::abs(p.gain / fast.gain) : 1.0;
    ch.worst.gain.min *= ratio;
    ch.worst.gain.max *= ratio;
  }
  ch.nominal = p;
  rescore(ch, spec);
  return {};
}

}  // namespace detail

}  // namespace shelfstage::synth
