// The worst case of one stage: every corner piece of the spread model, both ends of the supply
// and temperature ranges, and the parts pushed to the ends of their tolerances in the
// direction that moves each figure furthest.
#include <algorithm>
#include <array>
#include <cmath>
#include <fmt/format.h>

#include "detail.hpp"
#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::synth::detail {

namespace {

// The figures a worst case ranges over.
enum Figure : int {
  kGain,
  kBias,
  kSwing,
  kSupply,
  kZin,
  kZout,
  kVin,
  kVcommon,
  kVout,
  kLossLo,
  kLossHi,
  kThd,
  kFigures
};

double figure(const stages::Performance& p, int f) {
  switch (f) {
    case kGain: return std::abs(p.gain);
    case kBias: return p.bias_current_a;
    case kSwing: return p.swing_peak_v;
    case kSupply: return p.supply_current_a;
    case kZin: return p.zin_ohm;
    case kZout: return p.zout_ohm;
    case kVin: return p.v_in;
    case kVcommon: return p.v_common;
    case kVout: return p.v_out;
    case kLossLo: return p.loss_lo_db;
    case kLossHi: return p.loss_hi_db;
    case kThd: return p.thd;
    default: return 0;
  }
}

// A figure pushed up (+1) or down (-1).
struct Push {
  int figure;
  int sense;
};
// The search's pushes: what decides whether a stage holds and how it scores.
constexpr Push kSearchPushes[] = {{kGain, +1},   {kGain, -1}, {kBias, +1},   {kBias, -1},   {kSwing, -1},
                                  {kSupply, +1}, {kZin, -1},  {kLossLo, +1}, {kLossHi, +1}, {kThd, +1}};

// For each figure, the sign of its change with each part across that part's bounds.
using Signs = std::array<std::int8_t, stages::kMaxRoles>;
using Directions = std::array<Signs, kFigures>;

Directions directions(const Candidate& c, const stages::Transistor& q, const stages::Conditions& cond,
                      long& evaluations) {
  Directions d{};
  const auto& t = *c.topology;
  for (const auto& rp : c.parts) {
    const std::size_t i = t.role_index(rp.role);
    if (i >= t.roles().size()) continue;
    stages::Values lo = c.values, hi = c.values;
    lo[i] = rp.combo.lo;
    hi[i] = rp.combo.hi;
    const auto pl = t.evaluate(lo, q, cond), ph = t.evaluate(hi, q, cond);
    evaluations += 2;
    for (int f = 0; f < kFigures; ++f) {
      const double a = figure(pl, f), b = figure(ph, f);
      d[static_cast<std::size_t>(f)][i] = static_cast<std::int8_t>(b > a ? 1 : (b < a ? -1 : 0));
    }
  }
  return d;
}

// One set of part values to evaluate: each part at the bound given by `way` (+1 high, -1 low,
// 0 nominal), and how much of the evaluator it needs.
struct PartSet {
  Signs way{};
  stages::Detail detail = stages::Detail::core;
  bool distortion = true;  ///< (the search's depth) pushed for a figure the distortion decides
  bool operator==(const PartSet&) const = default;
};

void add_set(std::vector<PartSet>& sets, const Signs& way, stages::Detail detail, bool distortion = true) {
  for (auto& s : sets)
    if (s.way == way) {
      s.detail = std::max(s.detail, detail);
      s.distortion = s.distortion || distortion;
      return;
    }
  sets.push_back({way, detail, distortion});
}

// The sets for one piece: nominal parts first, then each push (the full depth: every figure
// both ways). Sets pushed for the band-edge losses are evaluated in full, so that they range
// the -3 dB corners too; every set in full depth, and the nominal and bias sets in the
// search, carry part stress for the rating and polarity checks.
// The parts as given: every depth's first set.
PartSet as_given(Depth depth) {
  return {Signs{}, depth == Depth::full ? stages::Detail::full : stages::Detail::stress, true};
}

std::vector<PartSet> part_sets(const Directions& d, Depth depth) {
  std::vector<PartSet> sets{as_given(depth)};
  const bool full = depth == Depth::full;
  std::vector<Push> pushes(std::begin(kSearchPushes), std::end(kSearchPushes));
  if (full) {
    pushes.clear();
    for (int f = 0; f < kFigures; ++f) pushes.insert(pushes.end(), {{f, +1}, {f, -1}});
  }
  for (const Push& p : pushes) {
    Signs way{};
    for (std::size_t i = 0; i < way.size(); ++i)
      way[i] = static_cast<std::int8_t>(d[static_cast<std::size_t>(p.figure)][i] * p.sense);
    stages::Detail detail = stages::Detail::core;
    if (full) detail = (p.figure == kLossLo || p.figure == kLossHi) ? stages::Detail::full : stages::Detail::stress;
    if (!full && p.figure == kBias) detail = stages::Detail::stress;
    add_set(sets, way, detail, full || p.figure == kSwing || p.figure == kThd);
  }
  return sets;
}

stages::Values values_of(const Candidate& c, const Signs& way) {
  stages::Values v = c.values;
  const auto& t = *c.topology;
  for (const auto& rp : c.parts) {
    const std::size_t i = t.role_index(rp.role);
    if (i >= t.roles().size() || way[i] == 0) continue;
    v[i] = way[i] > 0 ? rp.combo.hi : rp.combo.lo;
  }
  return v;
}

// The net a capacitor's DC is taken from: the fitted + lead of a polarised part, else the end
// higher at nominal (orient: the nominal build's stress, when it has one).
std::string_view oriented_plus(const RolePart& rp, const stages::Performance& orient, std::size_t role) {
  if (rp.polarised && !rp.plus_net.empty()) return rp.plus_net;
  for (const auto& s : orient.stress)
    if (s.role == role) return s.plus_net;
  return rp.plus_net;
}

void add_cap_dc(Worst& w, const Candidate& c, const stages::Performance& p) {
  for (const auto& s : p.stress) {
    if (s.role >= c.topology->roles().size() || c.topology->roles()[s.role].kind != 'C') continue;
    const auto it = std::find_if(c.parts.begin(), c.parts.end(),
                                 [&](const RolePart& rp) { return rp.role == c.topology->roles()[s.role].name; });
    if (it == c.parts.end()) continue;
    const std::string_view plus = oriented_plus(*it, c.nominal, s.role);
    w.cap_dc[s.role].add(s.plus_net == plus ? s.dc_v : -s.dc_v);
  }
}

void add_device_stress(Worst& w, const DeviceStress& d) {
  w.device_v.add(d.v_main);
  w.device_rev.add(d.v_rev);
  w.device_p.add(d.p_w);
  w.device_p_allowed.add(d.p_allowed_w);
}

void add_device2_stress(Worst& w, const DeviceStress& d) {
  w.device2_v.add(d.v_main);
  w.device2_p.add(d.p_w);
}

void add_figures(Worst& w, const stages::Performance& p, bool corners) {
  w.gain.add(p.gain);
  w.bias_current.add(p.bias_current_a);
  w.swing_peak.add(p.swing_peak_v);
  w.v_in.add(p.v_in);
  w.v_common.add(p.v_common);
  w.v_out.add(p.v_out);
  if (p.q2_current_a > 0) w.v_out2.add(p.v_out2);
  w.zin.add(p.zin_ohm);
  w.zout.add(p.zout_ohm);
  if (p.zout_band_ohm > 0) w.zout.add(p.zout_band_ohm);
  w.supply_current.add(p.supply_current_a);
  w.loss_lo_db.add(p.loss_lo_db);
  w.loss_hi_db.add(p.loss_hi_db);
  w.thd.add(p.thd);
  if (corners) {  // the -3 dB corners are computed at full detail only
    w.f_low.add(p.f_low_hz);
    w.f_high.add(p.f_high_hz);
  }
}

}  // namespace

// Moves a range's ends outward by a share of their size and a floor, an end off zero never
// across it (a node on one side of ground, a positive impedance or corner stays there); an
// end at zero (a gate returned to ground, where the model has no gate current) moves by the
// floor.
void widen(Range& r, double share, double floor) {
  if (r.empty) return;
  const double lo = r.min - share * std::abs(r.min) - floor;
  const double hi = r.max + share * std::abs(r.max) + floor;
  r.min = r.min > 0 ? std::max(0.0, lo) : lo;
  r.max = r.max < 0 ? std::min(0.0, hi) : hi;
}

void add_model_margin(Worst& w) {
  widen(w.gain, kModelMargin.gain);
  widen(w.bias_current, kModelMargin.current);
  widen(w.supply_current, kModelMargin.current);
  for (Range* r : {&w.v_in, &w.v_common, &w.v_out}) widen(*r, kModelMargin.node, kModelMargin.node_floor_v);
  for (Range* r : {&w.zin, &w.zout}) widen(*r, kModelMargin.impedance_corner);
  for (Range* r : {&w.f_low, &w.f_high}) widen(*r, kModelMargin.band_corner);
  for (Range* r : {&w.loss_lo_db, &w.loss_hi_db}) widen(*r, kModelMargin.band_loss);
  if (!w.swing_peak.empty) w.swing_peak.min *= 1.0 - kModelMargin.swing;
  if (!w.thd.empty) w.thd.max *= 1.0 + kModelMargin.thd;
}

double worst_gain_error(const Range& gain, double target) {
  if (gain.empty) return 0.0;
  return std::max(std::abs(std::abs(gain.min) / target - 1.0), std::abs(std::abs(gain.max) / target - 1.0));
}

// NOTES 7: the in-band gain with a load capacitance. The closed forms (and the exact solver's
// mid-band figure) give the gain with the load capacitance open; inside a feedback loop it
// loads the output already well inside the band (ngspice: a pair into 10k || 100 nF reads
// 9.80 at 632 Hz and 1 kHz against 9.90 with the capacitance open).
// The exact solver's gain at the frequencies a bench measures the gain at (1 kHz, and the
// band's geometric middle), at every piece and supply and temperature end with the parts at
// nominal, as a share of the closed form's at the same build; the gain range's ends are
// scaled by the least and largest share. Empty when nothing was measured.
std::string in_band_shares(const Candidate& c, const Spec& spec, const StageSpread& spread,
                           const std::vector<StagePiece>& pieces, const std::vector<double>& supplies,
                           const std::vector<double>& temps, Range& share) {
  const auto& t = *c.topology;
  std::vector<double> freqs;
  if (spec.band_hz) {
    freqs.push_back(std::sqrt(spec.band_hz->first * spec.band_hz->second));
    if (spec.band_hz->first < 1e3 && 1e3 < spec.band_hz->second) freqs.push_back(1e3);
  } else {
    freqs.push_back(1e3);
  }
  circuit::OperatingPoint last;  // each solve starts from the one before (a corner away)
  for (const auto& f : pieces)
    for (const double temp : temps) {
      const stages::Transistor q = make_transistor(spread, f, temp);
      for (const double vs : supplies) {
        const stages::Conditions cond = conditions(spec, vs, temp);
        const auto p = t.evaluate(c.values, q, cond, stages::Detail::core);
        if (!p.valid || p.gain == 0) continue;
        const circuit::Circuit net = t.netlist(c.values, q, cond);
        const circuit::Element* vsig = net.find("VSIG");
        const auto out = net.find_net(std::string(stages::kNetOut));
        if (!vsig || !out || vsig->c.ac_volts == 0) continue;
        circuit::SolverOptions so;
        so.celsius = temp;
        try {
          const circuit::AcSystem sys(net, circuit::solve_dc_next(net, so, last));
          for (const double fm : freqs)
            share.add(std::abs(sys.solve(fm)[*out]) / std::abs(vsig->c.ac_volts) / std::abs(p.gain));
        } catch (const Error& e) {
          return fmt::format("bias: the exact solver finds no operating point ({}: {})", f.tag, e.what());
        }
      }
    }
  return {};
}

// NOTES (worst case of one stage):
//  1. Points: every corner piece of the spread model and the nominal piece, crossed with both
//     ends of the supply range and of the temperature range (the nominal temperature when no
//     range is given).
//  2. Parts: for each figure, the sign of its change with each part across that part's
//     bounds (resistors and capacitors alike, each at its own tolerance, asymmetric ones
//     included); the parts are then set all one way and all the other way. A figure that is
//     monotonic in each part over the box of bounds takes its extremes at those vertices.
//     Depth::search: signs taken once, at the nominal piece, for the figures that decide
//     whether the stage holds and how it scores (gain both ways, bias current both ways, the
//     smallest swing, the largest supply current, the smallest input impedance, the largest
//     band-edge losses and distortion; the distortion, a feedback pair's costliest part by far
//     (a quasi-static sweep), is worked out on the nominal set and on the sets pushed for the
//     swing and the distortion, the figures it decides: the other sets read the swing to
//     clipping). Depth::full (the designs shown, a chain shown stage by stage): signs taken at
//     every piece, for every figure both ways: gain, bias and supply current, swing, Zin, Zout,
//     the three node voltages, both band-edge losses and the distortion. Without a band, the losses are taken at the
//     nominal -3 dB points, so that the sets pushed for them range the corners.
//  3. The -3 dB corners are ranged over the sets evaluated in full (nominal parts, and the
//     sets pushed for the band-edge losses: the capacitors at their tolerance ends).
//  4. Every range holds the nominal figures (a figure need not be monotonic in the supply).
//  5. Hard constraints must hold at every point evaluated; ratings and electrolytic polarity
//     at every point evaluated with stress (all in full depth; the nominal and bias sets in
//     the search).
//  6. The ranges then widen by the model margin (kModelMargin), and the worst gain error is
//     read from the widened gain range.
//  7. With a load capacitance (Depth::full), the gain range also takes the exact solver's
//     in-band gain (in_band_shares above).
//  8. Depth::search takes the parts as given at every point before it works out the parts'
//     directions and the sets they push: a stage that fails at a corner piece with its
//     parts as given (most that fail do: the piece moves a figure more than a part's
//     tolerance) is rejected without the directions' two evaluations per part. The points
//     and sets are the same either way, and every range and the worst error are the same
//     whatever the order; only which failure is named first can differ.
std::string evaluate_worst(Candidate& c, const Spec& spec, long& evaluations, Depth depth, bool wanted) {
  const auto& t = *c.topology;
  const StageSpread spread = spread_of(c);
  const double t_nom = spec.temp_nominal_c();
  // The search's pass works out the distortion only when the request bounds or ranks by it.
  const bool distortion = wanted && (depth == Depth::full || spec.swing_vpp || spec.prefer == Spec::Prefer::distortion);
  stages::Conditions nom_cond = conditions(spec, spec.supply_nominal_v(), t_nom);
  nom_cond.distortion = distortion;
  // Without a band the losses are probed at the nominal -3 dB points (NOTES 2).
  stages::Conditions probe = nom_cond;
  if (!spec.band_hz && depth == Depth::full) {
    const stages::Transistor q0 = make_transistor(spread, spread.nominal(), t_nom);
    const auto p0 = t.evaluate(c.values, q0, nom_cond, stages::Detail::full);
    ++evaluations;
    probe.band_lo_hz = p0.f_low_hz;
    probe.band_hi_hz = std::isfinite(p0.f_high_hz) && p0.f_high_hz < 1e12 ? p0.f_high_hz : 0.0;
  }

  std::vector<StagePiece> pieces = spread.corners();
  pieces.push_back(spread.nominal());
  std::vector<double> supplies = {spec.supply_lo_v};
  if (spec.supply_hi_v > spec.supply_lo_v) supplies.push_back(spec.supply_hi_v);
  std::vector<double> temps = {t_nom};
  if (spec.temp_c) temps = {spec.temp_c->first, spec.temp_c->second};

  Worst w;
  c.error_worst = 0;
  // One set at one point: evaluated, checked, and its figures taken into w (a rejection's
  // reason, else empty).
  auto take = [&](const PartSet& set, const stages::Transistor& q, double temp,
                  stages::Conditions& cond) -> std::string {
    cond.distortion = distortion && set.distortion;
    const auto p = t.evaluate(values_of(c, set.way), q, cond, set.detail);
    ++evaluations;
    ++w.evaluations;
    std::string failed = violation(spec, p);
    if (failed.empty() && set.detail != stages::Detail::core) failed = check_ratings(spec, c, p, temp);
    if (!failed.empty()) return failed;
    add_figures(w, p, set.detail == stages::Detail::full);
    if (set.detail != stages::Detail::core) {
      add_cap_dc(w, c, p);
      add_device_stress(w, device_stress(spec, c, p, temp));
      if (c.device2) add_device2_stress(w, device2_stress(spec, c, p, temp));
    }
    c.error_worst = std::max(c.error_worst, std::abs(std::abs(p.gain) / spec.gain - 1.0));
    return {};
  };
  // Every temperature and supply at one piece, then every piece: `at` for each point (the
  // first rejection's reason, else empty).
  auto at_piece = [&](const StagePiece& f, auto&& at) -> std::string {
    for (double temp : temps) {
      const stages::Transistor q = make_transistor(spread, f, temp);
      for (double vs : supplies) {
        stages::Conditions cond = conditions(spec, vs, temp);
        if (std::string v = at(q, temp, cond); !v.empty()) return v;
      }
    }
    return {};
  };
  auto each_point = [&](auto&& at) -> std::string {
    for (const auto& f : pieces)
      if (std::string v = at_piece(f, at); !v.empty()) return v;
    return {};
  };
  auto each_set = [&](const std::vector<PartSet>& sets) {
    return [all = &sets, &take](const stages::Transistor& q, double temp, stages::Conditions& cond) -> std::string {
      for (const PartSet& set : *all)
        if (std::string v = take(set, q, temp, cond); !v.empty()) return v;
      return {};
    };
  };
  std::string failed;
  if (depth == Depth::search) {
    // NOTES 8: the parts as given at every point first (part_sets' first set at this depth),
    // then the parts' directions and the sets they push.
    const std::vector<PartSet> given{as_given(depth)};
    failed = each_point(each_set(given));
    if (failed.empty()) {
      std::vector<PartSet> sets =
          part_sets(directions(c, make_transistor(spread, spread.nominal(), t_nom), probe, evaluations), depth);
      // (A push whose parts all stay put merges into the first set; at this depth that
      // changes nothing in it.)
      if (sets.front() == given.front()) sets.erase(sets.begin());
      failed = each_point(each_set(sets));
    }
  } else {
    for (const auto& f : pieces) {
      const std::vector<PartSet> sets =
          part_sets(directions(c, make_transistor(spread, f, t_nom), probe, evaluations), depth);
      if (failed = at_piece(f, each_set(sets)); !failed.empty()) break;
    }
  }
  if (!failed.empty()) {  // rejected: its ranges no longer matter
    c.worst = w;
    return failed;
  }
  // NOTES 7: a load capacitance's share of the in-band gain.
  if (depth == Depth::full && spec.load_farads > 0) {
    Range share;
    if (std::string v = in_band_shares(c, spec, spread, pieces, supplies, temps, share); !v.empty()) {
      c.worst = w;
      return v;
    }
    if (!share.empty && !w.gain.empty) {
      const double lo = w.gain.min, hi = w.gain.max;
      for (const double e : {lo, hi})
        for (const double k : {share.min, share.max}) w.gain.add(e * k);
    }
  }
  // NOTES 4: the nominal build belongs to every range.
  if (c.nominal.valid) {
    add_figures(w, c.nominal, c.nominal.f_low_hz > 0 || c.nominal.f_high_hz > 0);
    add_cap_dc(w, c, c.nominal);
    add_device_stress(w, device_stress(spec, c, c.nominal, t_nom));
    if (c.device2) add_device2_stress(w, device2_stress(spec, c, c.nominal, t_nom));
  }
  add_model_margin(w);  // NOTES 6
  c.error_worst = std::max(c.error_worst, worst_gain_error(w.gain, spec.gain));
  c.worst = w;
  return {};
}

double tolerance_gain_error(const Candidate& c, const Spec& spec, long& evaluations) {
  // As evaluate_worst's prologue at Depth::search, but without the distortion, which moves
  // no stage's gain (nor so the gain's directions).
  const auto& t = *c.topology;
  const StageSpread spread = spread_of(c);
  const double t_nom = spec.temp_nominal_c();
  stages::Conditions probe = conditions(spec, spec.supply_nominal_v(), t_nom);
  probe.distortion = false;
  const stages::Transistor q = make_transistor(spread, spread.nominal(), t_nom);
  const Directions d = directions(c, q, probe, evaluations);
  stages::Conditions cond = conditions(spec, spec.supply_lo_v, t_nom);
  cond.distortion = false;
  double worst = 0;
  for (const int sense : {+1, -1}) {
    Signs way{};
    for (std::size_t i = 0; i < way.size(); ++i)
      way[i] = static_cast<std::int8_t>(d[static_cast<std::size_t>(kGain)][i] * sense);
    const auto p = t.evaluate(values_of(c, way), q, cond, stages::Detail::core);
    ++evaluations;
    if (p.valid && p.active) worst = std::max(worst, std::abs(std::abs(p.gain) / spec.gain - 1.0));
  }
  return worst;
}

std::string read_capacitors(const circuit::Circuit& net, double celsius, std::vector<CapLeads>& leads,
                            const std::string& where, circuit::OperatingPoint* warm) {
  circuit::SolverOptions so;
  so.celsius = celsius;
  circuit::OperatingPoint op;
  try {
    op = warm ? circuit::solve_dc_next(net, so, *warm) : circuit::solve_dc(net, so);
  } catch (const Error& e) {
    return fmt::format("bias: the exact solver finds no operating point ({}: {})", where, e.what());
  }
  for (auto& l : leads) {
    const auto* el = net.find(l.part->designator);
    if (!el) continue;
    const std::string a = net.net_name(el->c.pins[0]), b = net.net_name(el->c.pins[1]);
    const double va = op.node_v[el->c.pins[0]], vb = op.node_v[el->c.pins[1]];
    if (l.plus.empty()) {
      const bool a_plus = !l.fitted_plus.empty() ? a == l.fitted_plus : va >= vb;
      l.plus = a_plus ? a : b;
      l.minus = a_plus ? b : a;
      l.part->plus_node = l.plus;
      l.part->minus_node = l.minus;
    }
    const double dc = l.plus == a ? va - vb : vb - va;
    l.part->dc.add(dc);
    if (l.part->polarised && dc < 0)
      return fmt::format("polarity: {} ({}) would hold {:.2f} V from its + lead (exact solution, {})",
                         l.part->designator, l.part->role, dc, where);
  }
  return {};
}

// NOTES (polarity, the one source of truth):
//  1. The exact solver's operating point of the stage's netlist, at every corner piece and the
//     nominal piece, both supply ends and both temperature ends, with the parts at nominal and
//     pushed both ways for the bias current: the DC across every capacitor from its fitted +
//     lead (a non-polarised part: the end higher at nominal) to the other.
//  2. Those figures, with the closed form's over every point of the full worst case (Worst::
//     cap_dc), are the part's `dc` range; its leads' nets in the exported netlist are
//     plus_node and minus_node. The pick list, show, report and JSON read them.
//  3. A polarised part whose DC falls below zero at any of those points fails ("polarity").
std::string verify_polarity(Candidate& c, const Spec& spec) {
  const auto& t = *c.topology;
  const StageSpread spread = spread_of(c);
  const double t_nom = spec.temp_nominal_c();
  long evaluations = 0;
  const stages::Conditions nom_cond = conditions(spec, spec.supply_nominal_v(), t_nom);
  const Directions d = directions(c, make_transistor(spread, spread.nominal(), t_nom), nom_cond, evaluations);
  Signs up{}, down{};
  for (std::size_t i = 0; i < up.size(); ++i) {
    up[i] = d[kBias][i];
    down[i] = static_cast<std::int8_t>(-d[kBias][i]);
  }
  std::vector<Signs> ways = {Signs{}, up, down};
  std::vector<StagePiece> pieces = spread.corners();
  pieces.insert(pieces.begin(), spread.nominal());
  std::vector<double> supplies = {spec.supply_nominal_v(), spec.supply_lo_v, spec.supply_hi_v};
  std::vector<double> temps = {t_nom};
  if (spec.temp_c) temps = {t_nom, spec.temp_c->first, spec.temp_c->second};
  std::vector<CapLeads> leads;
  for (auto& rp : c.parts)
    if (rp.kind == 'C') {
      rp.dc = c.worst.cap_dc[t.role_index(rp.role)];
      leads.push_back({&rp, rp.polarised ? rp.plus_net : std::string(), {}, {}});
    }
  circuit::OperatingPoint last;  // each solve starts from the one before (a corner away)
  for (const auto& f : pieces)
    for (double temp : temps) {
      const stages::Transistor q = make_transistor(spread, f, temp);
      for (double vs : supplies)
        for (const Signs& way : ways) {
          const circuit::Circuit net = t.netlist(values_of(c, way), q, conditions(spec, vs, temp));
          if (std::string v = read_capacitors(net, temp, leads, f.tag, &last); !v.empty()) return v;
        }
    }
  // A single stage's netlist names its nets as the stage does.
  for (auto& l : leads)
    if (l.part->polarised) l.part->minus_net = l.minus;
  return {};
}

}  // namespace shelfstage::synth::detail
