// bjt-fb-pair-same: the two-transistor series-feedback pair of one polarity (NPN then NPN, or
// PNP then PNP), for a drawer that holds one type. Q1, a common emitter biased from a divider,
// drives the base of Q2 from its collector load RC1; Q2, a common emitter with its emitter
// resistor RE3 to ground bypassed by CE3 and its load RC2 from the rail, gives the output at
// its collector, fed back through RF to Q1's emitter, which returns to ground through RE1
// (unbypassed) and RE2 (bypassed by CE). Q2 inverts once more, so the loop is negative and the
// stage a non-inverting amplifier of gain 1 + RF / RE1 whatever either hFE; the DC operating
// point is held by the same loop. Q2's emitter sits a VBE below Q1's collector, which leaves
// Q1 one or two volts; without CE3 Q2's gain would be RC2 / RE3, a few, and the loop gain too
// small to matter. The closed form is shared with the other pairs (pair.hpp).
#include "pair.hpp"

namespace shelfstage::stages {
namespace {

using namespace detail;

// A role as the pairs share it, drawn at this form's own place.
constexpr Role with_spot(Role r, Spot at) {
  r.at = at;
  return r;
}

constexpr Role kRoles[] = {
    {"RB1", "R1", 'R', false, false, "", "", "supply to base: upper bias divider leg", {13, 6, true, 'l'}},
    {"RB2", "R2", 'R', false, false, "", "", "base to ground: lower bias divider leg", {13, 20, true, 'l'}},
    {"RC1", "R3", 'R', false, false, "", "", "supply to Q1's collector: drives Q2's base", {19, 6, true, 'l'}},
    {"RC2", "R4", 'R', false, false, "", "", "supply to Q2's collector: Q2's load", {26, 4, true, 'l'}},
    {"RF",
     "R5",
     'R',
     false,
     false,
     "",
     "",
     "output to Q1's emitter: the feedback (gain 1 + RF/RE1)",
     {22, 15, false, 'a'}},
    {"RE1", "R6", 'R', false, false, "", "", "emitter to x, unbypassed: sets the gain with RF", {19, 19, true, 'l'}},
    {"RE2", "R7", 'R', true, false, "", "", "x to ground, bypassed: lowers the DC gain", {19, 24, true, 'l'}},
    {"CE", "C2", 'C', true, true, "x", "0", "bypass across RE2", {22, 24, true, 'r'}, true},
    {"CIN", "C1", 'C', false, true, "base", "in", "input coupling", {10, 14, false, 'a'}},
    {"COUT", "C3", 'C', false, true, "collector2", "out", "output coupling", {32, 12, false, 'a'}},
    with_spot(pair_cf_role("emitter"), {22, 17, false, 'b'}),
    {"RE3", "R8", 'R', false, false, "", "", "Q2's emitter to ground: sets Q2's current", {26, 21, true, 'l'}},
    {"CE3", "C5", 'C', false, true, "emitter2", "0", "bypass across RE3: Q2's gain, the loop's", {29, 21, true, 'r'}},
};
static_assert(std::size(kRoles) == kPairRoles);

class BjtFbPairSame final : public FeedbackPair {
 public:
  BjtFbPairSame() : FeedbackPair(kRoles, {"base", "emitter", "collector"}, SecondDevice::same) {}
  std::string_view name() const override { return "bjt-fb-pair-same"; }
  std::string_view summary() const override {
    return "two-transistor series-feedback pair of one polarity: gain 1 + RF/RE1, for a drawer of one type";
  }
  bool accepts(devices::DeviceKind k) const override { return devices::is_bjt(k); }
  // Searched only when named: it costs a large electrolytic (CE3) and more pieces than the
  // complementary form, whose place it would otherwise take, and, meeting the gain window as a
  // single stage, it keeps the search from the chains that may score better (docs/physics.md,
  // "Feedback pairs").
  bool searched_by_default() const override { return false; }
  Values reference(const Transistor& q, const Conditions& c, const ReferenceKnobs& k) const override {
    return pair_reference(*this, q, c, k);
  }
  void propose(const Goal& g, const Transistor& q, const Conditions& c, const ValueSource& shelf,
               const std::function<void(const Values&)>& emit) const override {
    propose_bjt_pair(g, q, c, shelf, true, emit);
  }
};

}  // namespace

const Topology& bjt_fb_pair_same() {
  static const BjtFbPairSame t;
  return t;
}

}  // namespace shelfstage::stages
