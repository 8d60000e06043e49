// jfet-fb-pair: the series-feedback pair with a JFET input, the classic high-impedance
// instrument preamplifier. Q1, a JFET common source with its gate returned to ground (RG2)
// or to a divider (RG1, RG2) for megohms of input impedance, drives the base of a bipolar Q2
// of the opposite polarity from its drain load RD; Q2's collector is the output, fed back
// through RF to the JFET's source, which returns to ground through RS1 (unbypassed) and RS2
// (bypassed by CS). Gain 1 + RF / RS1 for a large loop gain, whatever IDSS and VP; the loop
// sets the JFET's current (about Q2's VEB over RD) and carries the spread of VGS to the
// output at the DC gain 1 + RF / (RS1 + RS2), which a gate lifted toward the output's DC
// keeps near one. The closed form is shared with bjt-fb-pair (pair.hpp).
#include <algorithm>

#include "pair.hpp"

namespace shelfstage::stages {
namespace {

using namespace detail;

constexpr Role kRoles[] = {
    {"RG1",
     "R1",
     'R',
     true,
     false,
     "",
     "",
     "supply to gate: lifts the gate (optional divider leg)",
     {13, 6, true, 'l'}},
    {"RG2", "R2", 'R', false, false, "", "", "gate to ground: sets the input impedance", {13, 20, true, 'l'}},
    {"RD", "R3", 'R', false, false, "", "", "supply to drain: drives Q2's base", {19, 6, true, 'l'}},
    {"RC2", "R4", 'R', false, false, "", "", "Q2's collector to ground: Q2's load", {26, 21, true, 'l'}},
    {"RF",
     "R5",
     'R',
     false,
     false,
     "",
     "",
     "output to the source: the feedback (gain 1 + RF/RS1)",
     {22, 15, false, 'b'}},
    {"RS1", "R6", 'R', false, false, "", "", "source to x, unbypassed: sets the gain with RF", {19, 19, true, 'l'}},
    {"RS2", "R7", 'R', true, false, "", "", "x to ground, bypassed: lowers the DC gain", {19, 24, true, 'l'}},
    {"CS", "C2", 'C', true, true, "x", "0", "bypass across RS2", {22, 24, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "gate", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "collector2", "out", "output coupling", {26, 13, false, 'a'}},
    pair_cf_role("source"),
};
static_assert(std::size(kRoles) == kCf + 1);

class JfetFbPair final : public FeedbackPair {
 public:
  JfetFbPair() : FeedbackPair(kRoles, {"gate", "source", "drain"}) {}
  std::string_view name() const override { return "jfet-fb-pair"; }
  std::string_view summary() const override {
    return "JFET-input series-feedback pair: megohm input, gain 1 + RF/RS1 whatever IDSS and VP";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_jfet(k); }
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    return pair_reference(*this, q, c, k);
  }

  // Design (common practice for the pair): the JFET at 15 to 50 % of the nominal IDSS, its
  // source where the gate at ground puts it or lifted by a divider to half or most of the
  // output's DC (the DC gain from the source to the output falls toward one, and VGS's spread
  // with it); the gate resistance from the input impedance asked; the output halfway up the
  // supply; the rest from the shared feedback step.
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    if ((g.gain < 1.5 && !g.probe) || !q.paired) return;
    const auto& j = q.jfet;
    const auto& t2 = q.bjt2;
    const double vcc = c.supply_v;
    const double veb2 = t2.vt_v * std::log(2e-3 / t2.is_a);
    const double vo = 0.5 * (vcc - t2.vce_sat_v);
    std::vector<double> rgs = gate_resistors(shelf, g.zin_min_ohm);
    if (rgs.size() > 2) rgs = {rgs.front(), rgs[rgs.size() / 2]};
    if (g.breadth < 1.0 && rgs.size() > 1) rgs.resize(1);
    for (double frac : {0.15, 0.3, 0.5}) {
      const double i1 = frac * j.idss_a, vgs = devices::jfet_vgs_for_current(j, i1);
      for (double vs : {-vgs, 0.5 * vo, 0.8 * vo}) {
        const double vg = vs + vgs;
        if (vg < 0 || vcc - veb2 - vs < (vgs + j.vp_abs_v) + 1.0) continue;
        for (double rth : rgs) {
          Values v;
          if (vg < 0.05) {
            v[kBottom] = rth;
          } else {
            v[kTop] = nearest_one(shelf, rth * vcc / vg);
            v[kBottom] = nearest_one(shelf, rth * vcc / (vcc - vg));
            if (!(v[kTop] > 0) || !(v[kBottom] > 0)) continue;
          }
          pair_feedback_legs(v, shelf, g, c, PairPlan{i1, vs, vo, veb2}, emit);
        }
      }
    }
  }
};

}  // namespace

const Topology& jfet_fb_pair() {
  static const JfetFbPair t;
  return t;
}

}  // namespace shelfstage::stages
