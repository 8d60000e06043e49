// A chain of stages evaluated: each stage at its corners in the conditions the chain puts it
// in (detail::chain_corners), and the whole chain by the exact solver (detail::chain_exact).
#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <map>
#include <memory>
#include <mutex>

#include "detail.hpp"
#include "shelfstage/circuit/solver.hpp"
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
  ch.score = score_of(ch, spec) + stage_points(ch.stages.size());
}

}  // namespace

const RolePart* part_of(const Candidate& s, std::string_view role) {
  const auto it = std::find_if(s.parts.begin(), s.parts.end(), [&](const RolePart& rp) { return rp.role == role; });
  return it == s.parts.end() ? nullptr : &*it;
}

RolePart* part_of(Candidate& s, std::string_view role) {
  return const_cast<RolePart*>(part_of(static_cast<const Candidate&>(s), role));
}

// NOTES (a chain's worst case):
//  1. Each stage is checked at its own corners (its piece, its parts, the supply and
//     temperature ranges) in the conditions the chain puts it in: into the next stage's input
//     impedance at its lowest over that stage's corners (the heaviest load: least gain and
//     swing), its gain range widened by the highest; fed from the source (the first stage) or
//     from its input node (the gain from there; the previous stage's gain already holds the
//     loading). The stages' pieces and parts are independent, so the chain's gain range is the
//     product of the stages' ranges; the shared supply and temperature are treated as if
//     they were not (conservative).
//  2. Output swing: the smallest over the stages of each stage's peak times the gain after it,
//     at the lower ends and at the upper ends; never beyond the last stage's own. Distortion:
//     each stage's at the level it carries (the requested output over the gain after it),
//     summed as if in phase; with a requested swing, the sum must stay within the bound.
//  3. Supply current: the sum of the stages'. Zin, node voltages and bias current: the first
//     stage's. Zout: the last stage's, fed from the previous stage's output impedance at both
//     ends of its range (Depth::full).
//  4. The coupling capacitor between stages holds the DC from the stage's output node to the
//     next stage's input, bounded by the two stages' node ranges; an electrolytic must keep
//     kPolarForwardV forward across all of it (turned round when the next stage sits higher),
//     and its rating must hold the largest.
//  5. The chain's -3 dB corners are sought on the whole chain (chain_band_corners).
//  6. A stage's pass depends on the stages from it to the load alone: its load is the next
//     stage's input impedance, its level the requested output over the gain after it, its
//     source the node before it (the first stage's, the request's source, is the whole
//     chain), and its output capacitor is fitted for the next stage. The search's corner
//     passes (ChainMemo) take the stages from a position on that an earlier chain had there
//     from that chain's pass: the same figures, or the same failure, without the corners
//     again (the best chains of a plan share their last stages: about half the stage passes).

namespace {

// One corner pass over a chain: what its phases share.
struct ChainPass {
  Candidate& ch;
  const Spec& spec;
  long& evaluations;
  Depth depth;
  stages::ChainPerformance cp;  // the whole chain at nominal (the fast cascade)
  std::vector<Spec> subs;       // the request each stage answers to in the chain
};

// What the pass carries from the last stage back (NOTES 2): the gain after the stage at its
// lower and upper ends, and the chain's worst case so far.
struct Backward {
  double after_min = 1.0, after_max = 1.0;
  Worst w;
  Range swing_hi;  // the upper ends of the output-referred swing, for the smallest
};

// The whole chain at nominal: each stage's nominal device, the fast cascade, its constraints.
std::string chain_nominal(ChainPass& pass) {
  Candidate& ch = pass.ch;
  const double t_nom = pass.spec.temp_nominal_c();
  for (auto& s : ch.stages) {
    const StageSpread spread = spread_of(s);
    s.nominal_device = make_transistor(spread, spread.nominal(), t_nom);
  }
  const std::vector<stages::ChainStage> list = chain_stages(ch);
  const stages::Conditions cond = conditions(pass.spec, pass.spec.supply_nominal_v(), t_nom);
  pass.cp = stages::evaluate_chain(list, cond, stages::Detail::core);
  ch.conditions = cond;
  pass.evaluations += static_cast<long>(ch.stages.size());
  if (const std::string v = violation(pass.spec, pass.cp.whole); !v.empty()) return v + ": the whole chain";
  return {};
}

// The request stage k answers to: its gain in the chain, the conditions the chain puts it in,
// the swing it must pass on given the smallest gain after it.
void stage_request(Spec& sub, const Spec& spec, const Candidate& s, double gain, std::size_t k, double after_min) {
  const double out_peak = spec.swing_vpp ? *spec.swing_vpp / 2 : 0.0;
  sub = spec;
  sub.gain = std::abs(gain);
  sub.load_ohm = s.conditions.load_ohm;
  sub.load_farads = s.conditions.load_farads;
  sub.source_ohm = s.conditions.source_ohm;
  sub.zin_min_ohm = k == 0 ? spec.zin_min_ohm : 0.0;
  sub.max_current_a.reset();
  sub.swing_vpp.reset();
  if (out_peak > 0) sub.swing_vpp = 2.0 * out_peak / after_min;
  sub.topologies = {std::string(s.topology->name())};
}

// A stage's worst case (NOTES 1). The next stage's input impedance moves over its own corners
// (a follower's with hFE): this stage is checked into the lowest, and its gain range widened
// by the highest.
std::string stage_worst(Candidate& s, Spec& sub, const Candidate* next, long& evaluations, Depth depth) {
  if (!next || next->worst.zin.empty) return evaluate_worst(s, sub, evaluations, depth);
  const Range& z = next->worst.zin;
  Candidate light = s;
  Spec sub_hi = sub;
  sub_hi.load_ohm = z.max;
  if (std::string v_hi = evaluate_worst(light, sub_hi, evaluations, depth); !v_hi.empty()) return v_hi;
  sub.load_ohm = z.min;
  if (std::string v_lo = evaluate_worst(s, sub, evaluations, depth); !v_lo.empty()) return v_lo;
  s.worst.gain.add(light.worst.gain.min);
  s.worst.gain.add(light.worst.gain.max);
  s.worst.zin.add(light.worst.zin.min);
  s.worst.zin.add(light.worst.zin.max);
  s.worst.evaluations += light.worst.evaluations;
  return {};
}

// A stage's worst case joined to the chain's: the output-referred swing, the supply current,
// the distortion at the level it carries added as if in phase (a bound), the gain after it.
void accumulate(Backward& acc, const Worst& sw) {
  const double lo = std::min(std::abs(sw.gain.min), std::abs(sw.gain.max));
  const double hi = std::max(std::abs(sw.gain.min), std::abs(sw.gain.max));
  acc.w.swing_peak.add(sw.swing_peak.min * acc.after_min);
  acc.swing_hi.add(sw.swing_peak.max * acc.after_max);
  acc.w.supply_current.min += sw.supply_current.min;
  acc.w.supply_current.max += sw.supply_current.max;
  acc.w.thd.min += sw.thd.min;
  acc.w.thd.max += sw.thd.max;
  acc.after_min *= lo;
  acc.after_max *= hi;
}

// Stage k at its corners in the conditions the chain puts it in, joined to acc.
std::string stage_in_chain(ChainPass& pass, std::size_t k, Backward& acc) {
  const std::size_t n = pass.ch.stages.size();
  Candidate& s = pass.ch.stages[k];
  s.conditions = pass.cp.conditions[k];
  // The coupling capacitor to the next stage holds the DC between the two stages' bias
  // points, not the DC to ground a stage alone would put on it: its polarity and rating are
  // checked for the link below, not in the stage's own corner pass.
  RolePart* link = k + 1 < n ? part_of(s, "COUT") : nullptr;
  std::string link_plus;
  if (link) {
    link_plus = link->plus_net;
    link->plus_net.clear();
  }
  Spec& sub = pass.subs[k];
  stage_request(sub, pass.spec, s, pass.cp.each[k].gain, k, acc.after_min);
  s.nominal = s.topology->evaluate(s.values, s.nominal_device, s.conditions,
                                   pass.depth == Depth::full ? stages::Detail::full : stages::Detail::core);
  const std::string v = stage_worst(s, sub, k + 1 < n ? &pass.ch.stages[k + 1] : nullptr, pass.evaluations, pass.depth);
  if (link) link->plus_net = link_plus;
  if (!v.empty()) return fmt::format("{}: stage {}", v, k + 1);
  s.error_nominal = s.error_worst = s.score = 0;
  accumulate(acc, s.worst);
  return {};
}

// The chain's swing, current and distortion once every stage is in (NOTES 2, 3).
std::string close_totals(Backward& acc, const Spec& spec) {
  Worst& w = acc.w;
  w.supply_current.empty = false;
  w.thd.empty = false;
  w.swing_peak.max = std::max(w.swing_peak.min, acc.swing_hi.min);
  if (spec.max_current_a && w.supply_current.max > *spec.max_current_a) return "current";
  if (spec.swing_vpp && w.thd.max > spec.max_thd)
    return fmt::format("distortion: the whole chain reaches {:.2g} % at {:.3g} Vpp", 100 * w.thd.max, *spec.swing_vpp);
  return {};
}

// NOTES 4: the capacitor between stages, at every corner of both.
std::string check_links(Candidate& ch, const Spec& spec) {
  const std::size_t n = ch.stages.size();
  for (std::size_t k = 0; k + 1 < n; ++k) {
    Candidate& s = ch.stages[k];
    RolePart* link = part_of(s, "COUT");
    if (!link) continue;
    const std::string inner(stages::output_node(*s.topology));
    const char field = stages::output_dc_field(*s.topology);
    const Range& node = field == 'm' ? s.worst.v_out : field == 'c' ? s.worst.v_common : s.worst.v_out2;
    const Range& next = ch.stages[k + 1].worst.v_in;
    // Real node voltages on the one rail: positive when the stage's node sits higher.
    const double lo = node.min - next.max;
    const double hi = node.max - next.min;
    if (link->polarised) {
      // An electrolytic wants a forward DC at every corner; where the next stage's input
      // sits higher, it turns round.
      if (lo >= kPolarForwardV) {
        link->plus_net = inner;
      } else if (hi <= -kPolarForwardV) {
        link->plus_net = std::string(stages::kNetOut);
      } else {
        return fmt::format("polarity: {} (COUT of stage {}) has {:.2f}..{:.2f} V across it with stage {}'s bias",
                           link->designator, k + 1, lo, hi, k + 2);
      }
    }
    // Its DC from the + lead (a non-polarised part: the end higher at nominal).
    const bool inner_plus = link->polarised ? link->plus_net == inner : lo + hi >= 0;
    link->dc = {};
    link->dc.add(inner_plus ? lo : -hi);
    link->dc.add(inner_plus ? hi : -lo);
    const double peak = signal_peak(spec, s.nominal);
    if (link->rating > 0 && link->rating < 1.25 * (std::max(std::abs(lo), std::abs(hi)) + peak))
      return fmt::format("rating: {} (COUT of stage {}) holds up to {:.3g} V DC", link->designator, k + 1,
                         std::max(std::abs(lo), std::abs(hi)));
  }
  return {};
}

// The chain's gain range (the product of the stages'), the first stage's input side, the
// last stage's output impedance.
void whole_chain_worst(Backward& acc, const ChainPass& pass) {
  Worst& w = acc.w;
  const Candidate& first = pass.ch.stages.front();
  const double sign = pass.cp.whole.gain < 0 ? -1.0 : 1.0;
  w.gain.add(sign * acc.after_min);
  w.gain.add(sign * acc.after_max);
  w.bias_current = first.worst.bias_current;
  w.v_in = first.worst.v_in;
  w.v_common = first.worst.v_common;
  w.v_out = first.worst.v_out;
  w.zin = first.worst.zin;
  w.zout = pass.ch.stages.back().worst.zout;
}

// NOTES 3: the last stage's output impedance fed from the previous stage's at both ends (the
// distortion left out: it moves no impedance).
std::string fed_zout(ChainPass& pass, Range& zout) {
  const std::size_t n = pass.ch.stages.size();
  const Candidate& last = pass.ch.stages.back();
  const Range& zprev = pass.ch.stages[n - 2].worst.zout;
  Spec plain = pass.subs[n - 1];
  plain.band_hz.reset();
  plain.swing_vpp.reset();
  plain.least_swing = 0;  // the output impedance only
  plain.zin_min_ohm = 0;
  zout = {};
  for (double z : {zprev.min, zprev.max}) {
    Candidate fed = last;
    plain.source_ohm = z;
    if (const std::string v = evaluate_worst(fed, plain, pass.evaluations, Depth::full, false); !v.empty())
      return fmt::format("{}: stage {} fed from stage {}", v, n, n - 1);
    zout.add(fed.worst.zout.min);
    zout.add(fed.worst.zout.max);
  }
  return {};
}

// The chain takes its worst case, its nominal figures and the first stage's device; its
// pieces and purchases are the stages'. Every range of w is built from the stages' worst
// cases, which carry the model margin already (the gain's compounds stage by stage).
void adopt(Candidate& ch, Worst& w, const stages::Performance& whole) {
  for (const auto& s : ch.stages) w.evaluations += s.worst.evaluations;
  const Candidate& first = ch.stages.front();
  ch.worst = std::move(w);
  ch.topology = nullptr;
  ch.device = first.device;
  ch.piece = first.piece;
  ch.spread_model = first.spread_model;
  ch.nominal_device = first.nominal_device;
  ch.nominal = whole;
  ch.pieces = 0;
  ch.purchases = 0;
  for (const auto& s : ch.stages) {
    ch.pieces += s.pieces;
    ch.purchases += s.purchases;
  }
}

// Every stage's cautions (after the links have turned their electrolytics), the
// hazardous-voltage one once.
void gather_cautions(Candidate& ch, const std::vector<Spec>& subs) {
  const std::size_t n = ch.stages.size();
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
}

}  // namespace

struct ChainMemo::Impl {
  /// A stage's pass as stage_in_chain left it: the failure, else the stage, its request and
  /// the chain's figures from it to the load.
  struct Found {
    std::string failed;
    Candidate stage;
    Spec sub;
    Backward acc;
  };
  /// The chain's length and the stages from a position on.
  using Key = std::pair<std::size_t, std::vector<const void*>>;
  std::mutex lock;
  std::map<Key, std::shared_ptr<const Found>> found;
};

ChainMemo::ChainMemo() : impl_(std::make_unique<Impl>()) {}
ChainMemo::~ChainMemo() = default;

std::string chain_corners(Candidate& ch, const Spec& spec, long& evaluations, Depth depth, ChainMemo* memo,
                          std::span<const void* const> ids) {
  const std::size_t n = ch.stages.size();
  ChainPass pass{ch, spec, evaluations, depth, {}, std::vector<Spec>(n)};
  if (std::string v = chain_nominal(pass); !v.empty()) return v;
  if (ids.size() != n || depth != Depth::search) memo = nullptr;
  // From the last stage back, so each knows the smallest gain after it (for its peak).
  Backward acc;
  for (std::size_t k = n; k-- > 0;) {
    // NOTES 6: the stages from k on, and where k stands (the links' designators and input
    // capacitors go by it).
    ChainMemo::Impl::Key key;
    std::shared_ptr<const ChainMemo::Impl::Found> seen;
    if (memo) {
      key = {n, std::vector<const void*>(ids.begin() + static_cast<std::ptrdiff_t>(k), ids.end())};
      const std::lock_guard held(memo->impl().lock);
      if (const auto it = memo->impl().found.find(key); it != memo->impl().found.end()) seen = it->second;
    }
    if (seen) {
      if (!seen->failed.empty()) return seen->failed;
      ch.stages[k] = seen->stage;
      pass.subs[k] = seen->sub;
      acc = seen->acc;
      continue;
    }
    const long before = evaluations;
    std::string v = stage_in_chain(pass, k, acc);
    if (memo) {
      auto found = std::make_shared<ChainMemo::Impl::Found>();
      found->failed = v;
      if (v.empty()) {
        found->stage = ch.stages[k];
        found->sub = pass.subs[k];
        found->acc = acc;
      }
      const std::lock_guard held(memo->impl().lock);
      // A chain on another thread found the same meanwhile: its evaluations are counted, these
      // are not (the count is the same however the threads meet).
      if (!memo->impl().found.emplace(std::move(key), std::move(found)).second) evaluations = before;
    }
    if (!v.empty()) return v;
  }
  if (std::string v = close_totals(acc, spec); !v.empty()) return v;
  if (std::string v = check_links(ch, spec); !v.empty()) return v;
  whole_chain_worst(acc, pass);
  if (depth == Depth::full && n > 1)
    if (std::string v = fed_zout(pass, acc.w.zout); !v.empty()) return v;
  adopt(ch, acc.w, pass.cp.whole);
  gather_cautions(ch, pass.subs);
  rescore(ch, spec);
  return {};
}

std::string chain_exact(Candidate& ch, const Spec& spec, stages::Detail detail, bool scale_worst) {
  const std::vector<stages::ChainStage> list = chain_stages(ch);
  // (The gain alone is read.)
  const stages::Performance fast = stages::evaluate_chain(list, stages::small_signal(ch.conditions)).whole;
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

namespace {

// NOTES 5: the chain's -3 dB corners at their extremes. The stages load each other (the next
// stage's input impedance and Miller capacitance), so the extremes are sought on the whole
// chain (the fast cascade, which carries both): for each corner and sense, at both supply
// ends and both temperature ends, every stage's piece is chosen in turn among its corner
// pieces to push the chain's corner furthest (two rounds), then every part of every stage is
// set to the end of its tolerance that pushes it further (the end that loses more at the
// corner found, below the band; less, above it). Each corner is sought from the nominal
// chain's, on the cascade's summed loss (chain_band_edge). The cascade's figures are scaled by
// the exact solver's ratio at nominal; the two extremes a band loses first (the highest
// f_low, the lowest f_high, at the lower supply) are solved exactly as well, and every
// figure joins the range.
std::string chain_band_corners(Candidate& ch, const Spec& spec) {
  const std::size_t n = ch.stages.size();
  const std::vector<stages::ChainStage> nominal = chain_stages(ch);
  const stages::Performance fast0 = stages::evaluate_chain(nominal, ch.conditions, stages::Detail::full).whole;
  const double r_lo = fast0.f_low_hz > 0 && ch.nominal.f_low_hz > 0 ? ch.nominal.f_low_hz / fast0.f_low_hz : 1.0;
  const double r_hi = fast0.f_high_hz > 0 && ch.nominal.f_high_hz > 0 ? ch.nominal.f_high_hz / fast0.f_high_hz : 1.0;
  std::vector<StageSpread> spreads;
  std::vector<std::vector<StagePiece>> pieces;
  for (const auto& s : ch.stages) {
    spreads.push_back(spread_of(s));
    pieces.push_back(spreads.back().corners());
    pieces.back().push_back(spreads.back().nominal());
  }
  std::vector<double> temps = {spec.temp_nominal_c()};
  if (spec.temp_c) temps = {spec.temp_c->first, spec.temp_c->second};
  Range f_low, f_high, loss_lo, loss_hi;
  // The losses at the band's edges on the same pushed chains, moved as the exact solver moves
  // the nominal chain's.
  const double shift_lo = ch.nominal.loss_lo_db - fast0.loss_lo_db, shift_hi = ch.nominal.loss_hi_db - fast0.loss_hi_db;
  // One supply when the range is one value (the same chains twice otherwise).
  std::vector<double> supplies = {spec.supply_lo_v};
  if (spec.supply_hi_v != spec.supply_lo_v) supplies.push_back(spec.supply_hi_v);
  // The corner of each set of pieces (a piece's index per stage) at each edge, supply and
  // temperature: both senses start from the nominal pieces and the second round retries the
  // first's sets, so many are asked for more than once.
  std::map<std::vector<std::size_t>, double> corners;
  for (const bool low : {true, false})
    for (const double sense : {1.0, -1.0})
      for (std::size_t si = 0; si < supplies.size(); ++si)
        for (std::size_t ti = 0; ti < temps.size(); ++ti) {
          const double vs = supplies[si], temp = temps[ti];
          const stages::Conditions cond = conditions(spec, vs, temp);
          const double from = low ? fast0.f_low_hz : fast0.f_high_hz;
          // The chain with stage k's piece j in place of its own.
          auto with = [&](const std::vector<stages::ChainStage>& list, std::size_t k, std::size_t j) {
            std::vector<stages::ChainStage> t = list;
            t[k].q = make_transistor(spreads[k], pieces[k][j], temp);
            return t;
          };
          auto corner = [&](const std::vector<std::size_t>& at, const std::vector<stages::ChainStage>& list) {
            std::vector<std::size_t> key = {low ? 1u : 0u, si, ti};
            key.insert(key.end(), at.begin(), at.end());
            const auto it = corners.find(key);
            if (it != corners.end()) return it->second;
            const double v = stages::chain_band_edge(list, cond, low, from);
            corners.emplace(std::move(key), v);
            return v;
          };
          std::vector<stages::ChainStage> list = nominal;
          std::vector<std::size_t> at_piece(n);  // each stage's piece in list (the nominal last)
          for (std::size_t k = 0; k < n; ++k) {
            at_piece[k] = pieces[k].size() - 1;
            list[k].q = make_transistor(spreads[k], pieces[k].back(), temp);
          }
          double best = corner(at_piece, list);
          for (int round = 0; round < 2; ++round)
            for (std::size_t k = 0; k < n; ++k)
              for (std::size_t j = 0; j < pieces[k].size(); ++j) {
                std::vector<std::size_t> trial = at_piece;
                trial[k] = j;
                const double v = corner(trial, with(list, k, j));
                if (v > 0 && sense * v > sense * best) {
                  best = v;
                  list = with(list, k, j);
                  at_piece = std::move(trial);
                }
              }
          // Every part of every stage to the end that pushes the corner further: the one
          // that loses more at the corner found (below the band that raises f_low, above it
          // lowers f_high).
          std::vector<stages::ChainStage> pushed = list;
          const double at = best > 0 ? best : from;
          const double up = low ? 1.0 : -1.0;  // the corner's move per dB more loss at `at`
          for (std::size_t k = 0; k < n; ++k)
            for (const auto& rp : ch.stages[k].parts) {
              const std::size_t i = ch.stages[k].topology->role_index(rp.role);
              std::vector<stages::ChainStage> lo = list, hi = list;
              lo[k].values[i] = rp.combo.lo;
              hi[k].values[i] = rp.combo.hi;
              const double more = stages::chain_loss_at(hi, cond, at, low) - stages::chain_loss_at(lo, cond, at, low);
              pushed[k].values[i] = sense * up * more >= 0 ? rp.combo.hi : rp.combo.lo;
            }
          const double v = stages::chain_band_edge(pushed, cond, low, from);
          if (v > 0) (low ? f_low : f_high).add(v * (low ? r_lo : r_hi));
          if (spec.band_hz) {
            const double edge = low ? spec.band_hz->first : spec.band_hz->second;
            const double loss = stages::chain_loss_at(pushed, cond, edge, low) + (low ? shift_lo : shift_hi);
            (low ? loss_lo : loss_hi).add(std::max(0.0, loss));
          }
          if (vs == spec.supply_lo_v && temp == temps.front() && ((low && sense > 0) || (!low && sense < 0))) {
            try {
              const auto [el, eh] = stages::band_of_circuit(stages::chain_netlist(pushed, cond), cond);
              if (low && el > 0) f_low.add(el);
              if (!low && eh > 0) f_high.add(eh);
            } catch (const Error& err) {
              return fmt::format("bias: {} (stages at their band corners)", err.what());
            }
          }
        }
  if (ch.nominal.f_low_hz > 0) f_low.add(ch.nominal.f_low_hz);
  if (ch.nominal.f_high_hz > 0) f_high.add(ch.nominal.f_high_hz);
  widen(f_low, kModelMargin.band_corner);  // solved on the whole chain, so margined here
  widen(f_high, kModelMargin.band_corner);
  ch.worst.f_low = f_low;
  ch.worst.f_high = f_high;
  if (spec.band_hz) {
    loss_lo.add(ch.nominal.loss_lo_db);
    loss_hi.add(ch.nominal.loss_hi_db);
    widen(loss_lo, kModelMargin.band_loss);
    widen(loss_hi, kModelMargin.band_loss);
    ch.worst.loss_lo_db = loss_lo;
    ch.worst.loss_hi_db = loss_hi;
    // The band held within 1 dB at every corner, as a single stage's corners are held (violation).
    if (std::max(loss_lo.max, loss_hi.max) > 1.0)
      return fmt::format("band: {:.2f} dB lost at a band edge at a corner", std::max(loss_lo.max, loss_hi.max));
  }
  return {};
}

// The DC across every capacitor of the chain from the exact solver on the whole chain: at the
// nominal pieces, and with each stage at each of its corner pieces in turn (the others
// nominal), at both supply ends and both temperature ends; joined with the stages' own ranges
// (a coupling capacitor's: its bound from both stages' node ranges, chain_corners).
std::string verify_chain_polarity(Candidate& ch, const Spec& spec) {
  const std::size_t n = ch.stages.size();
  std::vector<StageSpread> spreads;
  for (const auto& s : ch.stages) spreads.push_back(spread_of(s));
  std::vector<double> temps = {spec.temp_nominal_c()};
  if (spec.temp_c) temps = {spec.temp_c->first, spec.temp_c->second};
  // Each capacitor: its stage's part; the fitted + lead as the chain's netlist names it.
  std::vector<CapLeads> leads;
  for (std::size_t k = 0; k < n; ++k) {
    Candidate& s = ch.stages[k];
    for (auto& rp : s.parts) {
      if (rp.kind != 'C') continue;
      const bool link = k + 1 < n && rp.role == "COUT";
      if (!link) rp.dc = s.worst.cap_dc[s.topology->role_index(rp.role)];
      // The stage's own name of the other lead (for people: "ground", "toward stage 2").
      for (const auto& st : s.nominal.stress)
        if (st.role == s.topology->role_index(rp.role) && !rp.plus_net.empty())
          rp.minus_net = std::string(st.plus_net == rp.plus_net ? st.minus_net : st.plus_net);
      leads.push_back(
          {&rp, rp.polarised && !rp.plus_net.empty() ? stages::chain_net(k, n, rp.plus_net) : std::string(), {}, {}});
    }
  }
  circuit::OperatingPoint last;  // each solve starts from the one before (a corner away)
  auto solve = [&](const std::vector<stages::ChainStage>& list, double vs, double temp, const std::string& what) {
    return read_capacitors(stages::chain_netlist(list, conditions(spec, vs, temp)), temp, leads, what, &last);
  };
  const std::vector<stages::ChainStage> nominal = chain_stages(ch);
  if (std::string v = solve(nominal, spec.supply_nominal_v(), spec.temp_nominal_c(), "nominal"); !v.empty()) return v;
  for (double temp : temps)
    for (double vs : {spec.supply_lo_v, spec.supply_hi_v}) {
      if (std::string v = solve(nominal, vs, temp, "nominal pieces"); !v.empty()) return v;
      for (std::size_t k = 0; k < n; ++k)
        for (const auto& f : spreads[k].corners()) {
          std::vector<stages::ChainStage> list = nominal;
          list[k].q = make_transistor(spreads[k], f, temp);
          if (std::string v = solve(list, vs, temp, fmt::format("stage {} {}", k + 1, f.tag)); !v.empty()) return v;
        }
    }
  return {};
}

}  // namespace

std::string finish_chain(Candidate& ch, const Spec& spec) {
  long evaluations = 0;
  if (std::string v = chain_corners(ch, spec, evaluations, Depth::full); !v.empty()) return v;
  if (std::string v = chain_exact(ch, spec, stages::Detail::full, true); !v.empty()) return v;
  if (std::string v = chain_band_corners(ch, spec); !v.empty()) return v;
  // Every range holds the whole chain's nominal figures (the exact solution).
  Worst& w = ch.worst;
  const stages::Performance& p = ch.nominal;
  w.swing_peak.add(p.swing_peak_v);
  w.zin.add(p.zin_ohm);
  w.zout.add(p.zout_ohm);
  w.supply_current.add(p.supply_current_a);
  w.bias_current.add(p.bias_current_a);
  w.v_in.add(p.v_in);
  w.v_common.add(p.v_common);
  w.v_out.add(p.v_out);
  w.loss_lo_db.add(p.loss_lo_db);
  w.loss_hi_db.add(p.loss_hi_db);
  w.thd.add(p.thd);
  if (std::string v = verify_chain_polarity(ch, spec); !v.empty()) return v;
  for (std::size_t k = 0; k < ch.stages.size(); ++k)
    if (std::string v = assess_loop(ch.stages[k], spec, fmt::format("stage {}: ", k + 1),
                                    k > 0 ? ch.stages[k - 1].nominal.zout_ohm : -1.0);
        !v.empty())
      return v;
  ch.parts.clear();
  for (const auto& s : ch.stages)
    for (const auto& rp : s.parts) ch.parts.push_back(rp);
  return {};
}

}  // namespace detail

}  // namespace shelfstage::synth
