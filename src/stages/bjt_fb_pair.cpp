// bjt-fb-pair: the two-transistor series-feedback pair with a bipolar input. Q1, a common
// emitter biased from a divider, drives the base of the complementary Q2 (NPN then PNP, or
// the mirror) from its collector load RC1; Q2's collector is the output, fed back through RF
// to Q1's emitter, which returns to ground through RE1 (unbypassed) and RE2 (bypassed by CE).
// For a large loop gain the stage is a non-inverting amplifier of gain 1 + RF / RE1 whatever
// either device's hFE, and the DC operating point is held by the same loop at a DC gain of
// 1 + RF / (RE1 + RE2). Q1 runs at about Q2's VEB over RC1. The closed form is shared with
// jfet-fb-pair (pair.hpp).
#include <algorithm>

#include "pair.hpp"

namespace shelfstage::stages {
namespace {

using namespace detail;

constexpr Role kRoles[] = {
    {"RB1", "R1", 'R', false, false, "", "", "supply to base: upper bias divider leg", {13, 6, true, 'l'}},
    {"RB2", "R2", 'R', false, false, "", "", "base to ground: lower bias divider leg", {13, 20, true, 'l'}},
    {"RC1", "R3", 'R', false, false, "", "", "supply to Q1's collector: drives Q2's base", {19, 6, true, 'l'}},
    {"RC2", "R4", 'R', false, false, "", "", "Q2's collector to ground: Q2's load", {26, 21, true, 'l'}},
    {"RF",
     "R5",
     'R',
     false,
     false,
     "",
     "",
     "output to Q1's emitter: the feedback (gain 1 + RF/RE1)",
     {22, 15, false, 'b'}},
    {"RE1", "R6", 'R', false, false, "", "", "emitter to x, unbypassed: sets the gain with RF", {19, 19, true, 'l'}},
    {"RE2", "R7", 'R', true, false, "", "", "x to ground, bypassed: lowers the DC gain", {19, 24, true, 'l'}},
    {"CE", "C2", 'C', true, true, "x", "0", "bypass across RE2", {22, 24, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "base", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "collector2", "out", "output coupling", {26, 13, false, 'a'}},
};
static_assert(std::size(kRoles) == kPairRoles);

class BjtFbPair final : public FeedbackPair {
 public:
  BjtFbPair() : FeedbackPair(kRoles, {"base", "emitter", "collector"}) {}
  std::string_view name() const override { return "bjt-fb-pair"; }
  std::string_view summary() const override {
    return "two-transistor series-feedback pair, bipolar input: gain 1 + RF/RE1, little hFE in it";
  }
  bool accepts(devices::DeviceKind k) const override { return !devices::is_jfet(k); }
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    return pair_reference(*this, q, c, k);
  }

  // Design (common practice for the pair): Q1 at a tenth of a milliampere to a milliampere,
  // its emitter at a tenth or a fifth of the supply (a larger RE1 + RE2 lowers the DC gain
  // that carries VBE's spread to the output), the base divider carrying ten base currents or
  // as light as the input impedance asked allows; the output halfway up the supply; the
  // rest from the shared feedback step.
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    if ((g.gain < 1.5 && !g.probe) || !q.paired) return;
    const auto& t1 = q.bjt;
    const auto& t2 = q.bjt2;
    const double vcc = c.supply_v;
    const double veb2 = t2.vt_v * std::log(2e-3 / t2.is_a);
    const double vo = 0.5 * (vcc - t2.vce_sat_v);
    const double r_lo = std::max(1.06 * g.zin_min_ohm, 1e3);
    for (double i1 : {0.1e-3, 0.3e-3, 1e-3}) {
      const double ib1 = i1 / t1.bf, vbe1 = t1.vt_v * std::log(i1 / t1.is_a);
      // A low gain needs the emitter higher: KCL at the emitter puts RE1 + RE2 at or above RE1
      // only for ve (G + 1) >= 2 vo or so (RF carrying Q1's current).
      std::vector<double> ves = {std::max(0.1 * vcc, 0.6), 0.2 * vcc};
      if (const double low_gain = 2.5 * vo / (g.gain + 1.0); low_gain > 0.2 * vcc)
        ves.push_back(std::min(low_gain, vo - 1.0));
      for (double ve : ves) {
        const double vb = ve + vbe1;
        std::vector<double> rths = {std::max(r_lo, vb / (10.0 * ib1))};
        if (g.breadth >= 1.0) rths.push_back(std::max(r_lo, vb / (3.0 * ib1)));
        unique_values(rths);
        for (double rth : rths) {
          const double vth = vb + ib1 * rth;
          if (vth > 0.8 * vcc) continue;
          // The divider's nearest values: the loop holds the output whatever the base's last
          // per cent.
          std::vector<double> tops = {nearest_one(shelf, rth * vcc / vth)};
          const double bottom = nearest_one(shelf, rth * vcc / (vcc - vth));
          for (double top : tops) {
            Values v;
            v[kTop] = top;
            v[kBottom] = bottom;
            if (bottom > 0) pair_feedback_legs(v, shelf, g, c, i1, ve, vo, veb2, emit);
          }
        }
      }
    }
  }
};

}  // namespace

const Topology& bjt_fb_pair() {
  static const BjtFbPair t;
  return t;
}

}  // namespace shelfstage::stages
