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
    pair_cf_role("emitter"),
};
static_assert(std::size(kRoles) == kCf + 1);

class BjtFbPair final : public FeedbackPair {
 public:
  BjtFbPair() : FeedbackPair(kRoles, {"base", "emitter", "collector"}) {}
  std::string_view name() const override { return "bjt-fb-pair"; }
  std::string_view summary() const override {
    return "two-transistor series-feedback pair, bipolar input: gain 1 + RF/RE1, little hFE in it";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_bjt(k); }
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    return pair_reference(*this, q, c, k);
  }

  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    propose_bjt_pair(g, q, c, shelf, false, emit);
  }
};

}  // namespace

const Topology& bjt_fb_pair() {
  static const BjtFbPair t;
  return t;
}

}  // namespace shelfstage::stages
