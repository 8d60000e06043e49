// Chains of two or three stages, for requests no single stage meets: a gain beyond one
// device, an input impedance a BJT stage cannot give, a load too heavy for a gain stage.
//
// How the search goes (README "Chains"):
//  1. Plans: sequences of gain stages (A) and buffers (B): B-A, A-B, A-A, B-B, B-A-B, A-A-B,
//     B-A-A, A-A-A, within --stages and the request (a gain of about one plans buffers only).
//  2. Stage pools, from the load back: the last stage is designed into the load with the
//     requested swing; each earlier stage into the input impedance the stages after it
//     present (the median over each following topology's pool at nominal, and of the lowest
//     over its corners), for the peak it must pass on;
//     the first also for the source and the requested input impedance. Gain stages aim at
//     an equal share of the gain, within a wide window; buffers at just under one. Every
//     pool is an ordinary single-stage search on the one shared shelf.
//  3. A graph (Boost.Graph): every pooled stage is a vertex in its position; an edge joins a
//     stage to a stage of the next position when the second's input impedance is at least
//     twice the first's output impedance (common practice: Zout well under the next Zin, at
//     least a half) (N and P stages mix on the one rail). The edge carries the loading: the
//     first stage's gain evaluated into the second's input impedance.
//  4. Every path through the graph is a chain; its gain is the product along the path. Each
//     path's score is foreseen from its stages' pools (foresee: the path's gain with each
//     stage's worst-case spread as its pool found it). In that order, the paths are drawn on
//     one quantity pool (every stage, every copy, the transistors too), evaluated whole (each
//     stage into the next, fast), then at their corners stage by stage (each stage's worst
//     case in the conditions the chain puts it in; the chain's gain range is the product of
//     the stages' ranges, the pieces being independent), until the forecasts pass the score
//     of the kToExact-th best chain assessed (with room for the forecast's error); the best
//     are solved whole by the exact solver, which gives the figures shown.
#include <algorithm>
#include <boost/graph/adjacency_list.hpp>
#include <cmath>
#include <fmt/format.h>
#include <limits>
#include <map>
#include <optional>
#include <set>
#include <atomic>
#include <thread>

#include "detail.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/stages/exact.hpp"

namespace shelfstage::synth {

namespace detail {

namespace {

/// A gain stage or a buffer.
enum class Slot { gain, buffer };
using Plan = std::vector<Slot>;

/// Gain assumed for a buffer when sharing out the gain (a JFET follower into a high load
/// gives about 0.8-0.9, a BJT follower 0.95-0.99).
constexpr double kBufferGain = 0.9;
/// Pool sizes: distinct designs kept per stage search.
constexpr int kPoolTop = 8;
/// Chains carried from the graph to the corner pass, and from there to the exact solver.
constexpr std::size_t kToCorners = 60, kToExact = 12;
/// Paths whose last gain stage is redesigned for the exact gain left to it.
constexpr std::size_t kRefine = 6;
/// How far a chain's score may come out below its forecast (foresee) and still be worth its
/// corner pass: a share of the bar and points besides.
constexpr struct { double share, points; } kForesightRoom = {0.05, 3.0};

std::vector<Plan> plans_for(const Spec& spec) {
  using enum Slot;
  const std::vector<Plan> all = {{buffer, gain},       {gain, buffer},         {gain, gain},
                                 {buffer, buffer},     {buffer, gain, buffer}, {gain, gain, buffer},
                                 {buffer, gain, gain}, {gain, gain, gain}};
  std::vector<Plan> out;
  const bool unity = spec.gain <= 1.2;
  for (const auto& p : all) {
    const int n = static_cast<int>(p.size());
    if (n < std::max(2, spec.stages_min) || n > spec.stages_max) continue;
    const bool has_gain = std::find(p.begin(), p.end(), gain) != p.end();
    if (unity == has_gain) continue;
    out.push_back(p);
  }
  return out;
}

struct VertexProp {
  std::size_t index = 0;  ///< into the layer's pooled stages
  std::size_t layer = 0;
};
struct EdgeProp {
  double gain = 0;     ///< the tail stage's gain into the head stage's input impedance
  double loss_db = 0;  ///< its loss at the band edges (low plus high), into that impedance
};
using Graph = boost::adjacency_list<boost::vecS, boost::vecS, boost::directedS, VertexProp, EdgeProp>;

/// A chain found in the graph, before its corner pass.
struct Path {
  std::vector<const Candidate*> stages;
  double rank = 0;      ///< |gain error| and pieces, for the refinements' choice
  double foreseen = 0;  ///< the score foreseen from the stages' pools (foresee), for the corner pass
};

/// A stage's worst-case gain range as magnitudes, the lower end first; nullopt when it has
/// none or an end at zero.
std::optional<std::pair<double, double>> gain_ends(const Candidate& c) {
  const double a = std::abs(c.worst.gain.min), b = std::abs(c.worst.gain.max);
  if (c.worst.gain.empty || std::min(a, b) <= 0) return std::nullopt;
  return std::pair{std::min(a, b), std::max(a, b)};
}

/// The pieces a stage brings to a chain at position `pos`: its own, less its input capacitor
/// after the first stage (link() takes it away).
int pieces_in_chain(const Candidate& c, std::size_t pos) {
  const RolePart* cin = pos > 0 ? part_of(c, "CIN") : nullptr;
  return c.pieces - (cin ? static_cast<int>(cin->combo.count) : 0);
}

/// A chain's score foreseen before its corner pass: its gain along the path (each stage into
/// the next) with each stage's worst-case gain range in its pool as a share of the stage's
/// nominal gain there, the shares multiplied as the corner pass multiplies the stages' ranges
/// (the chain puts a stage in other conditions than its pool's, so this is a forecast, not a
/// bound); the pieces and the stage points as score_of and rescore count them.
double foresee(const std::vector<const Candidate*>& stages, double gain, const Spec& spec) {
  double lo = 1.0, hi = 1.0, thd = 0.0;
  int pieces = 0;
  for (const Candidate* c : stages) {
    const double g = std::abs(c->nominal.gain);
    if (const auto ends = gain_ends(*c); ends && g > 0) {
      lo *= ends->first / g;
      hi *= ends->second / g;
    }
    if (!c->worst.thd.empty) thd += c->worst.thd.max;
    pieces += c->pieces;
  }
  const double g = std::abs(gain) / spec.gain;
  const double nominal = std::abs(g - 1.0);
  const double worst = std::max({nominal, std::abs(g * lo - 1.0), std::abs(g * hi - 1.0)});
  return score_points(nominal, worst, pieces, thd, 0, spec) + stage_points(stages.size());
}

class ChainSearch {
 public:
  ChainSearch(const Spec& spec, const Inventory& inv, const Shelf& shelf, SearchStats& tally, double ceiling)
      : spec_(spec), inv_(inv), shelf_(shelf), tally_(tally), ceiling_(ceiling) {
    stocked_ = stocked_units(inv);
    // The links are judged at the frequency the capacitors are sized for (the band's low edge,
    // else 20 Hz): a stage's coupling into the next stage's real input impedance must still
    // pass it, band or no band.
    band_lo_ = spec.f_low_target_hz();
    if (spec.band_hz) band_hi_ = spec.band_hz->second;
  }

  std::vector<Candidate> run() {
    // Fewer stages first: when a chain of two holds the gain window at every corner, a chain
    // of three is not searched (it would need to be far better to pay for its stage).
    std::vector<Candidate>& out = found_;
    std::size_t depth = 0;
    for (const Plan& plan : plans_for(spec_)) {
      if (plan.size() != depth) {
        const bool met =
            std::any_of(out.begin(), out.end(), [&](const Candidate& c) { return c.error_worst <= spec_.gain_tol; });
        if (met) break;
        depth = plan.size();
      }
      for (auto& c : search_plan(plan)) out.push_back(std::move(c));
    }
    std::stable_sort(out.begin(), out.end(), [](const Candidate& a, const Candidate& b) { return a.score < b.score; });
    return std::move(out);
  }

 private:
  /// The request one position of a chain puts to a single stage.
  Spec stage_spec(const stages::Topology& t, std::size_t pos, double gain, double load, double peak) const {
    Spec s = spec_;
    s.topologies = {std::string(t.name())};
    s.piece.reset();
    s.gain = gain;
    s.gain_tol = t.is_buffer() ? 0.2 : 0.45;
    s.load_ohm = load;
    s.source_ohm = pos == 0 ? spec_.source_ohm : 0.0;
    s.zin_min_ohm = pos == 0 ? spec_.zin_min_ohm : 0.0;
    s.swing_vpp.reset();
    if (peak > 0) s.swing_vpp = 2.0 * peak;
    // Each stage flat across the band with its capacitors sized as for a single stage (the
    // coupling corners at a quarter of the lower edge); the graph keeps the chains whose
    // summed loss at the band edges stays within 1 dB.
    if (spec_.band_hz) s.band_hz = spec_.band_hz;
    // The chain's distortion adds up stage by stage (in phase, as the corner pass adds it): a
    // gain stage's pool ranks its stages by their distortion too, so that it does not fill
    // with stages that spend the whole bound alone and leave the others no room. (Buffers'
    // pools so ranked alone fill with stages that drive the next stage too hard: they are
    // ranked by score, and take as many again by distortion, design_pool.)
    if (spec_.swing_vpp && !t.is_buffer()) s.prefer = Spec::Prefer::distortion;
    s.top = kPoolTop;
    s.search_families = kPoolTop;
    // A pool keeps no two stages that are variants of each other (design_pool), so each family
    // goes to the corner pass by its best quick estimate alone: its variants (one resistor
    // apart, near-ties) would each take a corner pass to keep at most one of them. (Three per
    // family made pools assess nearly every chosen draft: hv-48v on the bench's hobby stock
    // 2.0 -> 1.0 s with one, the top chains' errors the same or lower on every bench stock.)
    s.search_variants = 1;
    s.search_breadth = 0.5;
    s.mc_samples = 0;
    s.stages_min = s.stages_max = 1;
    return s;
  }

  /// What one position of a plan asks of one topology.
  struct PoolRequest {
    const stages::Topology* topology = nullptr;
    std::size_t pos = 0;
    double gain = 0, load = 0, peak = 0;
    /// A refinement (see refinement()): this gain within spec.gain_tol / 2, this device, the
    /// input impedance at least zin, the whole shelf offered.
    bool exact = false;
    std::string device;
    std::string device2;  ///< a pair's Q2 (refinements)
    double zin = 0;
    std::string key() const {
      return fmt::format("{}|{}|{:.4g}|{:.3g}|{:.2g}|{}|{}|{}|{:.2g}", topology->name(), pos == 0, gain, load, peak,
                         exact, device, device2, zin);
    }
  };

  std::vector<Candidate> design_pool(const PoolRequest& r, SearchStats& stats) const {
    Spec s = stage_spec(*r.topology, r.pos, r.gain, r.load, r.peak);
    if (r.exact) {
      s.gain_tol = spec_.gain_tol / 2;
      s.devices = {r.device};
      if (!r.device2.empty()) s.devices.push_back(r.device2);
      s.zin_min_ohm = std::max(s.zin_min_ohm, r.zin);
      s.search_breadth = 0.5;
    }
    const std::vector<Job> jobs = make_jobs(s, inv_);
    RankedSearch found(s, shelf_, jobs);
    // The best of each device type first, then the rest by score: a type whose stages score
    // well alone (a high-voltage type's at low gain) must not crowd out the others, whose
    // stages may be the ones that make a chain. Stages are assessed only as far as this
    // takes them in rank order.
    std::vector<Candidate> kept;
    std::set<std::size_t> taken;
    auto take = [&](std::size_t id) {
      if (static_cast<int>(kept.size()) >= kPoolTop) return;
      const Candidate& c = found.candidate(id);
      if (std::any_of(kept.begin(), kept.end(), [&](const Candidate& k) { return is_variant(k, c); })) return;
      kept.push_back(c);
      taken.insert(id);
    };
    std::vector<std::size_t> bests;
    std::set<std::string> devices;
    for (const Job& j : jobs)
      if (devices.insert(j.device->name).second)
        if (const auto id = found.at(0, &j.device->name)) bests.push_back(*id);
    std::sort(bests.begin(), bests.end(), [&](std::size_t a, std::size_t b) { return found.before(a, b); });
    for (const std::size_t id : bests) take(id);
    const RankedSearch::PassOver variant_of_kept = [&](const Candidate& c) {
      return std::any_of(kept.begin(), kept.end(), [&](const Candidate& k) { return is_variant(k, c); });
    };
    for (std::size_t k = 0; static_cast<int>(kept.size()) < kPoolTop; ++k) {
      const auto id = found.at(k, nullptr, variant_of_kept);
      if (!id) break;
      if (!taken.count(*id)) take(*id);
    }
    found.tally(stats);
    // A buffer's pool, with a swing asked, takes as many stages again ranked by their
    // distortion: ranked by score alone, its stages were often ones no two of which hold the
    // chain's distortion bound together, so that a larger drawer made fewer chains (the bench's
    // buffer request on its random drawer listed 10 at 1,000 lines, 5 at 4,000, 4 at 10,000;
    // on its hobby drawer none) and ranked by distortion alone, ones that drive the next stage
    // too hard (stage_spec).
    if (r.topology->is_buffer() && spec_.swing_vpp && !r.exact) {
      Spec quiet = s;
      quiet.prefer = Spec::Prefer::distortion;
      RankedSearch by_distortion(quiet, shelf_, jobs);
      const std::size_t full = kept.size() + kPoolTop;
      for (std::size_t k = 0; kept.size() < full; ++k) {
        const auto id = by_distortion.at(k, nullptr, variant_of_kept);
        if (!id) break;
        const Candidate& c = by_distortion.candidate(*id);
        if (!variant_of_kept(c)) kept.push_back(c);
      }
      by_distortion.tally(stats);
    }
    std::stable_sort(kept.begin(), kept.end(),
                     [](const Candidate& a, const Candidate& b) { return a.score < b.score; });
    return kept;
  }

  /// The pools of the requests, designing those not yet designed (on every core).
  std::vector<const std::vector<Candidate>*> pools(const std::vector<PoolRequest>& requests) {
    std::vector<const PoolRequest*> todo;
    std::set<std::string> queued;
    for (const auto& r : requests)
      if (!pools_.count(r.key()) && queued.insert(r.key()).second) todo.push_back(&r);
    std::vector<std::vector<Candidate>> made(todo.size());
    std::vector<SearchStats> stats(todo.size());
    parallel_for(todo.size(), [&](std::size_t i) { made[i] = design_pool(*todo[i], stats[i]); });
    for (std::size_t i = 0; i < todo.size(); ++i) {
      tally_.proposals += stats[i].proposals;
      tally_.evaluations += stats[i].evaluations;
      pools_.emplace(todo[i]->key(), std::move(made[i]));
    }
    std::vector<const std::vector<Candidate>*> out;
    for (const auto& r : requests) out.push_back(&pools_.at(r.key()));
    return out;
  }

  /// The last stage's band-edge losses into the load (once per pooled stage: every path
  /// ending in it asks).
  double last_loss(const Candidate& c) {
    if (const auto it = last_losses_.find(&c); it != last_losses_.end()) return it->second;
    // (Here, in the graph's edges and in the refinements: small-signal figures alone.)
    stages::Conditions cc = stages::small_signal(c.conditions);
    cc.band_lo_hz = band_lo_;
    cc.band_hi_hz = band_hi_;
    const auto p = c.topology->evaluate(c.values, c.nominal_device, cc);
    ++tally_.evaluations;
    return last_losses_[&c] = p.loss_lo_db + p.loss_hi_db;
  }

  std::vector<const stages::Topology*> topologies(Slot slot) const {
    std::vector<const stages::Topology*> out;
    for (const auto* t : stages::registry()) {
      if (t->is_buffer() != (slot == Slot::buffer)) continue;
      if (!detail::topology_wanted(spec_, *t)) continue;
      out.push_back(t);
    }
    return out;
  }

  /// A plan's pooled stages by position, and the graph over them.
  struct PlanGraph {
    std::vector<std::vector<const Candidate*>> layers;      ///< the pooled stages of each position
    Graph g;                                                ///< stages as vertices by position
    std::vector<std::vector<Graph::vertex_descriptor>> vs;  ///< each position's vertices
  };

  std::vector<Candidate> search_plan(const Plan& plan) {
    PlanGraph pg;
    if (!pool_layers(plan, pg.layers)) return {};
    build_graph(pg);
    std::vector<Path> paths = all_paths(pg);
    refine(paths, plan);
    std::vector<Candidate> assessed = corner_pass(paths);
    return solve_best(assessed);
  }

  /// Each gain stage's share, on a grid of six steps per decade so that plans share pools
  /// (the pools' gain window is wide; the graph search finds the products that fit).
  double gain_share(const Plan& plan) const {
    const int gain_stages = static_cast<int>(std::count(plan.begin(), plan.end(), Slot::gain));
    const int buffers = static_cast<int>(plan.size()) - gain_stages;
    const double exact_share =
        gain_stages > 0 ? std::pow(spec_.gain / std::pow(kBufferGain, buffers), 1.0 / gain_stages) : kBufferGain;
    return gain_stages > 0 ? std::pow(10.0, std::round(6.0 * std::log10(exact_share)) / 6.0) : kBufferGain;
  }

  /// The loads a position is designed into: what the stages of the next position present.
  std::vector<double> next_loads(const std::vector<const Candidate*>& next) const {
    std::vector<double> loads;
    std::map<const stages::Topology*, std::vector<double>> zins;
    // What each next topology presents: its input impedance at nominal, and the lowest
    // it falls to over its corners (a follower's falls with hFE), so that a stage that
    // keeps its swing into the heavier load is among those tried.
    std::map<const stages::Topology*, std::vector<double>> lowest;
    for (const Candidate* c : next) {
      zins[c->topology].push_back(c->nominal.zin_ohm);
      lowest[c->topology].push_back(c->worst.zin.empty ? c->nominal.zin_ohm : c->worst.zin.min);
    }
    std::vector<double> medians;
    for (auto* m : {&zins, &lowest})
      for (auto& [t, z] : *m) {
        std::nth_element(z.begin(), z.begin() + static_cast<long>(z.size() / 2), z.end());
        medians.push_back(z[z.size() / 2]);
      }
    // Loads within a factor of ten of each other share one pool, designed into the lowest:
    // the graph's edges evaluate each stage into the next one's real input impedance, so a
    // stage designed into a heavier load is judged at the gain it really gives (a factor of
    // three made twice the pools for chains no better on the bench's requests).
    std::sort(medians.begin(), medians.end());
    for (const double m : medians)
      if (loads.empty() || m > 10.0 * loads.back()) loads.push_back(m);
    return loads;
  }

  /// Pools from the load back, into layers by position; false when a position has none.
  bool pool_layers(const Plan& plan, std::vector<std::vector<const Candidate*>>& layers) {
    const std::size_t n = plan.size();
    const double share = gain_share(plan);
    const double out_peak = spec_.swing_vpp ? *spec_.swing_vpp / 2 : 0.0;
    layers.resize(n);
    // (The chains kept so far do not change while the plan's pools are made.)
    const double limit = bar({});
    // The fewest pieces the positions before `pos` bring, their pools not yet made.
    const auto ahead = [&](std::size_t pos) {
      int pieces = 0;
      for (std::size_t k = 0; k < pos; ++k) pieces += least_pieces(plan[k], k);
      return pieces;
    };
    // Before any pool: the least pieces of every position and the stage points alone. (After
    // each position's pools, the floor over the layers made so far, below.)
    if (floor_of(layers, n, ahead(n)) > limit) return false;
    for (std::size_t pos = n; pos-- > 0;) {
      double after = 1.0;  // gain assumed after this position
      for (std::size_t k = pos + 1; k < n; ++k) after *= plan[k] == Slot::gain ? share : kBufferGain;
      const double peak = out_peak / after;
      const std::vector<double> loads =
          pos + 1 == n ? std::vector<double>{spec_.load_ohm} : next_loads(layers[pos + 1]);
      std::vector<PoolRequest> requests;
      for (const auto* t : topologies(plan[pos]))
        for (const double load : loads) {
          PoolRequest q;
          q.topology = t;
          q.pos = pos;
          q.gain = plan[pos] == Slot::gain ? share : kBufferGain;
          q.load = load;
          q.peak = peak;
          requests.push_back(q);
        }
      for (const auto* p : pools(requests))
        for (const auto& c : *p) layers[pos].push_back(&c);
      if (layers[pos].empty()) return false;
      if (floor_of(layers, pos, ahead(pos)) > limit) return false;
    }
    return true;
  }

  /// The fewest pieces a stage of the slot brings to a chain at position `pos` (as
  /// pieces_in_chain counts them), before its pool is made: its device and a piece for each
  /// role it cannot leave out, less the input capacitor after the first stage.
  int least_pieces(Slot slot, std::size_t pos) const {
    int least = std::numeric_limits<int>::max();
    for (const auto* t : topologies(slot)) {
      int pieces = 1;
      for (const auto& role : t->roles())
        if (!role.optional && !(pos > 0 && role.name == "CIN")) ++pieces;
      least = std::min(least, pieces);
    }
    return least == std::numeric_limits<int>::max() ? 0 : least;
  }

  /// A floor under the foreseen score (foresee) of every path through the layers from `from`
  /// on, with `ahead` pieces at the least before them: each layer's least spread of worst-case
  /// gain (the highest end over the lowest) multiplied, and the least error a gain with that
  /// spread can have, centred; each layer's fewest pieces (a stage after the first without its
  /// input capacitor, as link() takes it) and those ahead; the stage points. When it lies past
  /// the bar, no path of the plan would reach the corner pass, whatever the pools before it:
  /// they are not made (nor any pool, when the stage points and the least pieces of every
  /// position pass it already).
  /// (A refinement redesigns a path's last gain stage, and its spread could come out below
  /// the pool's least: the forecast's room covers that as it covers the forecast's error.)
  double floor_of(const std::vector<std::vector<const Candidate*>>& layers, std::size_t from, int ahead) const {
    // Over every choice of one stage per layer: the least spread (its log) for each count of
    // pieces, only the counts whose spread is below every smaller count's kept (the least
    // spread and the fewest pieces of a layer are seldom one stage's).
    std::map<int, double> least{{ahead, 0.0}};
    for (std::size_t pos = from; pos < layers.size(); ++pos) {
      std::map<int, double> layer;
      for (const Candidate* c : layers[pos]) {
        const auto ends = gain_ends(*c);
        const double log_spread = ends ? std::log(ends->second / ends->first) : 0.0;
        const auto [it, fresh] = layer.emplace(pieces_in_chain(*c, pos), log_spread);
        if (!fresh) it->second = std::min(it->second, log_spread);
      }
      std::map<int, double> joined;
      for (const auto& [pa, sa] : least)
        for (const auto& [pb, sb] : layer) {
          const auto [it, fresh] = joined.emplace(pa + pb, sa + sb);
          if (!fresh) it->second = std::min(it->second, sa + sb);
        }
      least.clear();
      for (const auto& [p, ls] : joined)
        if (least.empty() || ls < least.rbegin()->second) least.emplace(p, ls);
    }
    double floor = std::numeric_limits<double>::infinity();
    for (const auto& [p, ls] : least) {
      const double spread = std::exp(ls);
      floor = std::min(floor, kPiecePoints * p + 100.0 * (spread - 1.0) / (spread + 1.0));
    }
    return floor + stage_points(layers.size());
  }

  /// The edge from a to b when the loading is acceptable: b's input impedance at least
  /// twice a's output impedance, the link's polarity workable, a's band-edge loss into b
  /// within 1 dB.
  std::optional<EdgeProp> edge(const Candidate& a, const Candidate& b) {
    const double zin = b.nominal.zin_ohm;
    if (!(zin >= 2.0 * a.nominal.zout_ohm)) return std::nullopt;
    if (!link_polarity_ok(a, b)) return std::nullopt;
    stages::Conditions ca = stages::small_signal(a.conditions);
    ca.load_ohm = zin;
    ca.band_lo_hz = band_lo_;
    ca.band_hi_hz = band_hi_;
    const auto p = a.topology->evaluate(a.values, a.nominal_device, ca);
    ++tally_.evaluations;
    if (!p.valid || !p.active) return std::nullopt;
    const double loss = p.loss_lo_db + p.loss_hi_db;
    if (loss > 1.0) return std::nullopt;
    return EdgeProp{p.gain, loss};
  }

  /// The graph: stages as vertices by position, edges where the loading is acceptable.
  void build_graph(PlanGraph& pg) {
    const std::size_t n = pg.layers.size();
    pg.vs.resize(n);
    for (std::size_t pos = 0; pos < n; ++pos)
      for (std::size_t i = 0; i < pg.layers[pos].size(); ++i) pg.vs[pos].push_back(boost::add_vertex({i, pos}, pg.g));
    for (std::size_t pos = 0; pos + 1 < n; ++pos)
      for (std::size_t i = 0; i < pg.layers[pos].size(); ++i)
        for (std::size_t j = 0; j < pg.layers[pos + 1].size(); ++j)
          if (const auto e = edge(*pg.layers[pos][i], *pg.layers[pos + 1][j]))
            boost::add_edge(pg.vs[pos][i], pg.vs[pos + 1][j], *e, pg.g);
  }

  /// Every path through the graph near the requested gain, best first.
  std::vector<Path> all_paths(const PlanGraph& pg) {
    const std::size_t n = pg.layers.size();
    const Graph& g = pg.g;
    std::vector<Path> paths;
    std::vector<const Candidate*> stack;
    // The band-edge losses add up along a path (in dB): the chain must stay within 1 dB.
    // With a swing asked, the stages' THD at the levels they carry adds up too (in phase, as
    // the corner pass adds it): a path over the bound at nominal cannot hold it at a corner.
    const bool thd_counts = spec_.swing_vpp.has_value();
    auto walk = [&](auto&& self, Graph::vertex_descriptor v, double gain, double loss) -> void {
      const VertexProp& vp = g[v];
      const Candidate* c = pg.layers[vp.layer][vp.index];
      stack.push_back(c);
      if (vp.layer + 1 == n) {
        const double total = gain * c->nominal.gain;  // the last stage was designed into the load
        const double err = std::abs(std::abs(total) / spec_.gain - 1.0);
        double thd = 0;
        if (thd_counts)
          for (const Candidate* st : stack) thd += st->nominal.thd;
        if (err <= std::max(0.25, 2 * spec_.gain_tol) && loss + last_loss(*c) <= 1.0 && thd <= spec_.max_thd) {
          int pieces = 0;
          for (const Candidate* s : stack) pieces += s->pieces;
          // With a swing asked, paths with THD to spare are refined first (the corner pass
          // adds to the THD): a tenth of the bound costs a point.
          paths.push_back({stack, 100.0 * err + kPiecePoints * pieces + (thd_counts ? 10.0 * thd / spec_.max_thd : 0.0),
                           foresee(stack, total, spec_)});
        }
      } else {
        for (auto [e, end] = boost::out_edges(v, g); e != end; ++e)
          if (loss + g[*e].loss_db <= 1.0) self(self, boost::target(*e, g), gain * g[*e].gain, loss + g[*e].loss_db);
      }
      stack.pop_back();
    };
    for (const auto v : pg.vs[0]) walk(walk, v, 1.0, 0.0);
    std::sort(paths.begin(), paths.end(), [](const Path& a, const Path& b) { return a.rank < b.rank; });
    return paths;
  }

  /// The pools' gains are coarse: the best paths get their gain stage nearest the load
  /// redesigned for exactly the gain the other stages leave it (the pools on every core).
  void refine(std::vector<Path>& paths, const Plan& plan) {
    std::vector<Refinement> jobs;
    for (std::size_t i = 0; i < paths.size() && jobs.size() < kRefine; ++i)
      if (auto j = refinement(paths[i], plan)) jobs.push_back(std::move(*j));
    std::vector<PoolRequest> requests;
    for (const auto& j : jobs) requests.push_back(j.request);
    const auto made = pools(requests);
    for (std::size_t i = 0; i < jobs.size(); ++i)
      for (auto& q : refined(jobs[i], *made[i])) paths.push_back(std::move(q));
    std::stable_sort(paths.begin(), paths.end(), [](const Path& a, const Path& b) { return a.rank < b.rank; });
  }

  /// The score a chain must foresee to be worth its corner pass: the ceiling, or the
  /// kToExact-th best score of the distinct chains assessed (this plan's, and those earlier
  /// plans kept) when lower, with room for the forecast's error (kForesightRoom).
  double bar(const std::vector<Candidate>& assessed) const {
    const auto room = [](double score) { return score * (1.0 + kForesightRoom.share) + kForesightRoom.points; };
    std::vector<const Candidate*> all;
    for (const auto* v : {&assessed, &found_})
      for (const Candidate& c : *v) all.push_back(&c);
    std::stable_sort(all.begin(), all.end(),
                     [](const Candidate* a, const Candidate* b) { return a->score < b->score; });
    std::vector<const Candidate*> distinct;
    for (const Candidate* c : all) {
      if (std::any_of(distinct.begin(), distinct.end(), [&](const Candidate* d) { return is_variant(*d, *c); }))
        continue;
      distinct.push_back(c);
      if (distinct.size() == kToExact) return room(std::min(c->score, ceiling_));
    }
    return room(ceiling_);
  }

  /// The corner passes (on every core, a batch at a time) over the paths in the order of their
  /// foreseen scores, each joined into a chain the quantity pool holds, up to kToCorners
  /// chains; the pass stops at the first path foreseen past the bar (bar()). The chains that
  /// hold, best first.
  std::vector<Candidate> corner_pass(std::vector<Path>& paths) {
    std::stable_sort(paths.begin(), paths.end(), [](const Path& a, const Path& b) { return a.foreseen < b.foreseen; });
    const std::size_t batch_size = 4 * std::max(1u, std::thread::hardware_concurrency());
    std::vector<Candidate> assessed;
    std::size_t next = 0, linked = 0;
    bool past = false;
    while (!past && linked < kToCorners && next < paths.size()) {
      const double limit = bar(assessed);
      std::vector<Candidate> batch;
      std::vector<std::vector<const void*>> ids;  // each chain's stages as its pools hold them
      for (; next < paths.size() && batch.size() < batch_size && linked < kToCorners; ++next) {
        if (paths[next].foreseen > limit) {
          past = true;
          break;
        }
        Candidate ch = link(paths[next]);
        unpolarise_links(ch);
        if (!pool_ok(ch)) {
          ++tally_.failures["stock"];
          continue;
        }
        batch.push_back(std::move(ch));
        ids.emplace_back(paths[next].stages.begin(), paths[next].stages.end());
        ++linked;
      }
      std::vector<std::string> failed(batch.size());
      std::vector<long> evals(batch.size(), 0);
      parallel_for(batch.size(), [&](std::size_t i) {
        failed[i] = chain_corners(batch[i], spec_, evals[i], Depth::search, &memo_, ids[i]);
      });
      for (std::size_t i = 0; i < batch.size(); ++i) {
        tally_.evaluations += evals[i];
        if (failed[i].empty())
          assessed.push_back(std::move(batch[i]));
        else
          tally_.note_corner_failure(failed[i]);
      }
    }
    std::stable_sort(assessed.begin(), assessed.end(),
                     [](const Candidate& a, const Candidate& b) { return a.score < b.score; });
    return assessed;
  }

  /// The best distinct chains (up to kToExact) that the exact solver confirms: solved a batch
  /// ahead on every core, taken in order as one at a time would take them.
  std::vector<Candidate> solve_best(std::vector<Candidate>& assessed) {
    std::vector<Candidate> out;
    auto variant_of_out = [&](const Candidate& c) {
      return std::any_of(out.begin(), out.end(), [&](const Candidate& k) { return is_variant(k, c); });
    };
    std::size_t next = 0;
    while (out.size() < kToExact && next < assessed.size()) {
      std::vector<std::size_t> batch;
      for (; next < assessed.size() && batch.size() < kToExact - out.size(); ++next)
        if (!variant_of_out(assessed[next])) batch.push_back(next);
      std::vector<std::string> broken(batch.size());
      parallel_for(batch.size(), [&](std::size_t b) { broken[b] = solve_whole(assessed[batch[b]]); });
      for (std::size_t b = 0; b < batch.size() && out.size() < kToExact; ++b) {
        Candidate& c = assessed[batch[b]];
        if (variant_of_out(c)) continue;
        ++tally_.evaluations;
        if (!broken[b].empty()) {
          ++tally_.failures[broken[b].substr(0, broken[b].find(':'))];
          continue;
        }
        out.push_back(std::move(c));
      }
    }
    return out;
  }

  /// A path whose last gain stage is to be redesigned for the gain the others leave it, into
  /// the same load, from the same source, keeping the input impedance the stage before needs.
  struct Refinement {
    Path path;
    std::size_t stage = 0;
    PoolRequest request;
  };

  std::optional<Refinement> refinement(const Path& p, const Plan& plan) const {
    std::size_t r = plan.size();
    for (std::size_t k = plan.size(); k-- > 0;)
      if (plan[k] == Slot::gain) {
        r = k;
        break;
      }
    if (r == plan.size()) return std::nullopt;
    const std::size_t n = p.stages.size();
    std::vector<stages::ChainStage> list;
    for (const Candidate* c : p.stages) list.push_back(synth::chain_stage(*c));
    const stages::Conditions cond =
        stages::small_signal(conditions(spec_, spec_.supply_nominal_v(), spec_.temp_nominal_c()));
    const stages::ChainPerformance cp = stages::evaluate_chain(list, cond, stages::Detail::core);
    const double others = std::abs(cp.whole.gain / cp.each[r].gain);
    if (!(others > 0) || !std::isfinite(others)) return std::nullopt;
    Refinement j;
    j.path = p;
    j.stage = r;
    PoolRequest& req = j.request;
    req.topology = p.stages[r]->topology;
    req.pos = r;
    req.gain = spec_.gain / others;
    req.load = cp.conditions[r].load_ohm;
    double after = 1.0;
    for (std::size_t k = r + 1; k < n; ++k) after *= std::abs(cp.each[k].gain);
    req.peak = spec_.swing_vpp ? *spec_.swing_vpp / 2 / after : 0.0;
    req.exact = true;
    req.device = p.stages[r]->device.name;
    if (p.stages[r]->device2) req.device2 = p.stages[r]->device2->name;
    req.zin = r > 0 ? 2.0 * cp.each[r - 1].zout_ohm : 0.0;
    return j;
  }

  /// The paths a refinement makes with the stages it designed.
  std::vector<Path> refined(const Refinement& j, const std::vector<Candidate>& made) {
    const std::size_t n = j.path.stages.size(), r = j.stage;
    std::vector<stages::ChainStage> list;
    for (const Candidate* c : j.path.stages) list.push_back(chain_stage(*c));
    const stages::Conditions cond =
        stages::small_signal(conditions(spec_, spec_.supply_nominal_v(), spec_.temp_nominal_c()));
    std::vector<Path> out;
    for (const Candidate& c : made) {
      Path q = j.path;
      q.stages[r] = &c;
      if (r > 0 && !link_polarity_ok(*q.stages[r - 1], c)) continue;
      if (r + 1 < n && !link_polarity_ok(c, *q.stages[r + 1])) continue;
      list[r] = chain_stage(c);
      const auto whole = stages::evaluate_chain(list, cond, stages::Detail::core).whole;
      tally_.evaluations += static_cast<long>(n);
      if (!whole.valid || !whole.active || whole.loss_lo_db + whole.loss_hi_db > 1.0) continue;
      const double err = std::abs(std::abs(whole.gain) / spec_.gain - 1.0);
      int pieces = 0;
      for (const Candidate* st : q.stages) pieces += st->pieces;
      q.rank = 100.0 * err + kPiecePoints * pieces;
      q.foreseen = foresee(q.stages, whole.gain, spec_);
      out.push_back(std::move(q));
    }
    return out;
  }

  /// One quantity pool for the whole chain: every stage's parts and device, every copy. A
  /// device counts in the units of stocked_units: a transistor stage takes a piece per copy,
  /// an op-amp stage a channel per copy, and the channels of every op-amp stage of one type
  /// share its packages (two stages of a quad type and two copies: one package).
  bool pool_ok(const Candidate& ch) const {
    std::map<std::uint32_t, int> groups;
    for (const Candidate& s : ch.stages)
      for (const auto& rp : s.parts)
        for (std::size_t k = 0; k < rp.combo.count; ++k) groups[rp.combo.group[k]] += spec_.copies;
    for (const auto& [gi, need] : groups)
      if (shelf_.groups()[gi].available < need) return false;
    for (const auto& [name, need] : device_units_needed(ch, spec_.copies)) {
      const auto it = stocked_.find(name);
      if (it == stocked_.end() || it->second < need) return false;
    }
    return true;
  }

  /// The stages of a path joined: designators as on a chain's board (R103, R201 ...), and
  /// one capacitor between stages (the input capacitor of each stage after the first goes).
  static Candidate link(const Path& path) {
    Candidate ch;
    for (std::size_t k = 0; k < path.stages.size(); ++k) {
      Candidate s = *path.stages[k];
      if (k > 0) {
        const std::size_t cin = stages::input_coupling_role(*s.topology);
        s.pieces = pieces_in_chain(s, k);  // (chains never search a shelf with purchases)
        std::erase_if(s.parts, [](const RolePart& rp) { return rp.role == "CIN"; });
        if (cin < s.topology->roles().size()) s.values[cin] = stages::kLinkedCin;
      }
      for (auto& rp : s.parts) {
        rp.designator = stages::chain_designator(k, rp.designator);
        rp.stage = static_cast<int>(k) + 1;
      }
      ch.stages.push_back(std::move(s));
    }
    return ch;
  }

  /// The DC a coupling capacitor from stage a's output node to stage b's input would hold,
  /// at the nominal pieces (positive when a's node sits higher; both on the one rail).
  static double link_dc(const Candidate& a, const Candidate& b) {
    const double node = stages::output_dc(*a.topology, a.nominal);
    return node - b.nominal.v_in;
  }

  /// Whether a can drive b through its COUT: an electrolytic needs a DC well clear of zero
  /// (a volt at nominal, so the corners keep its sign), else the shelf must have a
  /// non-polarised capacitor of its value (unpolarise_links fits it).
  bool link_polarity_ok(const Candidate& a, const Candidate& b) const {
    const RolePart* it = part_of(a, "COUT");
    if (!it || !it->polarised) return true;
    const double dc = link_dc(a, b);
    if (std::abs(dc) >= 1.0) return true;
    const double volts = std::max(std::abs(a.nominal.v_out), std::abs(b.nominal.v_in)) + a.nominal.clip_peak_v;
    return shelf_.capacitor_at_least(it->combo.lo, volts, false) != nullptr;
  }

  /// A polarised coupling capacitor between two stages holds the difference of their bias
  /// points, which the corners can reverse when it is small: then a non-polarised one of at
  /// least its value from the shelf instead, when the shelf has one (common practice: film
  /// between stages biased near each other).
  void unpolarise_links(Candidate& ch) const {
    for (std::size_t k = 0; k + 1 < ch.stages.size(); ++k) {
      Candidate& s = ch.stages[k];
      RolePart* it = part_of(s, "COUT");
      if (!it || !it->polarised) continue;
      const std::size_t i = s.topology->role_index("COUT");
      if (std::abs(link_dc(s, ch.stages[k + 1])) >= 1.5) continue;  // well clear: the corner pass decides
      const double volts =
          std::max(std::abs(s.nominal.v_out), std::abs(ch.stages[k + 1].nominal.v_in)) + s.nominal.clip_peak_v;
      const Combo* cb = shelf_.capacitor_at_least(it->combo.lo, volts, false);
      if (!cb) continue;
      s.pieces += static_cast<int>(cb->count) - static_cast<int>(it->combo.count);
      it->combo = *cb;
      it->values.clear();
      for (std::size_t j = 0; j < cb->count; ++j) it->values.push_back(shelf_.groups()[cb->group[j]].value);
      it->tol = {1.0 - cb->lo / cb->nominal, cb->hi / cb->nominal - 1.0};
      it->rating = cb->rating;
      it->dielectric = shelf_.groups()[cb->group[0]].dielectric;
      it->polarised = false;
      it->plus_net.clear();
      s.values[i] = cb->nominal;
    }
  }

  /// The exact solution of the whole chain, then the parts as the bench sees them: empty, or
  /// the constraint it broke (touches nothing shared: solve_best runs it on every core).
  std::string solve_whole(Candidate& ch) const {
    if (std::string v = chain_exact(ch, spec_, stages::Detail::core); !v.empty()) return v;
    ch.parts.clear();
    for (auto& s : ch.stages) {
      finalize(s, shelf_);
      for (const auto& rp : s.parts) ch.parts.push_back(rp);
    }
    return {};
  }

  const Spec& spec_;
  const Inventory& inv_;
  const Shelf& shelf_;
  SearchStats& tally_;
  double ceiling_;                      ///< design_chains' ceiling
  std::map<std::string, int> stocked_;  ///< device units by name (stocked_units)
  double band_lo_ = 0, band_hi_ = 0;
  std::map<std::string, std::vector<Candidate>> pools_;
  ChainMemo memo_;  ///< the corner passes' stages, by the pooled stages from each position on
  std::map<const Candidate*, double> last_losses_;  ///< last_loss by pooled stage
  std::vector<Candidate> found_;                    ///< the chains the plans searched so far keep, best first
};

}  // namespace

std::vector<Candidate> design_chains(const Spec& spec, const Inventory& inv, const Shelf& shelf, SearchStats& tally,
                                     double ceiling) {
  if (spec.stages_max < 2 || spec.piece) return {};
  ChainSearch search(spec, inv, shelf, tally, ceiling);
  return search.run();
}

}  // namespace detail

}  // namespace shelfstage::synth
