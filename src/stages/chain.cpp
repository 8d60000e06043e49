// A chain of stages: one circuit for the solver and the writer, and the fast evaluation.
#include "shelfstage/stages/chain.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fmt/format.h>

#include "shelfstage/error.hpp"

namespace shelfstage::stages {

std::size_t input_coupling_role(const Topology& t) { return t.role_index("CIN"); }

std::string_view output_node(const Topology& t) {
  const auto& role = t.roles()[t.role_index("COUT")];
  return role.pos_net == kNetOut ? role.neg_net : role.pos_net;
}

char output_dc_field(const Topology& t) {
  const std::string_view n = output_node(t);
  if (n == t.node_names()[2]) return 'm';
  if (n == t.node_names()[1]) return 'c';
  return '2';
}

double output_dc(const Topology& t, const Performance& p) {
  switch (output_dc_field(t)) {
    case 'm': return p.v_out;
    case 'c': return p.v_common;
    default: return p.v_out2;
  }
}

std::string chain_designator(std::size_t stage, std::string_view designator) {
  // A device model's element ("U1.G1") goes with its device: "U101.G1".
  if (const std::size_t dot = designator.find('.'); dot != std::string_view::npos)
    return chain_designator(stage, designator.substr(0, dot)) + std::string(designator.substr(dot));
  std::size_t digits = designator.size();
  while (digits > 0 && std::isdigit(static_cast<unsigned char>(designator[digits - 1]))) --digits;
  const std::string letters(designator.substr(0, digits));
  const int number = digits < designator.size() ? std::stoi(std::string(designator.substr(digits))) : 0;
  return fmt::format("{}{}", letters, 100 * (static_cast<int>(stage) + 1) + number);
}

std::string chain_net(std::size_t stage, std::size_t count, std::string_view net) {
  if (net == "0" || net == kNetSupply || net == kNetNegativeSupply || net == kNetSignal) return std::string(net);
  if (net == kNetIn) return stage == 0 ? std::string(kNetIn) : fmt::format("link{}", stage);
  if (net == kNetOut) return stage + 1 == count ? std::string(kNetOut) : fmt::format("link{}", stage + 1);
  return fmt::format("{}{}", net, stage + 1);
}

namespace {

// Copies one stage's test bench into `out`: designators by chain_designator (bench parts keep
// theirs), after the first stage no input capacitor (the net it fed joins "in"), nets through
// `rename`; bench parts only where `bench` allows them.
template <class Rename, class Bench>
void append_stage(circuit::Circuit& out, const ChainStage& st, std::size_t k, const Conditions& c, Rename rename,
                  Bench bench_wanted) {
  const circuit::Circuit one = st.topology->netlist(st.values, st.q, c);
  std::string joined;
  if (k > 0)
    for (const auto& el : one.elements())
      if (el.c.role == "CIN")
        joined = one.net_name(el.c.pins[0]) == kNetIn ? one.net_name(el.c.pins[1]) : one.net_name(el.c.pins[0]);
  circuit::Circuit::Carry carry;
  carry.keep = [&](const circuit::Component& e) {
    if (k > 0 && e.role == "CIN") return false;
    // Each rail's source once, from the first stage that has it (a split supply's - rail
    // may first appear in a later stage).
    if (e.role == "supply") return out.find(e.designator) == nullptr;
    return !is_bench_role(e.role) || bench_wanted(e.role);
  };
  carry.designator = [&](const circuit::Component& e) {
    return is_bench_role(e.role) ? e.designator : chain_designator(k, e.designator);
  };
  carry.net = [&](const circuit::Component&, const std::string& own) {
    return rename(!joined.empty() && own == joined ? std::string(kNetIn) : own);
  };
  out.append(one, carry);
}

}  // namespace

circuit::Circuit chain_netlist(std::span<const ChainStage> stages, const Conditions& c) {
  if (stages.empty()) throw InputError("chain: no stages");
  for (const auto& s : stages)
    if (!s.topology) throw InputError("chain: a stage has no topology");
  circuit::Circuit out;
  const std::size_t n = stages.size();
  for (std::size_t k = 0; k < n; ++k) {
    // The bench parts once: supply and signal from the first stage, the load and the
    // capacitance across it (the cable) on the last.
    append_stage(
        out, stages[k], k, c, [&](const std::string& net) { return chain_net(k, n, net); },
        [&](const std::string& role) { return role == "load" || role == kRoleLoadCapacitance ? k + 1 == n : k == 0; });
  }
  return out;
}

circuit::Circuit chain_stage_netlist(const ChainStage& stage, std::size_t k, const Conditions& c) {
  if (!stage.topology) throw InputError("chain: a stage has no topology");
  circuit::Circuit out;
  append_stage(
      out, stage, k, c, [](const std::string& net) { return net; }, [](const std::string&) { return true; });
  return out;
}

std::vector<Transistor> chain_transistors(std::span<const ChainStage> stages) {
  std::vector<Transistor> qs;
  for (const auto& s : stages)
    for (auto& q : transistors_of(s.q)) qs.push_back(std::move(q));
  return qs;
}

namespace {

// From the load back: each stage's load is the next stage's input impedance, and the next
// stage's input capacitance (its Miller capacitance) loads it too; each stage's distortion
// is given at the level it carries: the output's over the gain after it. Fills r.each and
// r.conditions; returns each stage's |gain after it|.
std::vector<double> evaluate_from_load(std::span<const ChainStage> stages, const Conditions& c, Detail detail,
                                       ChainPerformance& r) {
  const std::size_t n = stages.size();
  double load = c.load_ohm, load_farads = c.load_farads, gain_after = 1.0;
  std::vector<double> level_gain(n, 1.0);  // |gain| after each stage
  for (std::size_t k = n; k-- > 0;) {
    Conditions& ck = r.conditions[k];
    ck.load_ohm = load;
    ck.load_farads = load_farads;
    ck.source_ohm = k == 0 ? c.source_ohm : 0.0;
    level_gain[k] = std::max(std::abs(gain_after), 1e-9);
    ck.hd2_peak_v = c.hd2_peak_v / level_gain[k];
    r.each[k] = stages[k].topology->evaluate(stages[k].values, stages[k].q, ck, detail);
    load = r.each[k].zin_ohm > 0 ? r.each[k].zin_ohm : 1e12;
    load_farads = std::max(0.0, r.each[k].c_in_f);
    gain_after *= r.each[k].gain;
  }
  return level_gain;
}

// A follower's output impedance depends on what drives it: each stage's Zout with the
// previous stage's output impedance as its source (the gains stay those from the node).
void drive_from_previous(std::span<const ChainStage> stages, ChainPerformance& r) {
  for (std::size_t k = 1; k < stages.size(); ++k) {
    Conditions ck = small_signal(r.conditions[k]);  // (an impedance)
    ck.source_ohm = r.each[k - 1].zout_ohm;
    r.each[k].zout_ohm = stages[k].topology->evaluate(stages[k].values, stages[k].q, ck, Detail::core).zout_ohm;
  }
}

// The whole's validity (the first problem), gain, supply current and band-edge losses from
// the stages'; its corners their root sum of squares (of frequencies low, of periods high).
void combine_stages(ChainPerformance& r) {
  Performance& w = r.whole;
  w.valid = true;
  w.active = true;
  w.gain = 1.0;
  double lo2 = 0, inv_hi2 = 0;
  for (std::size_t k = 0; k < r.each.size(); ++k) {
    const Performance& p = r.each[k];
    if (!p.valid || !p.active) {
      w.valid = w.valid && p.valid;
      w.active = false;
      if (w.problem.empty()) w.problem = fmt::format("stage {}: {}", k + 1, p.problem);
    }
    w.gain *= p.gain;
    w.supply_current_a += p.supply_current_a;
    w.loss_lo_db += p.loss_lo_db;
    w.loss_hi_db += p.loss_hi_db;
    lo2 += p.f_low_hz * p.f_low_hz;
    if (p.f_high_hz > 0) inv_hi2 += 1.0 / (p.f_high_hz * p.f_high_hz);
  }
  w.f_low_hz = std::sqrt(lo2);
  w.f_high_hz = inv_hi2 > 0 ? 1.0 / std::sqrt(inv_hi2) : 0.0;
}

// Output-referred swing: stage k's limits times the gain after it.
void output_swing(ChainPerformance& r) {
  Performance& w = r.whole;
  w.swing_up_v = w.swing_down_v = w.swing_peak_v = 1e300;
  double after = 1.0;
  for (std::size_t k = r.each.size(); k-- > 0;) {
    const Performance& p = r.each[k];
    const double g = std::abs(after);
    // An inverting stage after this one swaps its up and down.
    const bool swap = after < 0;
    w.swing_up_v = std::min(w.swing_up_v, g * (swap ? p.swing_down_v : p.swing_up_v));
    w.swing_down_v = std::min(w.swing_down_v, g * (swap ? p.swing_up_v : p.swing_down_v));
    after *= p.gain;
  }
  w.clip_peak_v = std::min(w.swing_up_v, w.swing_down_v);
}

// The chain's THD at an output peak: each stage's harmonics at the level it carries, added
// as if in phase (a bound: they can be).
struct ChainThd {
  const ChainPerformance& r;
  const std::vector<double>& level_gain;  // |gain| after each stage

  double operator()(double v_out) const {
    double sum = 0;
    for (std::size_t k = 0; k < r.each.size(); ++k) {
      const Performance& p = r.each[k];
      const double level = r.conditions[k].hd2_peak_v, v = v_out / level_gain[k];
      if (!p.transfer.empty()) {
        sum += p.transfer.thd(v);
      } else if (level > 0) {  // HD2 in proportion to the level, HD3 to its square
        sum += std::hypot(p.hd2 / level * v, p.hd3 / (level * level) * v * v);
      }
    }
    return sum;
  }
};

// Distortion at the requested level, and the undistorted peak: where the THD bound is
// reached (bisection), or the clipping point.
void chain_distortion(ChainPerformance& r, const Conditions& c, const std::vector<double>& level_gain) {
  Performance& w = r.whole;
  const ChainThd thd_at{r, level_gain};
  for (const auto& p : r.each) {
    w.hd2 += p.hd2;
    w.hd3 += p.hd3;
  }
  w.thd = thd_at(c.hd2_peak_v);
  w.swing_peak_v = w.clip_peak_v;
  if (c.max_thd > 0 && thd_at(w.clip_peak_v) > c.max_thd) {
    double lo = 0, hi = w.clip_peak_v;
    for (int i = 0; i < 50; ++i) {
      const double mid = 0.5 * (lo + hi);
      (thd_at(mid) > c.max_thd ? hi : lo) = mid;
    }
    w.swing_peak_v = lo;
  }
}

// What the whole takes from its first stage (bias, DC levels, input impedance, noise) and
// its last (output impedance).
void take_ends(ChainPerformance& r) {
  Performance& w = r.whole;
  const Performance& first = r.each.front();
  const Performance& last = r.each.back();
  w.bias_current_a = first.bias_current_a;
  w.v_in = first.v_in;
  w.v_common = first.v_common;
  w.v_out = first.v_out;
  w.zin_ohm = first.zin_ohm;
  w.zout_ohm = last.zout_ohm;
  w.noise_v_rthz = first.noise_v_rthz;
}

// The loss of the cascade at f (the sum of the stages' losses, each into its own load), dB:
// below the band when `low`, above it otherwise.
double chain_loss_db(std::span<const ChainStage> stages, const ChainPerformance& r, double f, bool low) {
  double sum = 0;
  for (std::size_t k = 0; k < stages.size(); ++k) {
    Conditions ck = small_signal(r.conditions[k]);  // (a loss)
    ck.band_lo_hz = low ? f : 0.0;
    ck.band_hi_hz = low ? 0.0 : f;
    const Performance p = stages[k].topology->evaluate(stages[k].values, stages[k].q, ck, Detail::core);
    sum += low ? p.loss_lo_db : p.loss_hi_db;
  }
  return sum;
}

constexpr double kThirdDb = 3.0102999566398120;  // 10 log10(2)

// Where the cascade's loss on one side reaches 3 dB, sought from `from_hz` (bracketed by
// doubling or halving, then bisected in log f to a few parts in 10^8); 0 when there is none
// (the loss stays under 3 dB down to 1 mHz, or up to 10^13 Hz).
double band_edge_from(std::span<const ChainStage> stages, const ChainPerformance& r, bool low, double from_hz) {
  // Below the band the loss falls as f rises; above it, it rises: `past` says f lies beyond
  // the corner, outside the band.
  auto past = [&](double f) { return chain_loss_db(stages, r, f, low) > kThirdDb; };
  const double f_min = 1e-3, f_max = 1e13;
  double f = std::clamp(from_hz > 0 && std::isfinite(from_hz) ? from_hz : (low ? 20.0 : 20e3), f_min, f_max);
  double in, out;  // a point inside the band, and one outside it
  if (past(f)) {
    out = f;
    in = low ? 2 * f : 0.5 * f;
    for (int i = 0; i < 60 && past(in); ++i) {
      out = in;
      in = low ? 2 * in : 0.5 * in;
    }
  } else {
    in = f;
    out = low ? 0.5 * f : 2 * f;
    for (int i = 0; i < 60 && !past(out); ++i) {
      if (out < f_min || out > f_max) return 0;
      in = out;
      out = low ? 0.5 * out : 2 * out;
    }
    if (out < f_min || out > f_max) return 0;
  }
  for (int i = 0; i < 24; ++i) {
    const double mid = std::sqrt(in * out);
    (past(mid) ? out : in) = mid;
  }
  return std::sqrt(in * out);
}

// The -3 dB points of the product of the stages' responses: where their losses add up to
// 3 dB, sought from the stages' nearest corners.
void chain_band_edges(std::span<const ChainStage> stages, ChainPerformance& r) {
  Performance& w = r.whole;
  double f_lo_max = 0, f_hi_min = 0;
  for (const auto& p : r.each) {
    f_lo_max = std::max(f_lo_max, p.f_low_hz);
    if (p.f_high_hz > 0) f_hi_min = f_hi_min > 0 ? std::min(f_hi_min, p.f_high_hz) : p.f_high_hz;
  }
  if (f_lo_max > 0) w.f_low_hz = band_edge_from(stages, r, true, f_lo_max);
  if (f_hi_min > 0 && f_hi_min < 1e13) w.f_high_hz = band_edge_from(stages, r, false, f_hi_min);
}

}  // namespace

ChainPerformance evaluate_chain(std::span<const ChainStage> stages, const Conditions& c, Detail detail) {
  ChainPerformance r;
  const std::size_t n = stages.size();
  if (n == 0) throw InputError("chain: no stages");
  r.each.resize(n);
  r.conditions.assign(n, c);
  const std::vector<double> level_gain = evaluate_from_load(stages, c, detail, r);
  drive_from_previous(stages, r);
  combine_stages(r);
  output_swing(r);
  chain_distortion(r, c, level_gain);
  take_ends(r);
  if (detail == Detail::full) chain_band_edges(stages, r);
  return r;
}

double chain_loss_at(std::span<const ChainStage> stages, const Conditions& c, double f_hz, bool low) {
  return chain_loss_db(stages, evaluate_chain(stages, small_signal(c), Detail::core), f_hz, low);
}

double chain_band_edge(std::span<const ChainStage> stages, const Conditions& c, bool low, double from_hz) {
  return band_edge_from(stages, evaluate_chain(stages, small_signal(c), Detail::core), low, from_hz);
}

}  // namespace shelfstage::stages
