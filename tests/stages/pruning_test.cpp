// Tests of the bounds the design steps leave proposals out by (src/stages/common.cpp
// short_of_swing_up, short_of_gain and load_resistors; src/stages/bjt_ce_shunt.cpp): each bound is a property of
// the circuit, checked here on the evaluator over every proposal the design steps make when
// probing (which prunes nothing), at the device type's nominal piece and its corner pieces.
//  - A class-A output rises at most by its quiescent current times its pull-up in parallel
//    with the load (the device turning off: the cutoff end of the AC load line, Sedra & Smith's
//    treatment of the output swing of a CS or CE stage).
//  - The collector-to-base feedback stage gains at most (RC || RL || RF) / RE1 (a degenerated
//    transistor's transconductance is below 1 / RE1) and at most RF / (Rs + RIN) (the shunt
//    feedback amplifier's closed-loop gain, below its ideal ratio for any finite loop gain).
//  - A stage biased from a fixed gate or base network carries the most current with no drain
//    or collector resistor (its full supply across the device: the channel-length or Early
//    factor at its largest), which the design steps work out to apply the first bound.
//  - A feedback pair's input impedance is at most its gate or base divider's resistance to
//    ground (src/stages/pair.cpp pair_feedback_legs): the divider is in parallel with the
//    device's input, and at mid-band a JFET gate draws nothing while a base's path runs to an
//    emitter the series feedback moves with the base (Sedra & Smith's series-shunt feedback
//    amplifier: its input impedance rises above the device's, it stays in parallel with the
//    bias network).
#include <doctest/doctest.h>

#include <cmath>
#include <functional>
#include <string_view>

#include "../../src/stages/common.hpp"
#include "../../src/stages/pair.hpp"

#include "shelfstage/units/eseries.hpp"
#include "stage_bench.hpp"

using namespace shelfstage;
using namespace shelfstage::test;
using shelfstage::stages::detail::bjt_bias;
using shelfstage::stages::detail::jfet_bias;

namespace {

// A shelf of every E24 value from 10 ohm to 10 MOhm (IEC 60063's E24 series).
struct E24Shelf : ValueSource {
  std::vector<double> all;
  E24Shelf() {
    for (double decade = 10; decade < 1e7; decade *= 10)
      for (double m : units::eseries(24)) all.push_back(m * decade);
    all.push_back(1e7);
  }
  void nearest(double target, std::size_t n, std::vector<double>& out) const override {
    if (!(target > 0)) return;
    std::vector<double> by = all;
    std::sort(by.begin(), by.end(),
              [&](double a, double b) { return std::abs(std::log(a / target)) < std::abs(std::log(b / target)); });
    for (std::size_t i = 0; i < n && i < by.size(); ++i) out.push_back(by[i]);
  }
  void spread(double lo, double hi, std::size_t n, std::vector<double>& out) const override {
    for (std::size_t i = 0; i < n; ++i) {
      const double f = n > 1 ? static_cast<double>(i) / static_cast<double>(n - 1) : 0.0;
      nearest(lo * std::pow(hi / lo, f), 1, out);
    }
  }
};

struct Request {
  double supply_v, load_ohm, source_ohm, gain, swing_peak_v, zin_ohm;
};

constexpr Request kRequests[] = {
    {12, 10e3, 1e3, 8, 1, 100e3}, {5, 4.7e3, 0, 6, 0.5, 20e3},    {24, 2.2e3, 10e3, 5, 4, 1e6},
    {15, 330, 50, 3, 1.5, 10e3},  {9, 100e3, 600, 30, 0.3, 47e3}, {48, 47e3, 1e3, 20, 10, 100e3},
    {9, 10e3, 1e6, 4.6, 0, 10e6},  // a 10 M input behind a 1 M source: no divider above it on the shelf
};

// Every proposal of the topology for each request (probing: nothing pruned), evaluated at
// each piece; check(values, conditions, piece, performance) on those that work.
template <class Check>
long each_working_proposal(const Topology& t, const devices::DeviceRecord& record, Check check) {
  const E24Shelf shelf;
  const devices::DeviceSpread spread(record);
  // (A pair's Q2 at its record's nominal: with_second leaves other topologies' pieces as they are.)
  std::vector<Transistor> pieces{with_second(t, piece_of(spread, spread.nominal()))};
  for (const auto& f : spread.corners()) pieces.push_back(with_second(t, piece_of(spread, f)));
  long working = 0;
  for (const Request& r : kRequests) {
    Conditions c;
    c.supply_v = r.supply_v;
    c.load_ohm = r.load_ohm;
    c.source_ohm = r.source_ohm;
    Goal g;
    g.gain = r.gain;
    g.gain_lo = 0.9 * r.gain;
    g.swing_peak_v = r.swing_peak_v;
    g.zin_min_ohm = r.zin_ohm;
    g.probe = true;
    std::vector<Values> proposals;
    t.propose(g, pieces.front(), c, shelf, [&](const Values& v) { proposals.push_back(v); });
    for (std::size_t i = 0; i < proposals.size(); i += 7) {  // every seventh: the checks take seconds, not minutes
      Values v = t.capacitor_targets(proposals[i], pieces.front(), c, 20.0);
      for (const Transistor& q : pieces) {
        const Performance p = t.evaluate(v, q, c, stages::Detail::core);
        if (!p.valid || !p.active) continue;
        ++working;
        check(v, c, q, p);
      }
    }
  }
  return working;
}

}  // namespace

TEST_CASE("the output rises at most by the bias current times the pull-up in parallel with the load") {
  // most(values, conditions, piece): the current with no pull-up (none for the feedback stage,
  // whose bias moves with RC).
  using Most = std::function<double(const Values&, const Conditions&, const Transistor&)>;
  struct Case {
    const char* topology;
    devices::DeviceRecord record;
    const char* pull;
    Most most;
  };
  const auto role = [](const char* topology, const char* name) {
    return stages::find_topology(topology)->role_index(name);
  };
  const Most cs_self = [&](const Values& v, const Conditions& c, const Transistor& q) {
    return jfet_bias(q.jfet, 0.0, v[role("jfet-cs-self", "RS1")] + v[role("jfet-cs-self", "RS2")], 0.0, c.supply_v)
        .id_a;
  };
  const Most cs_divider = [&](const Values& v, const Conditions& c, const Transistor& q) {
    const double r1 = v[role("jfet-cs-divider", "R1")], r2 = v[role("jfet-cs-divider", "R2")];
    const double rs = v[role("jfet-cs-divider", "RS1")] + v[role("jfet-cs-divider", "RS2")];
    return jfet_bias(q.jfet, c.supply_v * r2 / (r1 + r2), rs, 0.0, c.supply_v).id_a;
  };
  const Most ce_divider = [&](const Values& v, const Conditions& c, const Transistor& q) {
    const double r1 = v[role("bjt-ce-divider", "R1")], r2 = v[role("bjt-ce-divider", "R2")];
    const double re = v[role("bjt-ce-divider", "RE1")] + v[role("bjt-ce-divider", "RE2")];
    return bjt_bias(q.bjt, c.supply_v * r2 / (r1 + r2), par(r1, r2), re, 0.0, c.supply_v).ic_a;
  };
  const Case cases[] = {{"jfet-cs-self", njfet_record(), "RD", cs_self},
                        {"jfet-cs-divider", njfet_record(), "RD", cs_divider},
                        {"bjt-ce-divider", npn_record(), "RC", ce_divider},
                        {"bjt-ce-shunt", npn_record(), "RC", nullptr}};
  for (const Case& k : cases) {
    const Topology& t = *stages::find_topology(k.topology);
    const std::size_t pull = t.role_index(k.pull);
    double closest = 0;  // the largest swing up over its bound
    const long n = each_working_proposal(
        t, k.record, [&](const Values& v, const Conditions& c, const Transistor& q, const Performance& p) {
          const double bound = p.bias_current_a * par(v[pull], c.load_ohm);
          closest = std::max(closest, p.swing_up_v / bound);
          CHECK_MESSAGE(p.swing_up_v <= bound * (1 + 1e-9), k.topology, ": swing up ", p.swing_up_v, " V over ", bound);
          if (k.most) CHECK(p.bias_current_a <= k.most(v, c, q) * (1 + 1e-9));
        });
    MESSAGE(fmt::format("{}: {} working stages, swing up at most {:.4f} of its bound", k.topology, n, closest));
    CHECK(n > 100);
    CHECK(closest > 0.5);  // the bound is near where stages are, not vacuous
  }
}

TEST_CASE("bjt-ce-shunt gains at most (RC || RL || RF) / RE1 and at most RF / (Rs + RIN)") {
  const Topology& t = *stages::find_topology("bjt-ce-shunt");
  const std::size_t rin = t.role_index("RIN"), rf = t.role_index("RF"), rc = t.role_index("RC"),
                    re1 = t.role_index("RE1");
  double closest_leg = 0, closest_ratio = 0;
  const long n = each_working_proposal(
      t, npn_record(), [&](const Values& v, const Conditions& c, const Transistor&, const Performance& p) {
        const double by_leg = par(par(v[rc], c.load_ohm), v[rf]) / v[re1];  // infinite without RE1
        const double by_ratio = v[rf] / (c.source_ohm + v[rin]);
        closest_leg = std::max(closest_leg, std::abs(p.gain) / by_leg);
        closest_ratio = std::max(closest_ratio, std::abs(p.gain) / by_ratio);
        CHECK(std::abs(p.gain) <= by_leg);
        CHECK(std::abs(p.gain) <= by_ratio);
      });
  MESSAGE(fmt::format("{} working stages; gain at most {:.4f} of (RC || RL || RF) / RE1, {:.4f} of RF / (Rs + RIN)", n,
                      closest_leg, closest_ratio));
  CHECK(n > 100);
  CHECK(closest_leg > 0.3);
  CHECK(closest_ratio > 0.8);
}

TEST_CASE("a common source or emitter gains at most gm (R || RL) / (1 + gm R1) at its largest transconductance") {
  // The small-signal gain of a source- or emitter-degenerated stage from its gate or base,
  // gm RL' / (1 + gm RS1) (Sedra & Smith's CS and CE amplifiers with a source or emitter
  // resistance), rises with gm; the output resistance, the base's own current and the input
  // divider only lower the gain from the source. The largest gm the bias allows is at the
  // stage's largest current: with no drain or collector resistor (the bound above), gm = IC/VT
  // for the BJT and 2 sqrt(BETA (1 + lambda VDS) ID) for the JFET (common.cpp load_resistors).
  struct Case {
    const char* topology;
    devices::DeviceRecord record;
    const char* pull;
    const char* r1;
  };
  const Case cases[] = {{"jfet-cs-self", njfet_record(), "RD", "RS1"},
                        {"jfet-cs-divider", njfet_record(), "RD", "RS1"},
                        {"bjt-ce-divider", npn_record(), "RC", "RE1"}};
  for (const Case& k : cases) {
    const Topology& t = *stages::find_topology(k.topology);
    const auto at = [&](const Values& v, const char* name) { return v[t.role_index(name)]; };
    double closest = 0;
    const long n = each_working_proposal(
        t, k.record, [&](const Values& v, const Conditions& c, const Transistor& q, const Performance& p) {
          double gm = 0;
          const double rs = std::string_view(k.topology) == "bjt-ce-divider" ? at(v, "RE1") + at(v, "RE2")
                                                                             : at(v, "RS1") + at(v, "RS2");
          if (std::string_view(k.topology) == "jfet-cs-self") {
            gm = jfet_bias(q.jfet, 0.0, rs, 0.0, c.supply_v).gm_s;
          } else {
            const double r1 = at(v, "R1"), r2 = at(v, "R2");
            gm = std::string_view(k.topology) == "jfet-cs-divider"
                     ? jfet_bias(q.jfet, c.supply_v * r2 / (r1 + r2), rs, 0.0, c.supply_v).gm_s
                     : bjt_bias(q.bjt, c.supply_v * r2 / (r1 + r2), par(r1, r2), rs, 0.0, c.supply_v).ic_a / q.bjt.vt_v;
          }
          const double bound = gm * par(at(v, k.pull), c.load_ohm) / (1.0 + gm * at(v, k.r1));
          closest = std::max(closest, std::abs(p.gain) / bound);
          CHECK_MESSAGE(std::abs(p.gain) <= bound * (1 + 1e-9), k.topology, ": gain ", p.gain, " over ", bound);
        });
    MESSAGE(fmt::format("{}: {} working stages, gain at most {:.4f} of its bound", k.topology, n, closest));
    CHECK(n > 100);
    CHECK(closest > 0.8);  // the bound is near where stages are, not vacuous
  }
}

TEST_CASE("a feedback pair's input impedance is at most its gate or base divider's resistance to ground") {
  for (const char* name : {"jfet-fb-pair", "bjt-fb-pair", "bjt-fb-pair-same"}) {
    const Topology& t = *stages::find_topology(name);
    double closest = 0;
    const long n = each_working_proposal(
        t, n_record_for(t), [&](const Values& v, const Conditions&, const Transistor&, const Performance& p) {
          const double divider = stages::detail::input_divider_ohm(v);
          closest = std::max(closest, p.zin_ohm / divider);
          // (A JFET's equals it but for the solve's rounding, a few parts in 1e9.)
          CHECK_MESSAGE(p.zin_ohm <= divider * (1 + 1e-6), fmt::format("{}: {} > {}", name, p.zin_ohm, divider));
        });
    MESSAGE(fmt::format("{}: {} working stages; input impedance at most {:.6f} of the divider's", name, n, closest));
    CHECK(n > 100);
    CHECK(closest > 0.5);  // (the bound is near: the divider is most of it)
  }
}

namespace {

// The proposals the design steps make for a gain of 8 (window from 7.2) with the topology's
// nominal test piece, the stops of what they leave out going to `left` (probing: nothing left
// out).
long proposals_for_8(const char* name, const Conditions& c, double swing_peak_v, bool probe, stages::LeftOut& left) {
  const E24Shelf shelf;
  const Topology& t = *stages::find_topology(name);
  const devices::DeviceSpread spread(n_record_for(t));
  const Transistor q = piece_of(spread, spread.nominal());
  Goal g;
  g.gain = 8;
  g.gain_lo = 7.2;
  g.swing_peak_v = swing_peak_v;
  g.zin_min_ohm = 10e3;
  g.probe = probe;
  g.left_out = &left;
  long made = 0;
  t.propose(g, q, c, shelf, [&](const Values&) { ++made; });
  return made;
}

}  // namespace

TEST_CASE("what the design steps leave out by a bound is counted under its stop (Goal::left_out)") {
  // A swing of 2 V peak into 10k from 12 V at a gain of 8: many drain and collector resistors
  // cannot rise by it at the currents the steps design for.
  Conditions c;
  c.supply_v = 12;
  c.load_ohm = 10e3;
  stages::LeftOut total;
  for (const char* name : {"jfet-cs-self", "jfet-cs-divider", "bjt-ce-divider", "bjt-ce-shunt"}) {
    stages::LeftOut left;
    const long made = proposals_for_8(name, c, 2, false, left);
    MESSAGE(
        fmt::format("{}: {} proposed, {} left out for the swing, {} for the gain", name, made, left.swing, left.gain));
    total.swing += left.swing;
    total.gain += left.gain;
    // Probing leaves nothing out, and counts nothing.
    stages::LeftOut none;
    proposals_for_8(name, c, 2, true, none);
    CHECK(none.swing == 0);
    CHECK(none.gain == 0);
  }
  CHECK(total.swing > 100);
  CHECK(total.gain > 10);
}

TEST_CASE("a common source that cannot reach the gain into a heavy load proposes nothing, counted under gain") {
  // A gain of 8 into 150 ohm asks gm (RD || 150) >= 8: above 53 mS even with RD open, where
  // the test JFET gives a few mS at IDSS (2 IDSS / |VP|). Every proposal is left out; a probe
  // (how close the stages come) still proposes them.
  Conditions c;
  c.supply_v = 9;
  c.load_ohm = 150;
  for (const char* name : {"jfet-cs-self", "jfet-cs-divider"}) {
    stages::LeftOut left, none;
    CHECK_MESSAGE(proposals_for_8(name, c, 0, false, left) == 0, name);
    CHECK(left.gain > 10);
    CHECK(left.least_gain < 1.0);  // (the bound each was left out by: far below the gain)
    CHECK(proposals_for_8(name, c, 0, true, none) > 10);
  }
}

TEST_CASE("a pair's divider below the input impedance asked leaves its sets out, counted under zin") {
  // 3 M asked from 9 V: a divider's upper leg would be well above the shelf's 10 M, so the
  // nearest legs fall below what the steps aimed at.
  const E24Shelf shelf;
  Conditions c;
  c.supply_v = 9;
  c.load_ohm = 10e3;
  c.source_ohm = 1e6;
  long total = 0;
  for (const char* name : {"jfet-fb-pair", "bjt-fb-pair"}) {
    const Topology& t = *stages::find_topology(name);
    const devices::DeviceSpread spread(n_record_for(t));
    const Transistor q = with_second(t, piece_of(spread, spread.nominal()));
    Goal g;
    g.gain = 4.6;
    g.gain_lo = 4.1;
    g.zin_min_ohm = 3e6;
    stages::LeftOut left;
    g.left_out = &left;
    long made = 0, below = 0;
    t.propose(g, q, c, shelf, [&](const Values& v) {
      ++made;
      if (stages::detail::input_divider_ohm(v) < g.zin_min_ohm) ++below;
    });
    // Probing leaves nothing out: every set it makes is either made or counted above.
    stages::LeftOut none;
    g.left_out = &none;
    g.probe = true;
    long probed = 0;
    t.propose(g, q, c, shelf, [&](const Values&) { ++probed; });
    MESSAGE(
        fmt::format("{}: {} proposed, {} left out for the input impedance, {} probed", name, made, left.zin, probed));
    CHECK(below == 0);
    CHECK(none.zin == 0);
    CHECK(made + left.zin + left.swing + left.gain == probed);
    total += left.zin;
  }
  CHECK(total > 10);
}
