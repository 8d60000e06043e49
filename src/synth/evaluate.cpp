// Corners and yield of one candidate: the device spread's corners, the parts' tolerance
// extremes, the supply range and the temperature range; Monte Carlo builds for the yield.
#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <random>

#include "detail.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/synth/cautions.hpp"

namespace shelfstage::synth {

void Range::add(double v) {
  if (empty) {
    min = max = v;
    empty = false;
  } else {
    min = std::min(min, v);
    max = std::max(max, v);
  }
}

namespace detail {

double score_points(double error_nominal, double error_worst, int pieces, double thd_max, int purchases,
                    const Spec& spec) {
  double s = 100.0 * (0.5 * std::abs(error_nominal) + error_worst) + kPiecePoints * pieces;
  // --prefer distortion: ten points per percent of the worst-case THD at the requested level.
  if (spec.prefer == Spec::Prefer::distortion) s += 1000.0 * thd_max;
  s += spec.purchase_points * purchases;
  return s;
}

double score_of(const Candidate& c, const Spec& spec) {
  return score_points(c.error_nominal, c.error_worst, c.pieces, c.worst.thd.empty ? 0.0 : c.worst.thd.max, c.purchases,
                      spec);
}

stages::Conditions conditions(const Spec& spec, double supply, double celsius) {
  stages::Conditions c;
  c.supply_v = supply;
  c.negative_rail = spec.negative_rail;
  c.split_supply = spec.split_supply;
  c.least_margin_deg = spec.least_margin_deg;
  c.load_ohm = spec.load_ohm;
  c.load_farads = spec.load_farads;
  c.source_ohm = spec.source_ohm;
  c.celsius = celsius;
  if (spec.band_hz) {
    c.band_lo_hz = spec.band_hz->first;
    c.band_hi_hz = spec.band_hz->second;
  }
  c.hd2_peak_v = spec.swing_vpp ? *spec.swing_vpp / 2 : 1.0;
  c.max_thd = spec.max_thd;
  return c;
}

std::string violation(const Spec& spec, const stages::Performance& p) {
  if (!p.valid || !p.active) return "bias";
  // Swing, distortion, supply current, Zin and the band's losses with their model margins (kModelMargin), as the
  // claimed ranges show them.
  if (spec.swing_vpp && p.swing_peak_v * (1.0 - kModelMargin.swing) < *spec.swing_vpp / 2)
    return p.clip_peak_v >= *spec.swing_vpp / 2 ? "distortion" : "swing";
  // No swing asked: room before clipping all the same (the distortion is not bounded then).
  if (!spec.swing_vpp && std::max(p.clip_peak_v, p.swing_peak_v) * (1.0 - kModelMargin.swing) < least_swing_peak(spec))
    return "swing";
  if (spec.swing_vpp && p.thd * (1.0 + kModelMargin.thd) > spec.max_thd) return "distortion";
  if (spec.max_current_a && p.supply_current_a * (1.0 + kModelMargin.current) > *spec.max_current_a) return "current";
  if (p.zin_ohm * (1.0 - kModelMargin.impedance_corner) < spec.zin_min_ohm) return "zin";
  if (spec.band_hz && std::max(p.loss_lo_db, p.loss_hi_db) * (1.0 + kModelMargin.band_loss) > 1.0) return "band";
  return {};
}

void set_screen_floors(stages::Conditions& c, const Spec& spec) {
  // violation()'s order: "bias" (given as the evaluation gives it), then the swing, then the
  // distortion (nil with the distortion off), the current and Zin: the first floor missed is
  // the first violation the figures given show.
  constexpr double kSpare = 1e-9;
  c.distortion = false;
  c.least_clip_v = least_swing_peak(spec) / (1.0 - kModelMargin.swing) * (1.0 - kSpare);
  c.most_current_a = spec.max_current_a ? *spec.max_current_a / (1.0 + kModelMargin.current) * (1.0 + kSpare) : 0.0;
  c.least_zin_ohm = spec.zin_min_ohm / (1.0 - kModelMargin.impedance_corner) * (1.0 - kSpare);
}

double least_swing_peak(const Spec& spec) {
  return spec.swing_vpp ? *spec.swing_vpp / 2 : spec.least_swing * spec.supply_lo_v / 2;
}

bool gain_ok(const Spec& spec, double gain) { return std::abs(std::abs(gain) / spec.gain - 1.0) <= spec.gain_tol; }

double signal_peak(const Spec& spec, const stages::Performance& p) {
  return std::max(spec.swing_vpp ? *spec.swing_vpp / 2 : 0.0, p.clip_peak_v);
}

double supply_span(const Spec& spec, double supply) { return (spec.split_supply ? 2.0 : 1.0) * std::abs(supply); }

DeviceStress device_stress(const Spec& spec, const Candidate& c, const stages::Performance& p, double celsius) {
  DeviceStress d;
  if (c.device.kind == devices::DeviceKind::opamp) {
    // DeviceStress NOTES: the op-amp's rails on the user's supply (a stage on a negative
    // rail sits between it and ground), its output between them.
    const double span = supply_span(spec, spec.supply_hi_v);
    const double top = spec.split_supply ? spec.supply_hi_v : (spec.negative_rail ? 0.0 : spec.supply_hi_v);
    const double drop = p.out_current_a >= 0 ? top - p.v_out : p.v_out - (top - span);
    d.v_main = span;
    d.v_low = supply_span(spec, spec.supply_lo_v);
    d.v_rev = std::abs(p.v_common - p.v_in);
    d.p_w = span * p.bias_current_a + std::max(0.0, drop) * std::abs(p.out_current_a);
    d.p_allowed_w = c.device.ratings.p_max_at(celsius);
    return d;
  }
  d.v_main = std::max(std::abs(spec.supply_hi_v), std::abs(p.v_out - p.v_common));
  if (devices::is_jfet(c.device.kind)) {
    const double input_peak = std::abs(p.gain) > 0 ? p.clip_peak_v / std::abs(p.gain) : 0.0;
    d.v_rev = std::abs(p.v_in - p.v_common) + input_peak;
  }
  // A capacitor across part of the common leg (Role::holds_leg: CS, CE) keeps the DC it holds
  // when the supply goes; the gate or base then sits at the other end: that much reverse.
  for (const auto& st : p.stress) {
    if (st.role >= c.topology->roles().size()) continue;
    if (c.topology->roles()[st.role].holds_leg) d.v_rev = std::max(d.v_rev, std::abs(st.dc_v));
  }
  d.p_w = std::abs(p.v_out - p.v_common) * p.bias_current_a;
  d.p_allowed_w = c.device.ratings.p_max_at(celsius);
  return d;
}

DeviceStress device2_stress(const Spec& spec, const Candidate& c, const stages::Performance& p, double celsius) {
  DeviceStress d;
  d.v_main = std::max(std::abs(spec.supply_hi_v), p.q2_v_main);
  d.p_w = p.q2_v_main * p.q2_current_a;
  d.p_allowed_w = c.device2 ? c.device2->ratings.p_max_at(celsius) : 0.0;
  return d;
}

namespace {

// One device's stress against its record's ratings (common practice: kDeviceVoltageShare and
// kDevicePowerShare of them); empty when it holds.
std::string rate_device(const devices::DeviceRecord& record, const DeviceStress& d, double celsius) {
  const devices::Ratings& r = record.ratings;
  if (record.kind == devices::DeviceKind::opamp) {
    // An op-amp (DeviceStress NOTES): its supply span within the operating range the record
    // states (the datasheet's recommended span, which already sits below the absolute maximum:
    // the margin a transistor's voltage gets is the maker's here), and never above the absolute
    // maximum; with no operating maximum stated, the absolute maximum with a transistor's
    // margin. Its differential input and its dissipation as a transistor's.
    const devices::OpampParams& o = record.opamp;
    const double v_share = opamp_span_share(o);
    if (r.v_max_v && d.v_main > v_share * *r.v_max_v * (1 + 1e-9))
      return fmt::format("rating: {} runs from a supply span of {:.3g} V against its absolute maximum of {:.3g} V",
                         record.name, d.v_main, *r.v_max_v);
    if (o.vs_max_v > 0 && d.v_main > o.vs_max_v * (1 + 1e-9))
      return fmt::format(
          "rating: {} runs from a supply span of {:.3g} V, above its operating range of {:.3g}..{:.3g} V", record.name,
          d.v_main, o.vs_min_v, o.vs_max_v);
    if (o.vs_min_v > 0 && d.v_low < o.vs_min_v * (1 - 1e-9))
      return fmt::format(
          "rating: {} runs from a supply span of {:.3g} V, below its operating range of {:.3g}..{:.3g} V", record.name,
          d.v_low, o.vs_min_v, o.vs_max_v);
    if (r.v_rev_max_v && d.v_rev > kDeviceVoltageShare * *r.v_rev_max_v)
      return fmt::format("rating: {} takes {:.3g} V between its inputs against its differential rating of {:.3g} V",
                         record.name, d.v_rev, *r.v_rev_max_v);
    if (r.p_max_w && d.p_w > kDevicePowerShare * d.p_allowed_w)
      return fmt::format("rating: {} dissipates {:.3g} W of the {:.3g} W its package may take at {:g} °C", record.name,
                         d.p_w, d.p_allowed_w, celsius);
    return {};
  }
  const bool jfet = devices::is_jfet(record.kind);
  if (r.v_max_v && d.v_main > kDeviceVoltageShare * *r.v_max_v)
    return fmt::format("rating: {} may hold {:.3g} V against its {} of {:.3g} V", record.name, d.v_main,
                       jfet ? "VDS(max)" : "VCEO", *r.v_max_v);
  if (r.v_rev_max_v && d.v_rev > kDeviceVoltageShare * *r.v_rev_max_v)
    return fmt::format("rating: {} takes {:.3g} V reverse against its {} of {:.3g} V", record.name, d.v_rev,
                       jfet ? "gate-source rating" : "VEBO", *r.v_rev_max_v);
  if (r.p_max_w && d.p_w > kDevicePowerShare * d.p_allowed_w)
    return fmt::format("rating: {} dissipates {:.3g} W of the {:.3g} W it may take at {:g} °C", record.name, d.p_w,
                       d.p_allowed_w, celsius);
  return {};
}

}  // namespace

std::string supply_rating(const Spec& spec, const devices::DeviceRecord& record) {
  // The parts of device_stress() that depend on the supply alone; the rest left at nothing,
  // which every rating allows.
  DeviceStress d;
  if (record.kind == devices::DeviceKind::opamp) {
    d.v_main = supply_span(spec, spec.supply_hi_v);
    d.v_low = supply_span(spec, spec.supply_lo_v);
  } else {
    d.v_main = std::abs(spec.supply_hi_v);
  }
  return rate_device(record, d, devices::kNominalCelsius);
}

std::string check_ratings(const Spec& spec, const Candidate& c, const stages::Performance& p, double celsius) {
  if (std::string v = rate_device(c.device, device_stress(spec, c, p, celsius), celsius); !v.empty()) return v;
  if (c.device2)
    if (std::string v = rate_device(*c.device2, device2_stress(spec, c, p, celsius), celsius); !v.empty()) return v;
  const double peak = signal_peak(spec, p);
  for (const auto& s : p.stress) {
    const auto& role = c.topology->roles()[s.role];
    const RolePart* part = nullptr;
    for (const auto& rp : c.parts)
      if (rp.role == role.name) part = &rp;
    if (!part) continue;
    if (role.kind == 'R') {
      // Common practice: a resistor runs at no more than half its rating; an unstated
      // rating is taken as 0.25 W.
      const double rating = part->rating > 0 ? part->rating : 0.25;
      if (s.power_w > 0.5 * rating) return fmt::format("rating: {} dissipates {:.3g} W", role.name, s.power_w);
    } else {
      if (part->rating > 0 && part->rating < 1.25 * (s.dc_v + peak))
        return fmt::format("rating: {} holds {:.3g} V DC", role.name, s.dc_v);
      // An electrolytic keeps a forward DC of at least kPolarForwardV (common practice: a
      // polarised part is never left near zero or reversed) at every point checked.
      if (part->polarised && !part->plus_net.empty()) {
        const double forward = s.plus_net == part->plus_net ? s.dc_v : -s.dc_v;
        if (forward < kPolarForwardV)
          return fmt::format("polarity: {} would hold {:.2f} V from its + lead at a corner", role.name, forward);
      }
    }
  }
  return {};
}

std::string describe_net(const Candidate& c, const std::string& net, int next_stage) {
  if (net == "out" && next_stage > 0) return fmt::format("output side (toward stage {})", next_stage);
  if (net == "0") return "ground";
  if (net == "in") return "input (source) side";
  if (net == "out") return "output (load) side";
  if (const stages::InnerNet* inner = c.topology->inner_net(net)) return std::string(inner->words);
  if (net == "vdd") return "supply rail";
  return c.topology->net_words(net);  // a terminal by its name, an op-amp's pins in words
}

void add_cautions(Candidate& c, const Spec& spec, int next_stage) {
  c.cautions.clear();
  if (auto hazard = hazard_caution(spec.split_supply ? 2 * spec.supply_hi_v : spec.supply_hi_v); !hazard.empty())
    c.cautions.push_back(hazard);
  // A split-supply op-amp stage's output is DC-coupled: the load takes its offset.
  if (c.topology && c.topology->supply_form() == stages::SupplyForm::split && !c.worst.v_out.empty) {
    const double dc = std::max(std::abs(c.worst.v_out.min), std::abs(c.worst.v_out.max));
    if (dc > 10e-3)
      c.cautions.push_back(fmt::format(
          "the output is DC-coupled: the load takes up to {} DC (the offset and the bias current through the "
          "resistors, times the DC gain); a smaller RB, or a capacitor in series with the load, takes it away",
          units::format_value(dc, units::Unit::volt)));
  }
  if (spec.split_supply && c.topology && c.topology->supply_form() == stages::SupplyForm::single)
    c.cautions.push_back(
        fmt::format("a single-rail stage on the split supply: it takes the + rail (+{}) and ground; "
                    "the - rail is not wired to it",
                    units::format_value(spec.supply_hi_v, units::Unit::volt)));
  std::vector<std::string> unrated;
  for (const auto& rp : c.parts) {
    const std::string part = fmt::format("{} ({})", rp.designator, rp.role);
    if (rp.polarised)
      c.cautions.push_back(polarised_caution(
          part, rp.plus_net.empty() ? "higher-voltage side" : describe_net(c, rp.plus_net, next_stage)));
    if (rp.rating <= 0) unrated.push_back(rp.designator);
  }
  if (!unrated.empty()) c.cautions.push_back(unrated_caution(unrated));
  // The transistors: what a record does not rate was not checked.
  const Worst& w = c.worst;
  auto unrated_device = [&](const devices::DeviceRecord& d, const Range& v, const Range& rev, const Range& pw) {
    const devices::Ratings& r = d.ratings;
    std::vector<std::string> missing;
    const bool jfet = devices::is_jfet(d.kind), opamp = d.kind == devices::DeviceKind::opamp;
    if (!r.v_max_v) missing.push_back(opamp ? "absolute maximum supply" : jfet ? "VDS(max)" : "VCEO");
    if (!r.v_rev_max_v)
      missing.push_back(opamp ? "differential input rating" : jfet ? "gate-source reverse voltage" : "VEBO");
    if (!r.p_max_w) missing.push_back(opamp ? "package dissipation" : "dissipation");
    if (missing.empty()) return;
    std::string list;
    for (std::size_t i = 0; i < missing.size(); ++i)
      list += (i == 0 ? "" : i + 1 == missing.size() ? " and " : ", ") + missing[i];
    c.cautions.push_back(fmt::format(
        "the record of {} states no {}: not checked; it must take {:.3g} V{}{}{} (compare with its datasheet, and "
        "add the ratings with `devices add --replace`)",
        d.name, list,
        !v.empty ? v.max
        : opamp  ? supply_span(spec, spec.supply_hi_v)
                 : spec.supply_hi_v,
        opamp ? " between its supply pins" : "",
        rev.empty || rev.max < 0.05 ? ""
                                    : fmt::format(", {:.3g} V {}", rev.max, opamp ? "between its inputs" : "reverse"),
        pw.empty ? "" : fmt::format(" and dissipate {:.3g} mW", 1e3 * pw.max)));
  };
  unrated_device(c.device, w.device_v, w.device_rev, w.device_p);
  if (c.device2) unrated_device(*c.device2, w.device2_v, Range{}, w.device2_p);
}

namespace {

// A chain's builds: each stage its own piece and parts, one supply and temperature for all.
double monte_carlo_chain(const Candidate& c, const Spec& spec) {
  const std::size_t n = c.stages.size();
  std::vector<StageSpread> spreads;
  std::vector<std::vector<StagePiece>> pieces;
  for (std::size_t k = 0; k < n; ++k) {
    spreads.push_back(spread_of(c.stages[k]));
    pieces.push_back(spreads.back().samples(static_cast<std::size_t>(spec.mc_samples), spec.seed + 7919 * k));
  }
  std::mt19937_64 rng(spec.seed ^ 0x9e3779b97f4a7c15ULL);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  const double t_lo = spec.temp_c ? spec.temp_c->first : spec.temp_nominal_c();
  const double t_hi = spec.temp_c ? spec.temp_c->second : spec.temp_nominal_c();
  // The exact solver's gain over the fast chain's at nominal: the same correction the
  // ranking applies.
  std::vector<stages::ChainStage> list = chain_stages(c);
  const auto nominal = stages::evaluate_chain(list, c.conditions);
  const double ratio = nominal.whole.gain != 0 ? c.nominal.gain / nominal.whole.gain : 1.0;
  int good = 0;
  for (std::size_t i = 0; i < static_cast<std::size_t>(spec.mc_samples); ++i) {
    const double supply = spec.supply_lo_v + (spec.supply_hi_v - spec.supply_lo_v) * u(rng);
    const double temp = t_lo + (t_hi - t_lo) * u(rng);
    for (std::size_t k = 0; k < n; ++k) {
      const Candidate& s = c.stages[k];
      list[k].q = make_transistor(spreads[k], pieces[k][i], temp);
      list[k].values = s.values;
      for (const auto& rp : s.parts) {
        const std::size_t r = s.topology->role_index(rp.role);
        list[k].values[r] = rp.combo.lo + (rp.combo.hi - rp.combo.lo) * u(rng);
      }
    }
    auto p = stages::evaluate_chain(list, conditions(spec, supply, temp)).whole;
    p.gain *= ratio;
    if (violation(spec, p).empty() && gain_ok(spec, p.gain)) ++good;
  }
  return static_cast<double>(good) / static_cast<double>(spec.mc_samples);
}

}  // namespace

double monte_carlo(const Candidate& c, const Spec& spec) {
  if (spec.mc_samples <= 0) return 0;
  if (c.is_chain()) return monte_carlo_chain(c, spec);
  const auto& t = *c.topology;
  const StageSpread spread = spread_of(c);
  const auto pieces = spread.samples(static_cast<std::size_t>(spec.mc_samples), spec.seed);
  std::mt19937_64 rng(spec.seed ^ 0x9e3779b97f4a7c15ULL);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  const double t_lo = spec.temp_c ? spec.temp_c->first : spec.temp_nominal_c();
  const double t_hi = spec.temp_c ? spec.temp_c->second : spec.temp_nominal_c();
  int good = 0;
  for (const auto& f : pieces) {
    // Parts uniform within their bounds (a flat distribution over the tolerance band).
    stages::Values v = c.values;
    for (const auto& rp : c.parts) {
      const std::size_t i = t.role_index(rp.role);
      v[i] = rp.combo.lo + (rp.combo.hi - rp.combo.lo) * u(rng);
    }
    const double supply = spec.supply_lo_v + (spec.supply_hi_v - spec.supply_lo_v) * u(rng);
    const double temp = t_lo + (t_hi - t_lo) * u(rng);
    const auto p = t.evaluate(v, make_transistor(spread, f, temp), conditions(spec, supply, temp));
    if (violation(spec, p).empty() && gain_ok(spec, p.gain)) ++good;
  }
  return static_cast<double>(good) / static_cast<double>(pieces.size());
}

}  // namespace detail

stages::Transistor make_transistor(const devices::DeviceSpread& s, const devices::PieceFigures& f, double celsius) {
  stages::Transistor q;
  q.kind = s.record().kind;
  if (q.kind == devices::DeviceKind::opamp)
    q.opamp = s.opamp(f, celsius);
  else if (devices::is_jfet(q.kind))
    q.jfet = s.jfet(f, celsius);
  else
    q.bjt = s.bjt(f, celsius);
  return q;
}

StageSpread spread_of(const Candidate& c) {
  devices::DeviceSpread first =
      c.piece ? devices::DeviceSpread(c.device, *c.piece) : devices::DeviceSpread(c.device, {c.spread_model});
  if (!c.device2) return StageSpread(std::move(first));
  return StageSpread(std::move(first), devices::DeviceSpread(*c.device2, {c.spread_model}));
}

std::string detail::finish_stage(Candidate& c, const Spec& spec) {
  long n = 0;
  c.spread_model = spec.spread;
  const StageSpread spread = spread_of(c);
  c.conditions = detail::conditions(spec, spec.supply_nominal_v(), spec.temp_nominal_c());
  c.nominal_device = make_transistor(spread, spread.nominal(), spec.temp_nominal_c());
  c.nominal = c.topology->evaluate(c.values, c.nominal_device, c.conditions, stages::Detail::full);
  c.error_nominal = std::abs(c.nominal.gain) / spec.gain - 1.0;
  if (std::string v = detail::evaluate_worst(c, spec, n, Depth::full); !v.empty()) return v;
  if (std::string v = detail::verify_polarity(c, spec); !v.empty()) return v;
  c.score = detail::score_of(c, spec);
  detail::add_cautions(c, spec);
  if (std::string v = detail::assess_loop(c, spec); !v.empty()) return v;
  return {};
}

void evaluate_candidate(Candidate& c, const Spec& spec) {
  // A constraint that no longer holds (the device list changed) is said, not hidden.
  if (c.is_chain())
    for (auto& s : c.stages) s.spread_model = spec.spread;
  const std::string broken = c.is_chain() ? detail::finish_chain(c, spec) : detail::finish_stage(c, spec);
  if (!broken.empty()) {
    c.cautions.insert(c.cautions.begin(), fmt::format("this {} no longer holds at every corner with today's device "
                                                      "list ({}); design it again before building it",
                                                      c.is_chain() ? "chain" : "design", broken));
    return;
  }
  c.yield = detail::monte_carlo(c, spec);
}

}  // namespace shelfstage::synth
