// The analysis of one stage: both evaluators, part stress against ratings, cautions, corners.
#include "shelfstage/report/analysis.hpp"

#include <nlohmann/json.hpp>
#include <algorithm>
#include <cctype>
#include <cmath>
#include <fmt/format.h>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/design_json.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/stages/exact.hpp"
#include "shelfstage/synth/cautions.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::report {

namespace detail {
namespace {

using units::format_value;
using units::Unit;

// Smallest differences that count, per unit, so that figures at or near zero (a gate at 0 V,
// the solver's 2 µV of junction leakage) do not show as a disagreement.
constexpr double kFloorV = 1e-3, kFloorA = 1e-9, kFloorGain = 1e-3, kFloorOhm = 1e-3, kFloorHz = 1e-6, kFloorDb = 0.01,
                 kFloorHd2 = 1e-5, kFloorNoise = 1e-12, kFloorW = 1e-6;

// Capacitor margin: the DC plus the signal peak should stay under the rating by a quarter
// (common practice; the synthesizer asks the same of the parts it picks).
constexpr double kCapMargin = 1.25;
// Resistors: at most half the rating (common practice).
constexpr double kResistorDerating = 0.5;

bool same_name(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i)
    if (std::toupper(static_cast<unsigned char>(a[i])) != std::toupper(static_cast<unsigned char>(b[i]))) return false;
  return true;
}

// A transistor of a kind the topology takes (netlist building only looks at the polarity).
stages::Transistor placeholder(const stages::Topology& t) {
  stages::Transistor q;
  for (auto k : {devices::DeviceKind::njfet, devices::DeviceKind::npn, devices::DeviceKind::pjfet,
                 devices::DeviceKind::pnp, devices::DeviceKind::opamp}) {
    if (t.accepts(k)) {
      q.kind = k;
      break;
    }
  }
  if (q.kind == devices::DeviceKind::opamp) {  // a macro-model needs figures to build its elements
    q.opamp.gbw_hz = 1e6;
    q.opamp.aol = 1e5;
    q.opamp.slew_v_per_s = 1e6;
    q.opamp.out_drop_hi_v = q.opamp.out_drop_lo_v = 1;
    q.opamp.iout_max_a = 0.02;
  }
  q.jfet.kind = q.kind;
  q.bjt.kind = q.kind;
  if (t.second_device() != stages::SecondDevice::none) {  // a pair's Q2, of the kind it takes
    q.paired = true;
    const bool n_first = devices::polarity(q.kind) > 0;
    q.bjt2.kind = (t.second_device() == stages::SecondDevice::same) == n_first ? devices::DeviceKind::npn
                                                                               : devices::DeviceKind::pnp;
  }
  return q;
}

// The roles whose parts the netlist actually places.
std::vector<bool> placed(const stages::Topology& t, const stages::Values& v) {
  const auto roles = t.roles();
  std::vector<bool> out(roles.size(), false);
  const circuit::Circuit net = t.netlist(v, placeholder(t), stages::Conditions{});
  for (const auto& el : net.elements()) {
    const std::size_t i = t.role_index(el.c.role);
    if (i < roles.size()) out[i] = true;
  }
  return out;
}

const stages::Stress* stress_of(const stages::Performance& p, std::size_t role) {
  for (const auto& s : p.stress)
    if (s.role == role) return &s;
  return nullptr;
}

std::string current_name(const stages::Topology& t) { return device_current_name(t); }

std::string gain_text(double g) { return fmt::format("{} ({:.1f} dB)", fixed3(g), units::to_db(g)); }
std::string hz_text(double f) { return f > 0 ? format_value(f, Unit::hertz) : "none found"; }
std::string db_text(double db) { return fmt::format("{:.2f} dB", db); }
std::string hd2_text(double h) { return fmt::format("{:.3g} %", h * 100); }
std::string noise_text(double n) { return fmt::format("{:.3g} nV/√Hz", n * 1e9); }

Json or_null(double v) { return v > 0 ? Json(v) : Json(nullptr); }

Json performance_json(const stages::Topology& t, const stages::Performance& p) {
  const auto names = node_keys(t);
  Json j;
  j["valid"] = p.valid;
  j["active"] = p.active;
  j["problem"] = text_or_null(p.problem);
  j["gain"] = p.gain;
  j["gain_db"] = p.gain != 0 ? Json(units::to_db(p.gain)) : Json(nullptr);
  j["bias_current"] = p.bias_current_a;
  j["nodes"] = {{names[0], p.v_in}, {names[1], p.v_common}, {names[2], p.v_out}};
  j["zin"] = p.zin_ohm;
  j["zout"] = p.zout_ohm;
  j["f_low"] = or_null(p.f_low_hz);
  j["f_high"] = or_null(p.f_high_hz);
  j["loss_low_db"] = p.loss_lo_db;
  j["loss_high_db"] = p.loss_hi_db;
  j["swing_up"] = p.swing_up_v;
  j["swing_down"] = p.swing_down_v;
  j["swing_peak"] = p.swing_peak_v;
  j["clip_peak"] = p.clip_peak_v;
  j["hd2"] = p.hd2;
  j["hd3"] = p.hd3;
  j["thd"] = p.thd;
  j["noise"] = p.noise_v_rthz;
  j["c_in"] = p.c_in_f;
  j["supply_current"] = p.supply_current_a;
  return j;
}

// One figure of both evaluators: its JSON key, label, floor and formatter.
struct FigureRow {
  std::string key;
  std::string label;
  double exact = 0, closed = 0, floor = 0;
  std::string (*format)(double) = nullptr;
};

std::string volts(double v) { return format_value(v, Unit::volt); }
std::string amps(double v) { return format_value(v, Unit::ampere); }
std::string ohms(double v) { return format_value(v, Unit::ohm); }

std::vector<FigureRow> figure_rows(const Analysis& a) {
  const auto& t = *a.stage.topology;
  const auto& c = a.stage.conditions;
  const auto names = node_keys(t);
  const auto labels = node_labels(t);
  const stages::Performance& f = a.closed_form;
  const stages::Performance& e = a.best();
  std::vector<FigureRow> rows = {
      {"nodes." + names[0], labels[0], e.v_in, f.v_in, kFloorV, volts},
      {"nodes." + names[1], labels[1], e.v_common, f.v_common, kFloorV, volts},
      {"nodes." + names[2], labels[2], e.v_out, f.v_out, kFloorV, volts},
      {"bias_current", (a.stage.transistor.paired ? "Q1 " : "") + current_name(t), e.bias_current_a, f.bias_current_a,
       kFloorA, amps},
      {"supply_current", "supply current", e.supply_current_a, f.supply_current_a, kFloorA, amps},
      {"gain", "gain, source to load", e.gain, f.gain, kFloorGain, gain_text},
      {"zin", "input impedance", e.zin_ohm, f.zin_ohm, kFloorOhm, ohms},
      {"zout", "output impedance", e.zout_ohm, f.zout_ohm, kFloorOhm, ohms},
      {"f_low", "-3 dB low", e.f_low_hz, f.f_low_hz, kFloorHz, hz_text},
      {"f_high", "-3 dB high", e.f_high_hz, f.f_high_hz, kFloorHz, hz_text},
  };
  if (a.stage.transistor.paired)  // a pair's output terminal, and Q2's current
    rows.insert(rows.begin() + 3,
                {{"nodes.collector2", "V(Q2 collector)", e.v_out2, f.v_out2, kFloorV, volts},
                 {"q2_current", "Q2 collector current", e.q2_current_a, f.q2_current_a, kFloorA, amps}});
  if (c.band_lo_hz > 0)
    rows.push_back({"loss_low_db", fmt::format("loss at {}", format_value(c.band_lo_hz, Unit::hertz)), e.loss_lo_db,
                    f.loss_lo_db, kFloorDb, db_text});
  if (c.band_hi_hz > 0)
    rows.push_back({"loss_high_db", fmt::format("loss at {}", format_value(c.band_hi_hz, Unit::hertz)), e.loss_hi_db,
                    f.loss_hi_db, kFloorDb, db_text});
  rows.push_back({"swing_up", "swing up (peak)", e.swing_up_v, f.swing_up_v, kFloorV, volts});
  rows.push_back({"swing_down", "swing down (peak)", e.swing_down_v, f.swing_down_v, kFloorV, volts});
  rows.push_back({"clip_peak", "clipping (symmetric peak)", e.clip_peak_v, f.clip_peak_v, kFloorV, volts});
  rows.push_back({"swing_peak", fmt::format("rated peak (THD {} or less)", hd2_text(c.max_thd)), e.swing_peak_v,
                  f.swing_peak_v, kFloorV, volts});
  const std::string at = format_value(c.hd2_peak_v, Unit::volt);
  rows.push_back({"hd2", fmt::format("HD2 at {} peak out", at), e.hd2, f.hd2, kFloorHd2, hd2_text});
  rows.push_back({"hd3", fmt::format("HD3 at {} peak out", at), e.hd3, f.hd3, kFloorHd2, hd2_text});
  rows.push_back({"thd", fmt::format("THD at {} peak out", at), e.thd, f.thd, kFloorHd2, hd2_text});
  rows.push_back({"noise", fmt::format("input noise at {}", format_value(c.noise_f_hz, Unit::hertz)), e.noise_v_rthz,
                  f.noise_v_rthz, kFloorNoise, noise_text});
  return rows;
}

// A stress for the table: below what a meter reads (1 nW, 1 mV) it is shown as 0.
std::string watts_shown(double w) { return format_value(w < 1e-9 ? 0.0 : w, Unit::watt); }
std::string volts_shown(double v) { return format_value(std::abs(v) < 1e-3 ? 0.0 : v, Unit::volt); }

std::string part_label(const PartStress& p) { return fmt::format("{} ({})", p.designator, p.name); }

void judge_part(const stages::Topology& t, PartStress& p, std::vector<std::string>& warnings) {
  const double rating = p.info.rating;
  if (p.kind == 'R') {
    if (rating > 0) {
      p.use = p.power_w / (kResistorDerating * rating);
      p.over = p.use > 1.0;
    }
    if (p.over) {
      const double worst = std::max(p.power_w, p.power_closed_w);
      warnings.push_back(fmt::format("{} dissipates {}, more than {} its {} rating (common practice: at most half)",
                                     part_label(p), format_value(worst, Unit::watt), worst > rating ? "all of" : "half",
                                     format_value(rating, Unit::watt)));
    }
    return;
  }
  const double dc = std::max(p.dc_v, p.dc_closed_v);
  if (rating > 0) {
    p.use = kCapMargin * (dc + p.peak_v) / rating;
    p.over = p.use > 1.0;
  }
  if (p.over) {
    const bool beyond = dc + p.peak_v > rating;
    warnings.push_back(fmt::format("{} holds {} DC plus up to {} of signal: {} its {} rating", part_label(p),
                                   format_value(dc, Unit::volt), format_value(p.peak_v, Unit::volt),
                                   beyond ? "more than" : "less than a quarter of margin on",
                                   format_value(rating, Unit::volt)));
  }
  // A polarised part wants its + lead at the higher DC voltage; a volt fraction either way
  // is no bias at all (common practice: an electrolytic tolerates that).
  if (p.dc_range) {
    // The verified range: reversed only where the DC from the + lead falls below zero.
    if (p.info.polarised && p.dc_min_v < 0) {
      p.reversed = true;
      warnings.push_back(
          fmt::format("{} is polarised and fitted with its + lead to the {}, but it holds down to {} "
                      "from that lead at a corner: turn it round or fit a non-polarised part",
                      part_label(p), t.net_words(p.info.fitted_plus_net), format_value(p.dc_min_v, Unit::volt)));
    }
    return;
  }
  if (p.info.polarised && !p.info.fitted_plus_net.empty() && p.dc_v > 0.05 && p.info.fitted_plus_net != p.plus_net) {
    p.reversed = true;
    warnings.push_back(fmt::format(
        "{} is polarised and fitted with its + lead to the {}, but the {} sits {} higher: "
        "turn it round",
        part_label(p), t.net_words(p.info.fitted_plus_net), t.net_words(p.plus_net), format_value(p.dc_v, Unit::volt)));
  }
}

}  // namespace
}  // namespace detail

using detail::same_name;
using units::format_value;
using units::Unit;

bool differs(double a, double b, double floor) {
  const double d = std::abs(a - b);
  return d > floor && d > 0.01 * std::max(std::abs(a), std::abs(b));
}

std::string role_list(const stages::Topology& t) {
  std::string out;
  for (const auto& r : t.roles()) {
    if (!out.empty()) out += ' ';
    out += r.optional ? fmt::format("[{}]", r.name) : std::string(r.name);
  }
  return out;
}

namespace {
// What parts come in: resistors from 0.1 Ω to 1 GΩ, capacitors from 1 pF to 1 F.
constexpr double kMinOhm = 0.1, kMaxOhm = 1e9, kMinFarad = 1e-12, kMaxFarad = 1.0;
}  // namespace

stages::Values role_values(const stages::Topology& t, const std::vector<std::pair<std::string, double>>& given) {
  const auto roles = t.roles();
  stages::Values v;
  std::vector<bool> seen(roles.size(), false);
  const std::string listing = fmt::format("{} takes {} (optional roles in brackets)", t.name(), role_list(t));
  for (const auto& [name, value] : given) {
    std::size_t i = 0;
    while (i < roles.size() && !same_name(roles[i].name, name)) ++i;
    if (i == roles.size()) throw InputError(fmt::format("role '{}' is unknown: {}", name, listing));
    const Unit unit = roles[i].kind == 'R' ? Unit::ohm : Unit::farad;
    if (seen[i])
      throw InputError(fmt::format("role {} is given twice ({} and {})", roles[i].name, format_value(v[i], unit),
                                   format_value(value, unit)));
    if (!std::isfinite(value) || value <= 0)
      throw InputError(
          fmt::format("role {} '{:g}': a part's value must be positive (leave an optional role out "
                      "instead)",
                      roles[i].name, value));
    // A value far outside what parts come in is a slip of the unit (CIN=100 for 100n).
    const double lo = roles[i].kind == 'R' ? kMinOhm : kMinFarad, hi = roles[i].kind == 'R' ? kMaxOhm : kMaxFarad;
    if (value < lo || value > hi)
      throw InputError(fmt::format("role {} '{}' is not a plausible {} ({}..{}): mind the prefix, as in {}",
                                   roles[i].name, format_value(value, unit),
                                   roles[i].kind == 'R' ? "resistance" : "capacitance", format_value(lo, unit),
                                   format_value(hi, unit), roles[i].kind == 'R' ? "4k7 or 1M" : "100n or 10u"));
    seen[i] = true;
    v[i] = value;
  }
  for (std::size_t i = 0; i < roles.size(); ++i) {
    if (!roles[i].optional && !seen[i])
      throw InputError(fmt::format("role {} ({}) is missing: {}", roles[i].name, roles[i].what, listing));
  }
  // An optional part the netlist does not place needs a partner (a bypass capacitor needs the
  // resistor it bypasses): find which missing role, once present, places it.
  const std::vector<bool> in_net = detail::placed(t, v);
  for (std::size_t i = 0; i < roles.size(); ++i) {
    if (!seen[i] || in_net[i]) continue;
    std::string partner;
    for (std::size_t k = 0; k < roles.size() && partner.empty(); ++k) {
      if (seen[k]) continue;
      stages::Values w = v;
      w[k] = roles[k].kind == 'R' ? 1e3 : 1e-6;
      if (detail::placed(t, w)[i]) partner = std::string(roles[k].name);
    }
    if (!partner.empty())
      throw InputError(fmt::format("role {} ({}) has no place without {}: give {} too, or leave {} out", roles[i].name,
                                   roles[i].what, partner, partner, roles[i].name));
    throw InputError(fmt::format("role {} ({}) has no place in this {}", roles[i].name, roles[i].what, t.name()));
  }
  return v;
}

namespace {

// The stage must be complete and take the transistor: else InputError.
void check_stage(const StageUnderTest& stage) {
  if (!stage.topology) throw InputError("analysis: no topology given");
  const auto& t = *stage.topology;
  const auto roles = t.roles();
  if (!t.accepts(stage.transistor.kind))
    throw InputError(
        fmt::format("{} does not take a {} ({})", t.name(), devices::kind_name(stage.transistor.kind), t.summary()));
  for (std::size_t i = 0; i < roles.size(); ++i)
    if (!roles[i].optional && !(stage.values[i] > 0))
      throw InputError(
          fmt::format("role {} ({}) is missing: {} takes {}", roles[i].name, roles[i].what, t.name(), role_list(t)));
}

// The output level HD2 is given at: 1 V peak, unless the stage cannot swing 2 V: then half
// of what it can.
double hd2_level(const StageUnderTest& stage) {
  const auto core = stage.topology->evaluate(stage.values, stage.transistor, stage.conditions, stages::Detail::core);
  if (core.valid && core.clip_peak_v > 0 && core.clip_peak_v < 2.0) return 0.5 * core.clip_peak_v;
  return 1.0;
}

// Role i's part: stress from the exact solution (the closed form as the fallback and beside it).
PartStress part_stress(const Analysis& a, std::size_t i) {
  const auto& stage = a.stage;
  const auto role = stage.topology->roles()[i];
  PartStress p;
  p.role = i;
  p.name = std::string(role.name);
  p.kind = role.kind;
  p.value = stage.values[i];
  p.info.role = p.name;
  for (const auto& info : stage.parts)
    if (same_name(info.role, p.name)) p.info = info;
  p.designator = p.info.designator.empty() ? std::string(role.designator) : p.info.designator;
  const stages::Stress* fs = detail::stress_of(a.closed_form, i);
  const stages::Stress* es = a.exact ? detail::stress_of(*a.exact, i) : nullptr;
  if (!es) es = fs;
  if (p.kind == 'R') {
    p.power_w = es ? es->power_w : 0.0;
    p.power_closed_w = fs ? fs->power_w : 0.0;
    return p;
  }
  p.dc_v = es ? es->dc_v : 0.0;
  p.dc_closed_v = fs ? fs->dc_v : 0.0;
  p.plus_net = es ? std::string(es->plus_net) : std::string();
  if (p.info.dc_known) {
    // The design's verified range is the one figure (a chain's coupling capacitor holds
    // the DC between two stages, which this stage's own operating point does not show).
    p.dc_range = true;
    p.dc_min_v = p.info.dc_min_v;
    p.dc_max_v = p.info.dc_max_v;
    p.dc_v = p.dc_closed_v = std::max(std::abs(p.dc_min_v), std::abs(p.dc_max_v));
    if (!p.info.fitted_plus_net.empty()) p.plus_net = p.info.fitted_plus_net;
  }
  // The largest signal anywhere in the stage is the output's (inputs are smaller by the
  // gain; a follower's input equals its output), overdriven to clipping: a bound for
  // every capacitor.
  p.peak_v = std::max(a.best().clip_peak_v, 0.0);
  return p;
}

// What is wrong with the bias point itself, if anything (empty: it amplifies).
std::string bias_warning(const Analysis& a) {
  const stages::Performance& best = a.best();
  const bool opamp = opamp_stage(*a.stage.topology);
  if (!best.valid)
    return fmt::format("the {} does not conduct ({}): the stage does not amplify", opamp ? "op-amp" : "transistor",
                       best.problem.empty() ? a.closed_form.problem : best.problem);
  if (best.active) return {};
  const std::string why = !best.problem.empty()            ? best.problem
                          : !a.closed_form.problem.empty() ? a.closed_form.problem
                                                           : "out of its amplifying region";
  if (opamp)
    return fmt::format(
        "the op-amp is out of its linear range ({}): the small-signal figures do not describe a linear amplifier", why);
  return fmt::format(
      "the transistor is {} at the bias point: the small-signal figures do not describe "
      "a linear amplifier",
      why);
}

// Hazardous supply, polarised parts (which way round), parts without a stated rating.
std::vector<std::string> stage_cautions(const Analysis& a) {
  const auto& t = *a.stage.topology;
  std::vector<std::string> out;
  if (auto hazard = synth::hazard_caution(a.stage.conditions.supply_v); !hazard.empty()) out.push_back(hazard);
  std::vector<std::string> unrated;
  for (const auto& p : a.parts) {
    if (p.info.polarised && !p.reversed)
      out.push_back(synth::polarised_caution(
          detail::part_label(p), t.net_words(p.info.fitted_plus_net.empty() ? p.plus_net : p.info.fitted_plus_net)));
    if (!(p.info.rating > 0)) unrated.push_back(p.designator);
  }
  if (!unrated.empty()) out.push_back(synth::unrated_caution(unrated));
  return out;
}

// The closed form (Detail::core) at each of the spread's corner pieces; with Q2's spread, at
// every pairing of Q1's corner pieces with Q2's (without it, Q2 stays the stage's own piece).
std::vector<CornerFigures> corner_figures(const StageUnderTest& stage, const devices::DeviceSpread& spread,
                                          const devices::DeviceSpread* spread2, double f_mid_hz) {
  const auto& c = stage.conditions;
  std::vector<std::optional<devices::PieceFigures>> seconds = {std::nullopt};
  if (spread2 && stage.transistor.paired) {
    seconds.clear();
    for (const auto& f2 : spread2->corners()) seconds.emplace_back(f2);
  }
  std::vector<CornerFigures> out;
  for (const auto& f : spread.corners())
    for (const auto& f2 : seconds) {
      stages::Transistor qc = stage.transistor;
      if (qc.kind == devices::DeviceKind::opamp)
        qc.opamp = spread.opamp(f, c.celsius);
      else if (devices::is_jfet(qc.kind))
        qc.jfet = spread.jfet(f, c.celsius);
      else
        qc.bjt = spread.bjt(f, c.celsius);
      if (f2) qc.bjt2 = spread2->bjt(*f2, c.celsius);
      out.push_back({f, f2, stage.topology->evaluate(stage.values, qc, c, stages::Detail::core), std::nullopt});
      if (f_mid_hz > 0) {
        try {
          out.back().loop = stages::loop_gain(*stage.topology, stage.values, qc, c, f_mid_hz);
        } catch (const Error&) {
          // A piece whose operating point does not converge has no loop figure; its row says so.
        }
      }
    }
  return out;
}

// A feedback stage's loop at the nominal piece: where it is broken, the frequency it is read
// at (the middle of the closed form's band, on a log scale) and its figures.
void nominal_loop(Analysis& a) {
  const auto& t = *a.stage.topology;
  const auto brk = t.feedback_loop();
  if (!brk) return;
  const std::size_t role = t.role_index(brk->role);
  if (role >= t.roles().size() || !(a.stage.values[role] > 0)) return;
  std::string designator(t.roles()[role].designator);
  for (const auto& p : a.stage.parts)
    if (p.role == brk->role && !p.designator.empty()) designator = p.designator;
  a.loop_broken_at = fmt::format("{} ({}) at the {}", designator, brk->role, t.net_words(brk->net));
  const double lo = a.closed_form.f_low_hz, hi = a.closed_form.f_high_hz;
  a.loop_f_mid_hz = lo > 0 && hi > lo ? std::sqrt(lo * hi) : 1e3;
  try {
    a.loop = stages::loop_gain(t, a.stage.values, a.stage.transistor, a.stage.conditions, a.loop_f_mid_hz);
  } catch (const Error& e) {
    a.loop_problem = e.what();
  }
}

}  // namespace

Analysis analyze_stage(const StageUnderTest& stage, const devices::DeviceSpread* spread,
                       const devices::DeviceSpread* spread2) {
  check_stage(stage);
  const auto& t = *stage.topology;
  Analysis a;
  a.stage = stage;
  auto& c = a.stage.conditions;
  if (!(c.hd2_peak_v > 0)) c.hd2_peak_v = hd2_level(stage);
  a.closed_form = t.evaluate(stage.values, stage.transistor, c, stages::Detail::full);
  try {
    a.exact = stages::evaluate_exact(t, stage.values, stage.transistor, c, stages::Detail::full);
  } catch (const Error& e) {
    a.exact_problem = e.what();
  }
  for (std::size_t i = 0; i < t.roles().size(); ++i) {
    if (!(stage.values[i] > 0)) continue;
    PartStress p = part_stress(a, i);
    detail::judge_part(t, p, a.warnings);
    a.parts.push_back(p);
  }
  if (auto w = bias_warning(a); !w.empty()) a.warnings.insert(a.warnings.begin(), w);
  a.cautions = stage_cautions(a);
  nominal_loop(a);
  if (spread) {
    a.spread = spread->description();
    if (spread2 && stage.transistor.paired) a.spread += "; Q2: " + spread2->description();
    a.corners = corner_figures(a.stage, *spread, spread2, a.loop ? a.loop_f_mid_hz : 0.0);
  }
  return a;
}

namespace {

Json device_json(const StageUnderTest& stage) {
  const auto& q = stage.transistor;
  Json model;
  if (q.kind == devices::DeviceKind::opamp) {
    model = opamp_piece_json(q.opamp);
  } else if (devices::is_jfet(q.kind)) {
    model["idss"] = q.jfet.idss_a;
    model["vp"] = -devices::polarity(q.kind) * q.jfet.vp_abs_v;
    model["lambda"] = q.jfet.lambda_per_v;
  } else {
    model["is"] = q.bjt.is_a;
    model["bf"] = q.bjt.bf;
    model["vaf"] = q.bjt.vaf_v;
  }
  Json j = {{"name", stage.device},
            {"kind", std::string(devices::kind_name(q.kind))},
            {"piece", text_or_null(stage.piece)},
            {"model", model}};
  if (opamp_stage(*stage.topology)) j["designator"] = std::string(stage.topology->device_designator());
  return j;
}

Json conditions_json(const stages::Conditions& c) {
  Json j = {{"supply", (c.negative_rail ? -c.supply_v : c.supply_v)},
            {"load", c.load_ohm},
            {"load_cap", c.load_farads > 0 ? Json(c.load_farads) : Json(nullptr)},
            {"source_z", c.source_ohm},
            {"temp", c.celsius},
            {"band", c.band_lo_hz > 0 || c.band_hi_hz > 0 ? Json::array({c.band_lo_hz, c.band_hi_hz}) : Json(nullptr)},
            {"hd2_at", c.hd2_peak_v},
            {"noise_at", c.noise_f_hz}};
  if (c.split_supply) j["split"] = true;  // rails at +supply and -supply (only then: older documents stay as they were)
  return j;
}

Json part_json(const PartStress& p) {
  Json pj;
  pj["role"] = p.name;
  pj["designator"] = p.designator;
  pj["kind"] = std::string(1, p.kind);
  pj["value"] = p.value;
  pj["recipe"] = text_or_null(p.info.recipe);
  pj["tol"] = text_or_null(p.info.tol);
  if (p.kind == 'R') {
    pj["power"] = p.power_w;
    pj["power_closed_form"] = p.power_closed_w;
  } else {
    pj["dielectric"] = text_or_null(p.info.dielectric);
    pj["dc"] = p.dc_v;
    pj["dc_closed_form"] = p.dc_closed_v;
    // The design's verified range (from the + lead), when the analysis was given one.
    pj["dc_range"] = p.dc_range ? Json::array({p.dc_min_v, p.dc_max_v}) : Json(nullptr);
    pj["signal_peak"] = p.peak_v;
    pj["plus_net"] = text_or_null(p.plus_net);
    pj["polarised"] = p.info.polarised;
    pj["fitted_plus_net"] = text_or_null(p.info.fitted_plus_net);
  }
  pj["rating"] = p.info.rating > 0 ? Json(p.info.rating) : Json(nullptr);
  pj["use"] = p.info.rating > 0 ? Json(p.use) : Json(nullptr);
  pj["over"] = p.over;
  pj["reversed"] = p.reversed;
  return pj;
}

Json corner_json(const stages::Topology& t, devices::DeviceKind kind, const CornerFigures& cf) {
  Json cj;
  cj["tag"] = cf.piece.tag;
  if (kind == devices::DeviceKind::opamp) {
    cj["opamp"] = opamp_piece_json(cf.piece.opamp);  // at 25 °C, as the spread states it
  } else if (devices::is_jfet(kind)) {
    cj["idss"] = cf.piece.idss_a;
    cj["vp"] = -devices::polarity(kind) * cf.piece.vp_abs_v;
  } else {
    cj["hfe"] = cf.piece.hfe;
  }
  if (cf.piece2) cj["hfe2"] = cf.piece2->hfe;
  cj["figures"] = detail::performance_json(t, cf.performance);
  cj["loop"] = cf.loop ? loop_gain_json(*cf.loop) : Json(nullptr);
  return cj;
}

}  // namespace

Json analysis_json(const Analysis& a) {
  const auto& t = *a.stage.topology;
  Json j;
  j["schema"] = 1;
  j["topology"] = std::string(t.name());
  j["device"] = device_json(a.stage);
  j["conditions"] = conditions_json(a.stage.conditions);
  j["exact"] = a.exact ? detail::performance_json(t, *a.exact) : Json(nullptr);
  j["exact_problem"] = text_or_null(a.exact_problem);
  j["closed_form"] = detail::performance_json(t, a.closed_form);
  Json diff = Json::array();
  if (a.exact)
    for (const auto& r : detail::figure_rows(a))
      if (differs(r.exact, r.closed, r.floor)) diff.push_back(r.key);
  j["differs"] = diff;
  Json parts = Json::array();
  for (const auto& p : a.parts) parts.push_back(part_json(p));
  j["parts"] = parts;
  j["warnings"] = a.warnings;
  j["cautions"] = a.cautions;
  if (a.loop_broken_at.empty()) {
    j["loop"] = nullptr;
  } else {
    Json l = {{"broken_at", a.loop_broken_at}, {"f_mid", a.loop_f_mid_hz}};
    if (a.loop) l.update(loop_gain_json(*a.loop));
    l["problem"] = text_or_null(a.loop_problem);
    l["least_phase_margin"] = synth::kLeastPhaseMarginDeg;
    j["loop"] = l;
  }
  j["spread"] = text_or_null(a.spread);
  Json corners = Json::array();
  for (const auto& cf : a.corners) corners.push_back(corner_json(t, a.stage.transistor.kind, cf));
  j["corners"] = corners;
  return j;
}

std::string figures_text(const Analysis& a) {
  std::string out;
  if (a.exact) {
    out +=
        "Nominal figures: the netlist solved exactly (MNA); the closed form beside it where the two differ by "
        "more than 1 %.\n";
    TextTable t({{""}, {"exact", Align::right}, {"closed form", Align::right}});
    for (const auto& r : detail::figure_rows(a))
      t.add_row({r.label, r.format(r.exact), differs(r.exact, r.closed, r.floor) ? r.format(r.closed) : ""});
    out += t.render({"  "});
  } else {
    out += fmt::format("Nominal figures from the closed form alone: the exact solver failed ({}).\n", a.exact_problem);
    TextTable t({{""}, {"closed form", Align::right}});
    for (const auto& r : detail::figure_rows(a)) t.add_row({r.label, r.format(r.closed)});
    out += t.render({"  "});
  }
  out += loop_text(a);
  return out;
}

std::string loop_text(const Analysis& a) {
  if (a.loop_broken_at.empty()) return {};
  std::string out = fmt::format("Feedback loop: broken at {}, read at {}", a.loop_broken_at,
                                format_value(a.loop_f_mid_hz, Unit::hertz));
  if (!a.loop) return out + fmt::format(": not measured ({})\n", a.loop_problem);
  const auto& g = *a.loop;
  out += fmt::format(": loop gain {:.3g} ({:.1f} dB)", g.mid, 20 * std::log10(std::max(g.mid, 1e-12)));
  if (!g.crosses()) return out + "; it stays below 1 at every frequency: no crossover, it cannot oscillate\n";
  return out + fmt::format(
                   "; unity-gain crossover {}, phase margin {:.0f}\u00b0 (common practice: at least "
                   "{:.0f}\u00b0){}\n",
                   format_value(g.f_cross_hz, Unit::hertz), g.phase_margin_deg, synth::kLeastPhaseMarginDeg,
                   g.phase_margin_deg < synth::kLeastPhaseMarginDeg
                       ? ": SHORT, expect ringing; a capacitor across the feedback resistor, or less load "
                         "capacitance, gives it room"
                       : "");
}

std::string parts_text(const Analysis& a) {
  const auto& t = *a.stage.topology;
  TextTable table({{"role"},
                   {"part"},
                   {"value", Align::right},
                   {"recipe"},
                   {"tol"},
                   {"stress", Align::right},
                   {"closed form", Align::right},
                   {"rating", Align::right},
                   {"use", Align::right},
                   {"note"}});
  for (const auto& p : a.parts) {
    std::string stress, closed, rating, note;
    if (p.kind == 'R') {
      stress = detail::watts_shown(p.power_w);
      if (differs(p.power_w, p.power_closed_w, detail::kFloorW)) closed = detail::watts_shown(p.power_closed_w);
      rating = p.info.rating > 0 ? format_value(p.info.rating, Unit::watt) : "not stated";
    } else {
      // A verified range reads "1.2..3.4V DC": the DC from the + lead over every corner.
      const bool spans = p.dc_range && differs(p.dc_min_v, p.dc_max_v, detail::kFloorV);
      const std::string dc =
          spans ? fmt::format("{}..{}", detail::volts_shown(p.dc_min_v), detail::volts_shown(p.dc_max_v))
                : detail::volts_shown(p.dc_range ? p.dc_max_v : p.dc_v);
      stress = fmt::format("{} DC + {} pk", dc, detail::volts_shown(p.peak_v));
      if (differs(p.dc_v, p.dc_closed_v, detail::kFloorV))
        closed = fmt::format("{} DC", detail::volts_shown(p.dc_closed_v));
      rating = p.info.rating > 0 ? format_value(p.info.rating, Unit::volt) : "not stated";
      if (p.dc_v > 0.05) note = fmt::format("+ to {}", t.net_words(p.plus_net));
      if (!p.info.dielectric.empty()) note = p.info.dielectric + (note.empty() ? "" : ", " + note);
    }
    if (p.over) note += note.empty() ? "OVER RATING" : "; OVER RATING";
    if (p.reversed) note += note.empty() ? "REVERSED" : "; REVERSED";
    const Unit unit = p.kind == 'R' ? Unit::ohm : Unit::farad;
    table.add_row({p.name, p.designator, format_value(p.value, unit), p.info.recipe, p.info.tol, stress, closed, rating,
                   p.info.rating > 0 ? fmt::format("{:.0f}%", p.use * 100) : "", note});
  }
  std::string out =
      "Parts and their stress (use: share of what the part may take: resistors half their rating, capacitors their "
      "rating less a quarter of margin):\n";
  out += table.render({"  "});
  return out;
}

// A corner piece's tag without its figures in parentheses, which the table's own columns
// give: "hFE min (110), VBE -30 mV" reads "hFE min, VBE -30 mV".
std::string short_tag(std::string tag) {
  const auto open = tag.find(" (");
  if (open == std::string::npos) return tag;
  // To the parenthesis that closes it: an op-amp corner's figures hold parentheses of their own.
  int depth = 0;
  for (std::size_t i = open + 1; i < tag.size(); ++i) {
    if (tag[i] == '(') ++depth;
    if (tag[i] == ')' && --depth == 0) {
      tag.erase(open, i - open + 1);
      break;
    }
  }
  return tag;
}

// A corner's phase margin for the corners table: "94°", "no crossover", or empty.
std::string margin_shown(const std::optional<stages::LoopGain>& g) {
  if (!g) return {};
  return g->crosses() ? fmt::format("{:.0f}\u00b0", g->phase_margin_deg) : "no crossover";
}

namespace {

// An op-amp's corners: the figures a corner piece moves (GBW, offset, each input's bias
// current) and what they move at the output (its DC, the gain, the rated peak, the margin).
std::string opamp_corners_text(const Analysis& a) {
  const auto& t = *a.stage.topology;
  const bool looped =
      std::any_of(a.corners.begin(), a.corners.end(), [](const auto& cf) { return cf.loop.has_value(); });
  std::vector<Column> cols = {{"piece"},
                              {"GBW", Align::right},
                              {"Vos", Align::right},
                              {"Ib+", Align::right},
                              {"Ib-", Align::right},
                              {node_labels(t)[2], Align::right},
                              {"gain", Align::right},
                              {"rated pk", Align::right}};
  if (looped) cols.push_back({"margin", Align::right});
  cols.push_back({"state"});
  TextTable table(cols);
  for (const auto& cf : a.corners) {
    const auto& q = cf.piece.opamp;
    const auto& p = cf.performance;
    std::vector<std::string> row = {short_tag(cf.piece.tag), format_value(q.gbw_hz, Unit::hertz),
                                    format_value(q.vos_v, Unit::volt), format_value(q.ib_plus_a, Unit::ampere),
                                    format_value(q.ib_minus_a, Unit::ampere)};
    if (p.valid) {
      row.push_back(format_value(p.v_out, Unit::volt));
      row.push_back(fixed3(p.gain));
      row.push_back(format_value(p.swing_peak_v, Unit::volt));
    } else {
      row.insert(row.end(), {"", "", ""});
    }
    if (looped) row.push_back(margin_shown(cf.loop));
    row.push_back(p.valid && p.active ? "ok" : p.problem.empty() ? "not linear" : p.problem);
    table.add_row(row);
  }
  std::string out = fmt::format(
      "The closed form at the op-amp's {} corner pieces ({}, {:g} °C), to show how far another piece moves the "
      "output; a piece at the lower GBW has its slew rate and open-loop gain at their minima too, and Ib+ and Ib- "
      "are the bias currents into the inputs:\n",
      a.corners.size(), a.spread, a.stage.conditions.celsius);
  out += table.render({"  "});
  return out;
}

}  // namespace

std::string corners_text(const Analysis& a) {
  if (a.corners.empty()) return {};
  if (a.stage.transistor.kind == devices::DeviceKind::opamp) return opamp_corners_text(a);
  const auto& t = *a.stage.topology;
  const auto& q = a.stage.transistor;
  const bool jfet = devices::is_jfet(q.kind);
  const auto names = t.node_names();
  std::vector<Column> cols = {{"piece"}};
  if (jfet) {
    cols.push_back({"IDSS", Align::right});
    cols.push_back({"VP", Align::right});
  } else {
    cols.push_back({"hFE", Align::right});
  }
  const bool paired = !a.corners.empty() && a.corners.front().piece2;
  if (paired) {
    cols.push_back({"Q2 piece"});
    cols.push_back({"Q2 hFE", Align::right});
  }
  for (const char* title : {"bias", "", "", "gain", "rated pk", "state"}) cols.push_back({title, Align::right});
  cols[cols.size() - 5].title = fmt::format("V({})", names[1]);
  cols[cols.size() - 4].title = fmt::format("V({})", names[2]);
  if (a.stage.transistor.paired) cols.insert(cols.end() - 3, Column{"V(Q2 collector)", Align::right});
  const bool looped =
      std::any_of(a.corners.begin(), a.corners.end(), [](const auto& cf) { return cf.loop.has_value(); });
  if (looped) cols.insert(cols.end() - 1, Column{"margin", Align::right});
  cols.back().align = Align::left;
  TextTable table(cols);
  for (const auto& cf : a.corners) {
    const auto& p = cf.performance;
    std::vector<std::string> row = {short_tag(cf.piece.tag)};
    if (jfet) {
      row.push_back(format_value(cf.piece.idss_a, Unit::ampere));
      row.push_back(format_value(-devices::polarity(q.kind) * cf.piece.vp_abs_v, Unit::volt));
    } else {
      row.push_back(fmt::format("{:.0f}", cf.piece.hfe));
    }
    if (cf.piece2) {
      row.push_back(short_tag(cf.piece2->tag));
      row.push_back(fmt::format("{:.0f}", cf.piece2->hfe));
    }
    if (p.valid) {
      row.push_back(format_value(p.bias_current_a, Unit::ampere));
      row.push_back(format_value(p.v_common, Unit::volt));
      row.push_back(format_value(p.v_out, Unit::volt));
      if (a.stage.transistor.paired) row.push_back(format_value(p.v_out2, Unit::volt));
      row.push_back(fixed3(p.gain));
      row.push_back(format_value(p.swing_peak_v, Unit::volt));
      if (looped) row.push_back(margin_shown(cf.loop));
      row.push_back(p.active ? "ok" : p.problem);
    } else {
      row.insert(row.end(), {"", "", "", "", ""});
      if (a.stage.transistor.paired) row.emplace_back();
      if (looped) row.emplace_back();
      row.push_back(p.problem.empty() ? "cut off" : p.problem);
    }
    table.add_row(row);
  }
  std::string out = fmt::format(
      "The closed form at {} corner pieces ({}, {:g} °C), to show how far another "
      "piece moves the bias:\n",
      paired ? "every pairing of Q1's and Q2's" : "the device's", a.spread, a.stage.conditions.celsius);
  out += table.render({"  "});
  return out;
}

std::string stage_spice(const StageUnderTest& s) {
  if (!s.topology) throw InputError("SPICE export: no topology given");
  const auto& t = *s.topology;
  const circuit::Circuit net = t.netlist(s.values, s.transistor, s.conditions);
  circuit::SpiceOptions o;
  // ASCII only: some SPICE versions stumble over other characters, even in the title.
  o.title = fmt::format("shelfstage: {} with {}{}, supply {} V, load {} ohm, source {} ohm", t.name(),
                        s.device.empty() ? std::string(devices::kind_name(s.transistor.kind)) : s.device,
                        s.piece.empty() ? " (nominal piece)" : " (measured piece " + s.piece + ")",
                        format_value(s.conditions.negative_rail ? -s.conditions.supply_v : s.conditions.supply_v),
                        format_value(s.conditions.load_ohm), format_value(s.conditions.source_ohm));
  o.celsius = s.conditions.celsius;
  std::string nodes;
  if (const auto* q = net.find("Q1")) {
    for (std::size_t pin : q->c.pins) {
      const std::string n = circuit::spice_net(net, pin);
      if (n != "0") nodes += fmt::format(" v({})", n);
    }
  } else if (opamp_stage(t)) {  // the op-amp's pins: + input, - input, output (each once)
    std::vector<std::string> seen;
    for (std::string_view name : t.node_names()) {
      const auto v = net.find_net(std::string(name));
      if (!v) continue;
      const std::string n = circuit::spice_net(net, *v);
      if (n == "0" || std::find(seen.begin(), seen.end(), n) != seen.end()) continue;
      seen.push_back(n);
      nodes += fmt::format(" v({})", n);
    }
  }
  o.analyses = spice_run_lines(nodes);
  return circuit::to_spice(net, o);
}

std::vector<std::string> spice_run_lines(const std::string& print_nodes) {
  return {
      "* Run with: ngspice -b THIS_FILE (prints the operating point, the mid-band gain and the -3 dB corners)",
      ".control",
      "op",
      "print" + print_nodes,
      "let supply_current = abs(i(vdd))",
      "print supply_current",
      "ac dec 20 0.1 1e9",
      "meas ac gain_mid_db max vdb(out)",
      "let edge_db = gain_mid_db - 3",
      "meas ac f_low when vdb(out)=$&edge_db rise=1",
      "meas ac f_high when vdb(out)=$&edge_db fall=last",
      ".endc",
  };
}

}  // namespace shelfstage::report
