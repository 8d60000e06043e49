// The search: for every topology and stocked device (or measured piece), the topology's
// design equations propose resistor sets on values the shelf can make; capacitors are
// sized for the band; every candidate draws on one quantity pool for all its copies;
// survivors are evaluated at the corners, ranked, and the best get a Monte Carlo yield.
// When nothing fits, the diagnosis (diagnose.cpp) names the constraint that binds and what to buy.
#include "shelfstage/synth/design.hpp"

#include <algorithm>
#include <cctype>
#include <functional>
#include <atomic>
#include <chrono>
#include <cmath>
#include <fmt/format.h>
#include <limits>
#include <map>
#include <mutex>
#include <optional>
#include <set>
#include <span>
#include <thread>
#include <tuple>
#include <unordered_map>

#include "detail.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::synth {

namespace {

std::uint64_t fnv1a(const std::string& s) {
  std::uint64_t h = 1469598103934665603ULL;
  for (unsigned char ch : s) {
    h ^= ch;
    h *= 1099511628211ULL;
  }
  return h;
}

}  // namespace

// --- StageBuilder ----------------------------------------------------------------------

namespace {

// Capacitor choices repeat across proposals (the same RG, the same band): remembered by
// target, volts and whether an electrolytic may go there.
class CapacitorCache {
 public:
  const Combo* find(const Shelf& shelf, double target, double volts, bool allow_pol) {
    const auto key = static_cast<std::uint64_t>(std::llround(std::log(target) * 200.0)) * 1000003ULL +
                     static_cast<std::uint64_t>(std::llround(volts * 4.0)) * 2 + (allow_pol ? 1 : 0);
    std::lock_guard lock(mutex_);
    auto hit = caps_.find(key);
    if (hit == caps_.end()) hit = caps_.emplace(key, shelf.capacitor_at_least(target, volts, allow_pol)).first;
    return hit->second;
  }

 private:
  std::mutex mutex_;
  std::unordered_map<std::uint64_t, const Combo*> caps_;
};

// The best and least gains, swing and input impedance the stages reach (SearchStats): of a
// stage in its active region; swing and Zin count only for stages with the gain asked for.
void note_reach(SearchStats& stats, const Spec& spec, const stages::Performance& p) {
  if (!p.valid || !p.active) return;
  stats.best_gain = std::max(stats.best_gain, std::abs(p.gain));
  stats.least_gain = std::min(stats.least_gain, std::abs(p.gain));
  if (detail::gain_ok(spec, p.gain)) {
    stats.gain_met = true;
    stats.best_swing = std::max(stats.best_swing, p.swing_peak_v);
    stats.best_zin = std::max(stats.best_zin, p.zin_ohm);
  }
}

// Whether a stage's figures keep the request's constraints and gain window (the band let go
// when band_later: ideal capacitors do not tell it); otherwise counts the reason in stats.
bool meets_request(const Spec& spec, const stages::Performance& p, SearchStats& stats, bool band_later) {
  note_reach(stats, spec, p);
  const std::string v = detail::violation(spec, p);
  if (!v.empty() && !(band_later && v == "band")) {
    ++stats.failures[v];
    return false;
  }
  if (!detail::gain_ok(spec, p.gain)) {
    ++stats.failures["gain"];
    return false;
  }
  return true;
}

// The shelf's combos for the proposed resistors; capacitors zeroed until they are sized.
// False when the shelf cannot make a value.
bool fit_resistors(const Shelf& shelf, std::span<const stages::Role> roles, const stages::Values& proposal,
                   StageBuilder::Draft& d) {
  for (std::size_t i = 0; i < roles.size(); ++i) {
    if (roles[i].kind == 'C') d.values[i] = 0;
    if (roles[i].kind != 'R' || !(proposal[i] > 0)) continue;
    d.combos[i] = shelf.resistor(proposal[i]);
    if (!d.combos[i]) return false;
  }
  return true;
}

// The nets a builder's drafts put + leads on (a handful per topology), by a byte each
// (Draft::plus): 1-based indices, 0 for none.
class NetNames {
 public:
  std::uint8_t index(std::string_view net) {
    static_assert(stages::kMaxRoles * 2 < 255);
    std::lock_guard lock(mutex_);
    for (std::size_t i = 0; i < names_.size(); ++i)
      if (names_[i] == net) return static_cast<std::uint8_t>(i + 1);
    // (A stage has a few dozen nets at most: the byte never runs out.)
    names_.push_back(net);
    return static_cast<std::uint8_t>(names_.size());
  }
  std::string_view name(std::uint8_t i) const {
    std::lock_guard lock(mutex_);
    return i == 0 ? std::string_view() : names_[i - 1u];
  }

 private:
  mutable std::mutex mutex_;
  std::vector<std::string_view> names_;  // (views of the topologies' own net names)
};

// What sizing a stage's capacitors reads: their targets, the stress pass at the highest
// supply (the DC each holds), the signal peak on top, and where the combos come from.
struct CapacitorSizing {
  const stages::Topology& topology;
  const stages::Values& targets;
  const stages::Performance& pre;
  double peak;
  const Shelf& shelf;
  CapacitorCache& cache;
  NetNames& nets;
};

// Each capacitor from the shelf: at least its target, rated for its DC and the peak. When the
// shelf has none, what was needed (SearchStats::capacitor_need); empty when every one fits.
std::string fit_capacitors(const CapacitorSizing& cs, StageBuilder::Draft& d) {
  const auto roles = cs.topology.roles();
  for (std::size_t i = 0; i < roles.size(); ++i) {
    if (roles[i].kind != 'C' || !(cs.targets[i] > 0)) continue;
    double dc = 0;
    std::string_view plus;
    for (const auto& st : cs.pre.stress)
      if (st.role == i) {
        dc = st.dc_v;
        plus = st.plus_net;
      }
    // An electrolytic only where it sits on a DC bias (common practice: a few tenths of a
    // volt forward at least; the in-band signal across a coupling or bypass capacitor is
    // small). The corner pass then checks it is never reversed.
    const bool allow_pol = roles[i].polar_ok && dc >= 0.3;
    const Combo* combo = cs.cache.find(cs.shelf, cs.targets[i], dc + cs.peak, allow_pol);
    if (!combo)
      return fmt::format("{} of {} needs at least {} {}rated above {:.3g} V", roles[i].name, cs.topology.name(),
                         units::format_value(cs.targets[i], units::Unit::farad), allow_pol ? "" : "non-polarised ",
                         1.25 * (dc + cs.peak));
    d.combos[i] = combo;
    d.values[i] = combo->nominal;
    if (combo->polarised) d.plus[i] = cs.nets.index(plus);
  }
  return {};
}

// A draft's pieces (the transistor and every combo's) and the pieces to buy for every copy
// (the shortfall, and every copy of a part that is only a purchase).
void count_pieces(StageBuilder::Draft& d, const Shelf& shelf, int copies, int short_by) {
  d.pieces = 1;
  d.purchases = short_by;
  for (const Combo* cb : d.combos) {
    if (!cb) continue;
    d.pieces += cb->count;
    for (std::size_t k = 0; k < cb->count; ++k)
      if (shelf.groups()[cb->group[k]].purchase) d.purchases += copies;
  }
}

}  // namespace

struct StageBuilder::Cache {
  CapacitorCache capacitors;
  NetNames nets;
};

StageBuilder::StageBuilder(const Spec& spec, const Shelf& shelf, const stages::Topology& topology,
                           const devices::DeviceRecord& device, const devices::MeasuredPiece* piece,
                           int device_available, bool probe, const devices::DeviceRecord* device2,
                           int device2_available)
    : spec_(spec),
      shelf_(shelf),
      topology_(topology),
      device_(device),
      piece_(piece),
      device_available_(device_available),
      probe_(probe),
      device2_(device2),
      device2_available_(device2_available),
      spread_(piece ? devices::DeviceSpread(device, *piece) : devices::DeviceSpread(device, {spec.spread}),
              device2 ? std::optional(devices::DeviceSpread(*device2, {spec.spread})) : std::nullopt),
      cache_(std::make_unique<Cache>()) {
  const double t_nom = spec.temp_nominal_c();
  q_ = make_transistor(spread_, spread_.nominal(), t_nom);
  for (const auto& f : spread_.corners()) corner_devices_.push_back(make_transistor(spread_, f, t_nom));
  cond_ = detail::conditions(spec, spec.supply_nominal_v(), t_nom);
  cond_hi_ = detail::conditions(spec, spec.supply_hi_v, t_nom);
  // The screening passes work out the distortion only when the request bounds it; the quick
  // estimate and the capacitors' stress never need it.
  screen_ = cond_;
  screen_.distortion = spec.swing_vpp.has_value();
  cond_hi_.distortion = false;
  // The quick estimate reads the gain alone: no distortion, and no band's edges (no stage's
  // gain, bias or region depends on them, only its losses there and an op-amp stage's
  // slew-limited swing, which it leaves out).
  gain_only_ = cond_;
  gain_only_.distortion = false;
  gain_only_.band_lo_hz = gain_only_.band_hi_hz = 0;
  // The first screen keeps the band (an op-amp's swing is checked there) and stops an
  // evaluation at the request's floors (a probe, which reports the gains the stages reach,
  // takes every figure whole).
  first_ = cond_;
  first_.distortion = false;
  if (!probe) detail::set_screen_floors(first_, spec);
}

StageBuilder::~StageBuilder() = default;

stages::Goal StageBuilder::goal() const {
  stages::Goal g;
  g.gain = spec_.gain;
  g.gain_lo = spec_.gain * (1.0 - spec_.gain_tol);
  g.zin_min_ohm = spec_.zin_min_ohm;
  g.swing_peak_v = detail::least_swing_peak(spec_);
  g.swing_credit = 1.0 - detail::kModelMargin.swing;  // (violation())
  g.max_current_a = spec_.max_current_a.value_or(0);
  g.f_low_hz = spec_.f_low_target_hz();
  g.probe = probe_;
  g.breadth = spec_.search_breadth;
  return g;
}

bool StageBuilder::complete(const stages::Values& resistors, Candidate& out, SearchStats& stats) const {
  Draft d;
  if (!draft(resistors, d, stats)) return false;
  out = candidate(d);
  return true;
}

bool StageBuilder::draft(const stages::Values& proposal, Draft& out, SearchStats& stats, bool defer_screen) const {
  const auto& t = topology_;
  const auto roles = t.roles();
  // A light draft first: values and the combos that make them; a Candidate (strings,
  // device record, part list) only for a proposal that works at nominal.
  Draft d;
  d.values = proposal;
  if (!fit_resistors(shelf_, roles, proposal, d)) return false;
  // Capacitors: sized for the band, rated for the DC they hold at the highest supply.
  const stages::Values targets = t.capacitor_targets(d.values, q_, cond_, spec_.f_low_target_hz());
  stages::Values trial = d.values;
  for (std::size_t i = 0; i < roles.size(); ++i)
    if (roles[i].kind == 'C') trial[i] = targets[i];
  // Most proposals miss the gain window or a constraint already with ideal capacitors:
  // one evaluation, without the distortion (a power series, the costliest part of an
  // evaluation), settles them before any capacitor is looked up. Without it the swing is the
  // clipping point and the THD nil, so a stage that fails then fails with it as well.
  // On one supply the screen's conditions are the stress pass's (the highest supply, no
  // distortion): one evaluation with the parts' stress serves both.
  const bool one_supply = spec_.supply_lo_v == spec_.supply_hi_v;
  auto ideal = t.evaluate(trial, q_, first_, one_supply ? stages::Detail::stress : stages::Detail::core);
  ++stats.evaluations;
  if (!meets_request(spec_, ideal, stats, true)) return false;
  // The distortion is worked out once, by the nominal evaluation at the end, with the
  // capacitors fitted: the mid-band figures it screens (the swing, the THD, the current and
  // Zin) do not depend on the capacitors. A draft that stops before then for another reason
  // takes the distortion screen first, with the ideal capacitors, so that a stage failing
  // both is counted as failing the screen (the counts of screening first, SearchStats).
  auto fails_screen = [&] {
    if (!screen_.distortion) return false;
    ++stats.evaluations;
    return !meets_request(spec_, t.evaluate(trial, q_, screen_, stages::Detail::core), stats, true);
  };
  // `need`: a capacitor stop's (SearchStats::capacitor_need).
  auto stop = [&](const char* why, std::string need = {}) {
    if (fails_screen()) return false;
    ++stats.failures[why];
    if (!need.empty()) stats.capacitor_need = std::move(need);
    return false;
  };
  auto pre = one_supply ? std::move(ideal) : t.evaluate(trial, q_, cond_hi_, stages::Detail::stress);
  if (!one_supply) ++stats.evaluations;
  if (!pre.valid) return stop("bias");
  // A capacitor across part of the common leg holds its DC when the supply goes and reverses
  // the control junction by as much (detail::device_stress): past the device's reverse rating
  // at nominal already, no corner will pass it, so the draft stops here rather than taking a
  // family's place in the corner pass.
  if (const auto& vrev = device_.ratings.v_rev_max_v)
    for (const auto& st : pre.stress)
      if (st.role < roles.size() && roles[st.role].holds_leg && std::abs(st.dc_v) > kDeviceVoltageShare * *vrev)
        return stop("rating");
  if (std::string need = fit_capacitors(
          {t, targets, pre, detail::signal_peak(spec_, pre), shelf_, cache_->capacitors, cache_->nets}, d);
      !need.empty())
    return stop("capacitor", std::move(need));
  // One quantity pool: every role and every copy.
  const int short_by = shortfall(d.combos);
  if (short_by < 0) return stop("stock");
  // The first screen (at nominal) with the gain its input divider gives with the fitted input
  // capacitor (Topology::gain_with; every other capacitor is a short in its mid-band figures).
  // With no band and no distortion bound those are the nominal figures the request reads: no
  // second evaluation.
  stages::Performance& first = one_supply ? pre : ideal;
  first.gain = t.gain_with(d.values, screen_, first);
  double gain = first.gain;
  if (!screen_.distortion && !spec_.band_hz) {
    if (!meets_request(spec_, first, stats, false)) return false;
  } else if (defer_screen && detail::gain_ok(spec_, gain)) {
    // With a band or a distortion bound the rest of the screen (the band's losses with the
    // fitted capacitors, the distortion) is put off while that gain holds: Draft::
    // screen_pending, and what it counts is counted when it is taken (NOTES 7 in ranked.cpp).
    // A draft whose gain the fitted capacitor moves out of the window takes the whole screen
    // now, so that its stop is counted as the screen gives it.
    d.screen_pending = true;
  } else {
    const auto nominal = t.evaluate(d.values, q_, screen_, stages::Detail::core);
    ++stats.evaluations;
    if (!meets_request(spec_, nominal, stats, false)) return false;
    gain = nominal.gain;
  }
  d.error_nominal = std::abs(gain) / spec_.gain - 1.0;
  count_pieces(d, shelf_, spec_.copies, short_by);
  out = std::move(d);
  return true;
}

bool StageBuilder::settle_screen(Draft& d, SearchStats& stats) const {
  d.screen_pending = false;
  const auto p = topology_.evaluate(d.values, q_, screen_, stages::Detail::core);
  ++stats.evaluations;
  return meets_request(spec_, p, stats, false);
}

Candidate StageBuilder::candidate(const Draft& d) const {
  Candidate c;
  c.topology = &topology_;
  c.device = device_;
  if (device2_) c.device2 = *device2_;
  if (piece_) c.piece = *piece_;
  c.spread_model = spec_.spread;
  c.nominal_device = q_;
  c.conditions = cond_;
  c.values = d.values;
  c.nominal = topology_.evaluate(d.values, q_, screen_, stages::Detail::core);
  c.pieces = device2_ ? 2 : 1;
  for (std::size_t i = 0; i < topology_.roles().size(); ++i) {
    if (!d.combos[i]) continue;
    add_part(c, i, *d.combos[i]);
    if (d.combos[i]->polarised) c.parts.back().plus_net = std::string(cache_->nets.name(d.plus[i]));
    c.pieces += d.combos[i]->count;
  }
  c.purchases = d.purchases;
  c.error_nominal = d.error_nominal;
  return c;
}

double StageBuilder::corner_error(const Draft& d, std::size_t k, SearchStats& stats) const {
  const auto p = topology_.evaluate(d.values, corner_devices_[k], gain_only_);
  ++stats.evaluations;
  if (!p.valid || !p.active) return std::numeric_limits<double>::infinity();
  return std::abs(std::abs(p.gain) / spec_.gain - 1.0);
}

double StageBuilder::quick_from(const Draft& d, double worst_error) const {
  if (std::isinf(worst_error)) return 1e6;
  const double worst = std::max(std::abs(d.error_nominal), worst_error);
  return 100.0 * (0.5 * std::abs(d.error_nominal) + worst) + detail::kPiecePoints * d.pieces +
         spec_.purchase_points * d.purchases;
}

double StageBuilder::score_floor(const Draft& c) const {
  // The quick estimate with the nominal error as the worst: never above it (the worst over
  // the corners includes nothing below the nominal's error in this count, and the sums round
  // the same way).
  return quick_from(c, 0.0);
}

bool StageBuilder::assess(Candidate& c, SearchStats& stats) const {
  const std::string v = detail::evaluate_worst(c, spec_, stats.evaluations, detail::Depth::search);
  if (!v.empty()) {
    stats.note_corner_failure(v);
    return false;
  }
  c.nominal = topology_.evaluate(c.values, q_, cond_, stages::Detail::full);
  ++stats.evaluations;
  c.score = detail::score_of(c, spec_);
  detail::add_cautions(c, spec_);
  return true;
}

void StageBuilder::add_part(Candidate& c, std::size_t role, const Combo& combo) const {
  c.parts.push_back(detail::role_part(topology_, role, combo, shelf_));
}

RolePart detail::role_part(const stages::Topology& topology, std::size_t role, const Combo& combo,
                           const Shelf& shelf_) {
  const auto& r = topology.roles()[role];
  RolePart rp;
  rp.role = std::string(r.name);
  rp.designator = std::string(r.designator);
  rp.kind = r.kind;
  rp.combo = combo;
  for (std::size_t k = 0; k < combo.count; ++k) rp.values.push_back(shelf_.groups()[combo.group[k]].value);
  rp.tol = {1.0 - combo.lo / combo.nominal, combo.hi / combo.nominal - 1.0};
  rp.rating = combo.rating;
  rp.dielectric = shelf_.groups()[combo.group[0]].dielectric;
  rp.polarised = combo.polarised;
  return rp;
}

int StageBuilder::shortfall(const std::array<const Combo*, stages::kMaxRoles>& combos) const {
  if (device2_ && device2_->name == device_.name) {
    if (device_available_ < 2 * spec_.copies) return -1;  // Q1 and Q2 of one type
  } else if (device_available_ < spec_.copies || (device2_ && device2_available_ < spec_.copies)) {
    return -1;
  }
  return detail::parts_short(shelf_, combos, spec_.copies);
}

int detail::parts_short(const Shelf& shelf, std::span<const Combo* const> combos, int copies) {
  // At most 3 x kMaxRoles groups: a flat list beats a map here.
  std::array<std::pair<std::uint32_t, int>, 3 * stages::kMaxRoles> need{};
  std::size_t n = 0;
  for (const Combo* c : combos) {
    if (!c) continue;
    for (std::size_t k = 0; k < c->count; ++k) {
      std::size_t j = 0;
      while (j < n && need[j].first != c->group[k]) ++j;
      if (j == n) need[n++] = {c->group[k], 0};
      need[j].second += copies;
    }
  }
  int buy = 0;
  for (std::size_t j = 0; j < n; ++j) {
    const StockGroup& g = shelf.groups()[need[j].first];
    if (g.available >= need[j].second) continue;
    if (!g.buyable) return -1;
    buy += need[j].second - g.available;
  }
  return buy;
}

void SearchStats::merge(const SearchStats& o) {
  for (const auto& [k, v] : o.failures) failures[k] += v;
  for (const auto& [k, v] : o.corner_failures) corner_failures[k] += v;
  for (const auto& [k, v] : o.corner_examples) corner_examples.emplace(k, v);
  best_gain = std::max(best_gain, o.best_gain);
  least_gain = std::min(least_gain, o.least_gain);
  gain_met = gain_met || o.gain_met;
  best_swing = std::max(best_swing, o.best_swing);
  best_zin = std::max(best_zin, o.best_zin);
  if (!o.capacitor_need.empty()) capacitor_need = o.capacitor_need;
  past_rating += o.past_rating;
  if (past_rating_example.empty()) past_rating_example = o.past_rating_example;
  proposals += o.proposals;
  evaluations += o.evaluations;
}

namespace detail {

std::map<std::string, int> stocked_units(const Inventory& inv) {
  // Device names compare without regard to case, as the database keeps them unique; the
  // map keeps each line's own spelling, as the jobs look it up.
  auto same = [](std::string_view a, std::string_view b) {
    return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
             return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
           });
  };
  std::map<std::string, int> out;
  for (const auto& p : inv.parts) {
    if (store::is_passive(p.kind)) continue;
    const auto rec =
        std::find_if(inv.devices.begin(), inv.devices.end(), [&](const auto& d) { return same(d.name, p.device); });
    const int units =
        rec == inv.devices.end() ? std::max(0, p.available()) : devices::channel_units(*rec, p.available());
    int& n = out[p.device];
    n = static_cast<int>(std::min<long long>(std::numeric_limits<int>::max(), static_cast<long long>(n) + units));
  }
  return out;
}

std::map<std::string, int> device_units_needed(const Candidate& c, int copies) {
  std::map<std::string, int> out;
  if (c.is_chain()) {
    for (const Candidate& s : c.stages)
      for (const auto& [name, n] : device_units_needed(s, copies)) out[name] += n;
    return out;
  }
  out[c.device.name] += copies;
  if (c.device2) out[c.device2->name] += copies;
  return out;
}

std::vector<Job> make_jobs(const Spec& spec, const Inventory& inv) {
  // Device units on the shelf, by device name: pieces of a transistor, channels of an op-amp.
  std::map<std::string, int> stocked = stocked_units(inv);
  for (const auto& name : spec.devices) {
    const auto named =
        std::find_if(inv.devices.begin(), inv.devices.end(), [&](const auto& d) { return d.name == name; });
    if (named == inv.devices.end())
      throw InputError(fmt::format("device '{}' is not in the device list (see `shelfstage devices list`)", name));
  }
  for (const auto& name : spec.topologies)
    if (!stages::find_topology(name)) {
      std::string all;
      for (const auto* t : stages::registry()) all += (all.empty() ? "" : ", ") + std::string(t->name());
      throw InputError(fmt::format("topology '{}' is not one of {}", name, all));
    }
  const devices::MeasuredPiece* piece = nullptr;
  if (spec.piece) {
    // Labels compare without regard to case, as the database keeps them unique.
    auto same = [](std::string_view a, std::string_view b) {
      return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
               return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
             });
    };
    for (const auto& p : inv.pieces)
      if (same(p.label, *spec.piece)) piece = &p;
    if (!piece) throw InputError(fmt::format("piece '{}' is not among the measured pieces", *spec.piece));
  }
  std::vector<Job> jobs;
  for (const auto* t : stages::registry()) {
    if (!detail::topology_wanted(spec, *t)) continue;
    // A split supply's stages only on a split supply; single-rail stages on either (on a
    // split supply they take the + rail and ground).
    if (t->supply_form() == stages::SupplyForm::split && !spec.split_supply) continue;
    for (const auto& d : inv.devices) {
      if (!t->accepts(d.kind)) continue;
      if (!spec.devices.empty() && std::find(spec.devices.begin(), spec.devices.end(), d.name) == spec.devices.end())
        continue;
      if (piece && piece->device != d.name) continue;
      Job j;
      j.topology = t;
      j.device = &d;
      j.piece = piece;
      j.device_available = piece ? 1 : (stocked.count(d.name) ? stocked[d.name] : 0);
      if (t->second_device() == stages::SecondDevice::none) {
        jobs.push_back(j);
        continue;
      }
      // A pair: every stocked bipolar type that fits as Q2 (and the device filter allows).
      for (const auto& d2 : inv.devices) {
        if (!t->accepts_second(d.kind, d2.kind) || !stocked.count(d2.name)) continue;
        if (!spec.devices.empty() && std::find(spec.devices.begin(), spec.devices.end(), d2.name) == spec.devices.end())
          continue;
        j.device2 = &d2;
        j.device2_available = stocked[d2.name];
        jobs.push_back(j);
      }
    }
  }
  return jobs;
}

}  // namespace detail

// The recipe text and the stock lines of each part: only for candidates that are shown.
namespace {
std::string device2_name(const Candidate& c) { return c.device2 ? c.device2->name : std::string(); }
}  // namespace

bool is_variant(const Candidate& a, const Candidate& b) {
  if (a.is_chain() || b.is_chain()) {
    // Chains: the same stages in the same order, one resistor different in all.
    if (a.stages.size() != b.stages.size()) return false;
    int differ = 0;
    for (std::size_t k = 0; k < a.stages.size(); ++k) {
      const Candidate &x = a.stages[k], &y = b.stages[k];
      if (x.topology != y.topology || x.device.name != y.device.name || device2_name(x) != device2_name(y))
        return false;
      const auto roles = x.topology->roles();
      for (std::size_t i = 0; i < roles.size(); ++i)
        if (roles[i].kind == 'R' && std::abs(x.values[i] - y.values[i]) > 1e-9 * std::max(x.values[i], y.values[i]))
          ++differ;
    }
    return differ <= 1;
  }
  if (a.topology != b.topology || a.device.name != b.device.name || device2_name(a) != device2_name(b)) return false;
  if ((a.piece ? a.piece->label : "") != (b.piece ? b.piece->label : "")) return false;
  const auto roles = a.topology->roles();
  int differ = 0;
  for (std::size_t i = 0; i < roles.size(); ++i)
    if (roles[i].kind == 'R' && std::abs(a.values[i] - b.values[i]) > 1e-9 * std::max(a.values[i], b.values[i]))
      ++differ;
  return differ <= 1;
}

void detail::finalize(Candidate& c, const Shelf& shelf) {
  for (auto& rp : c.parts) {
    rp.recipe = shelf.recipe(rp.combo);
    rp.lines.clear();
    for (std::size_t k = 0; k < rp.combo.count; ++k) rp.lines.push_back(shelf.groups()[rp.combo.group[k]].lines);
  }
}

std::string candidate_id(const Candidate& c, int copies) {
  if (c.is_chain()) {
    std::string key = fmt::format("chain|{}", copies);
    for (const auto& s : c.stages) key += "|" + candidate_id(s, copies);
    return fmt::format("c{:08x}", static_cast<std::uint32_t>(fnv1a(key) ^ (fnv1a(key) >> 32)));
  }
  std::string key =
      fmt::format("{}|{}|{}|{}", c.topology->name(), c.device.name, c.piece ? c.piece->label : "", copies);
  if (c.device2) key += "|Q2=" + c.device2->name;  // one-device ids stay as they were
  // The same parts on a negative rail are another build (the stage mirrored about ground,
  // every polarised part turned): another id; a positive rail's ids stay as they were.
  if (c.conditions.negative_rail) key += "|rail=-";
  if (c.conditions.split_supply) key += "|rail=split";
  for (const auto& rp : c.parts) {
    key += "|" + rp.role + "=";
    for (std::size_t k = 0; k < rp.values.size(); ++k)
      key += fmt::format("{:.6g}:{},", rp.values[k],
                         k < rp.lines.size() && !rp.lines[k].empty() ? rp.lines[k].front() : 0);
  }
  return fmt::format("s{:08x}", static_cast<std::uint32_t>(fnv1a(key) ^ (fnv1a(key) >> 32)));
}

namespace {

// The order designs are listed in: by score, then fewer pieces, then the lesser supply
// current at nominal (of two designs alike in every scored figure, the one that drains the
// battery less and warms less: a reference divider of 100k/100k before one of 10k/10k), then
// id. Scores are compared to a millionth of a point and currents to a nanoampere: the
// operating points behind them converge to about 1e-11 V from wherever Newton starts (a
// thread's last solution), and two designs scoring the same would otherwise swap places from
// run to run.
bool listed_before(const Candidate& a, const Candidate& b) {
  return std::make_tuple(std::llround(a.score * 1e6), a.pieces, std::llround(a.nominal.supply_current_a * 1e9), a.id) <
         std::make_tuple(std::llround(b.score * 1e6), b.pieces, std::llround(b.nominal.supply_current_a * 1e9), b.id);
}

// The best K distinct designs of a ranked list (one-resistor variants of a better one are
// left out), each finished as it is shown (the full worst case, the exact solver's DC across
// every capacitor): one that fails there gives its place to the next. Best first.
//
// The finishing runs on every core, a batch ahead, and the list is then taken in rank order
// exactly as one at a time would take it. A batch is the next candidates not yet finished
// that nothing shown makes variants of, passing over (for now) those that are variants of one
// in the batch: that one is most often shown and the variant's finishing would be lost; when
// it is not, the variant is finished in a later batch and the taking stops there until then.
// (A batch that stopped at the first such variant was one candidate long whenever the best
// designs were variants of each other, as an op-amp stage's ten best are: the cores took
// turns.) What a finishing found is kept by candidate, whichever batch did it.
//
// ranked(k, pass_over) is the k-th of the ranked list; pass_over tells it the candidates this
// passes over whatever their place (variants of those shown), which it need not hand out.
using Ranked = std::function<Candidate*(std::size_t, const detail::RankedSearch::PassOver&)>;
std::vector<Candidate> finish_top(const Ranked& ranked, const Spec& spec, const Shelf& shelf,
                                  std::vector<std::string>& failures) {
  std::vector<Candidate> shown;
  const detail::RankedSearch::PassOver variant_of_shown = [&](const Candidate& c) {
    return std::any_of(shown.begin(), shown.end(), [&](const Candidate& kept) { return is_variant(kept, c); });
  };
  struct Finished {
    std::string broken;
    std::exception_ptr thrown;
  };
  std::map<const Candidate*, Finished> finished;
  const std::size_t cores = std::max(1u, std::thread::hardware_concurrency());
  const int kUnstableLimit = 3 * spec.top + 12;
  int unstable = 0;
  std::size_t next = 0;  // the first place not yet taken
  bool more = true;
  while (static_cast<int>(shown.size()) < spec.top && more) {
    const std::size_t want = static_cast<std::size_t>(spec.top) - shown.size();
    std::vector<Candidate*> batch;
    // The look past a batch's variants stops within a few batches' length: each candidate
    // looked at is assessed to be handed out, and a variant of one that is then shown would
    // have been passed over unassessed.
    const std::size_t batch_size = std::max(want, cores);
    for (std::size_t k = next; batch.size() < batch_size && k < next + 4 * batch_size; ++k) {
      Candidate* c = ranked(k, variant_of_shown);
      if (!c) break;
      if (finished.count(c) || variant_of_shown(*c)) continue;
      if (std::any_of(batch.begin(), batch.end(), [&](const Candidate* x) { return is_variant(*x, *c); })) continue;
      batch.push_back(c);
    }
    std::vector<Finished> done(batch.size());
    detail::parallel_for(batch.size(), [&](std::size_t b) {
      Candidate& c = *batch[b];
      try {
        if (!c.is_chain()) detail::finalize(c, shelf);
        // A loop short of phase margin gets a capacitor across its feedback resistor, if the
        // shelf has one that brings it up; after many designs none could help, the rest with
        // a loop of that kind are passed over (each costs a dozen loop sweeps, and designs
        // further down the list are no better placed).
        if (!c.is_chain() && c.topology->feedback_loop() && unstable >= kUnstableLimit)
          done[b].broken = "stability: passed over (the designs before it with a loop all fell short of the margin)";
        else
          done[b].broken = c.is_chain() ? detail::finish_chain(c, spec) : detail::finish_with_margin(c, spec, shelf);
      } catch (...) {
        done[b].thrown = std::current_exception();
      }
    });
    for (std::size_t b = 0; b < batch.size(); ++b) finished.emplace(batch[b], std::move(done[b]));
    // Taken in rank order up to the first candidate not yet finished.
    for (; static_cast<int>(shown.size()) < spec.top; ++next) {
      Candidate* c = ranked(next, variant_of_shown);
      if (!c) {
        more = false;
        break;
      }
      if (variant_of_shown(*c)) continue;
      const auto it = finished.find(c);
      if (it == finished.end()) break;
      if (it->second.thrown) std::rethrow_exception(it->second.thrown);
      if (!it->second.broken.empty()) {
        if (it->second.broken.starts_with("stability")) ++unstable;
        failures.push_back(it->second.broken);
        continue;
      }
      c->id = candidate_id(*c, spec.copies);
      shown.push_back(std::move(*c));
    }
  }
  std::stable_sort(shown.begin(), shown.end(), listed_before);
  return shown;
}

// Seconds since t, and t moved to now.
double lap(std::chrono::steady_clock::time_point& t) {
  const auto now = std::chrono::steady_clock::now();
  const double s = std::chrono::duration<double>(now - t).count();
  t = now;
  return s;
}

// Singles first, finished as shown; chains when none of those holds the gain window at
// every corner (or when asked for), finished the same way; then the best of both.
std::vector<Candidate> search_designs(const detail::Run& run) {
  const Spec& spec = run.spec;
  std::vector<Candidate> out;
  auto t = std::chrono::steady_clock::now();
  // (Kept to the end: when nothing is listed, the diagnosis reads every stop it put off.)
  std::optional<detail::RankedSearch> kept;
  if (spec.stages_min <= 1) {
    // Single stages are assessed only as far as the list reaches (NOTES: the ranked search).
    detail::RankedSearch& singles = kept.emplace(spec, run.shelf, run.jobs);
    run.phases.propose += lap(t);
    if (run.progress)
      run.progress(static_cast<double>(run.jobs.size()), static_cast<double>(run.jobs.size()), "stages searched");
    std::vector<std::string> failures;
    out = finish_top(
        [&](std::size_t k, const detail::RankedSearch::PassOver& pass_over) {
          const auto id = singles.at(k, nullptr, pass_over);
          return id ? &singles.candidate(*id) : nullptr;
        },
        spec, run.shelf, failures);
    singles.tally(run.tally);
    for (const auto& f : failures) run.tally.note_corner_failure(f);
    run.phases.finish += lap(t);
  }
  const bool single_meets =
      std::any_of(out.begin(), out.end(), [&](const Candidate& c) { return c.error_worst <= spec.gain_tol; });
  if (spec.stages_max >= 2 && !spec.piece && !single_meets) {
    if (run.progress) run.progress(0, 1, "chains");
    // With the list full of single stages, a chain past the last of them is not shown: its
    // finishing (the full worst case, which only adds to the score: more points, every
    // piece's own directions) is spared, with a point of room.
    const double ceiling =
        static_cast<int>(out.size()) >= spec.top ? out.back().score : std::numeric_limits<double>::infinity();
    std::vector<Candidate> chains = detail::design_chains(spec, run.inv, run.shelf, run.tally, ceiling);
    std::erase_if(chains, [&](const Candidate& c) { return c.score > ceiling + 1.0; });
    std::vector<std::string> failures;
    const Ranked ranked_chains = [&](std::size_t k, const detail::RankedSearch::PassOver&) {
      return k < chains.size() ? &chains[k] : nullptr;
    };
    for (auto& c : finish_top(ranked_chains, spec, run.shelf, failures)) out.push_back(std::move(c));
    for (const auto& f : failures) run.tally.note_corner_failure(f);
    std::stable_sort(out.begin(), out.end(), listed_before);
    if (static_cast<int>(out.size()) > spec.top) out.resize(static_cast<std::size_t>(spec.top));
    if (run.progress) run.progress(1, 1, "chains");
    run.phases.chains += lap(t);
  }
  // Nothing listed: the diagnosis reads every stop (NOTES 7 in ranked.cpp).
  if (out.empty() && kept) kept->settle(run.tally);
  return out;
}

// The ranks, and each candidate's Monte Carlo yield (on every core: each candidate's builds
// are drawn from the request's seed alone, so the yields do not depend on the order).
void rank_and_yield(DesignResult& r, const detail::Run& run) {
  const std::size_t n = r.candidates.size();
  detail::parallel_for(n, [&](std::size_t i) {
    Candidate& c = r.candidates[i];
    c.rank = static_cast<int>(i) + 1;
    c.yield = detail::monte_carlo(c, run.spec);
  });
  r.evaluations += static_cast<long>(n) * run.spec.mc_samples;
  if (run.progress && n > 0) run.progress(static_cast<double>(n), static_cast<double>(n), "Monte Carlo");
}

}  // namespace

namespace detail {

DesignResult design_on(const Spec& spec, const Inventory& inv, const Shelf& shelf, const Progress& progress) {
  const auto start = std::chrono::steady_clock::now();
  DesignResult r;
  r.spec = spec;
  auto t = start;
  const std::vector<detail::Job> jobs = detail::make_jobs(spec, inv);
  SearchStats tally;
  const Run run{spec, inv, shelf, jobs, tally, progress, r.phases};
  r.candidates = search_designs(run);
  t = std::chrono::steady_clock::now();
  r.proposals = tally.proposals;
  r.evaluations = tally.evaluations;
  if (divider_reaches(spec))
    for (auto& c : r.candidates)
      c.cautions.insert(c.cautions.begin(),
                        fmt::format("a gain of {:.3g} ({:.1f} dB) is an attenuation: a divider of two resistors gives "
                                    "it without a transistor; a stage earns its place only by its input impedance or "
                                    "its drive into the load",
                                    spec.gain, units::to_db(spec.gain)));
  rank_and_yield(r, run);
  r.phases.yield = lap(t);
  if (r.candidates.empty()) diagnose(r.diagnosis, run);
  r.phases.diagnose = lap(t);
  r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return r;
}

}  // namespace detail

DesignResult design(const Spec& spec, const Inventory& inv, const Progress& progress) {
  validate(spec);
  const auto start = std::chrono::steady_clock::now();
  Shelf::Options so;
  so.combine = spec.combine;
  const Shelf shelf(inv.parts, so);
  const double built = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  DesignResult r = detail::design_on(spec, inv, shelf, progress);
  r.phases.shelf = built;
  r.seconds += built;
  return r;
}

}  // namespace shelfstage::synth
