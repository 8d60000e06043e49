// The least phase margin a request asks of a feedback stage's loop (Spec::least_margin_deg),
// and the capacitor across RF the search fits from the shelf where a design falls short of it
// (synth/loop.cpp, compensate). Checked against ngspice's own double injection on the listed
// design's netlist (support/spice_loop.hpp), at the nominal piece and at Q1's and Q2's hFE
// limits: the margin a bench measurement would find.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "demo_shelf.hpp"
#include "fixture.hpp"
#include "shelfstage/stages/loop.hpp"
#include "shelfstage/synth/design.hpp"
#include "shelfstage/synth/stage_spread.hpp"
#include "support/ngspice.hpp"
#include "support/spice_loop.hpp"

using namespace shelfstage;

namespace {

// A request the demo shelf answers with complementary pairs whose loop, with a cable's
// 100 nF inside it, has about 93..95 degrees of margin (gain 3 into 2k2 from 12 V).
synth::Spec cabled_request(double least_margin) {
  synth::Spec s = test::basic_spec(3);
  s.load_ohm = 2.2e3;
  s.load_farads = 100e-9;
  s.zin_min_ohm = 47e3;
  s.source_ohm = 0;
  s.band_hz.reset();
  s.swing_vpp.reset();
  s.max_thd = 0.01;
  s.topologies = {"bjt-fb-pair"};
  s.stages_max = 1;
  s.top = 3;
  s.mc_samples = 0;
  s.least_margin_deg = least_margin;
  return s;
}

const synth::RolePart* part(const synth::Candidate& c, const std::string& role) {
  for (const auto& rp : c.parts)
    if (rp.role == role) return &rp;
  return nullptr;
}

// ngspice's loop of the design at one piece of each device, broken where the design's loop
// figures say (RF's end on Q2's collector, CF moved with it).
test::SpiceLoop spice_loop_of(const synth::Candidate& c, const stages::Transistor& q) {
  const stages::Topology& t = *c.topology;
  std::vector<std::string> moved;
  for (const char* role : {"RF", "CF"})
    if (const auto* rp = part(c, role)) moved.push_back(rp->designator);
  return test::spice_loop_gain(t.netlist(c.values, q, c.conditions), moved, std::string(t.feedback_loop()->net),
                               c.loop->f_mid_hz, c.conditions.celsius);
}

}  // namespace

TEST_CASE("the default margin needs no capacitor across RF; a larger one gets one from the shelf, and ngspice agrees") {
  const synth::Inventory inv = test::demo_shelf();
  // At the common 45 degrees these pairs need nothing more.
  const auto plain = synth::design(cabled_request(45), inv);
  REQUIRE_FALSE(plain.candidates.empty());
  for (const auto& c : plain.candidates) {
    CHECK(part(c, "CF") == nullptr);
    REQUIRE(c.loop.has_value());
    CHECK(c.loop->margin_deg.min >= 45);
    CHECK(c.loop->margin_deg.max < 100);  // so that the next request asks for more than they have
  }
  // Asked for 100 degrees, every listed pair carries a capacitor across RF, non-polarised and
  // rated for the rail, and holds the margin at every corner it was measured at.
  const auto held = synth::design(cabled_request(100), inv);
  REQUIRE_FALSE(held.candidates.empty());
  for (const auto& c : held.candidates) {
    CAPTURE(c.id);
    const auto* cf = part(c, "CF");
    REQUIRE(cf != nullptr);
    CHECK_FALSE(cf->polarised);
    CHECK((cf->rating == 0 || cf->rating >= 1.25 * 12));
    REQUIRE(c.loop.has_value());
    CHECK(c.loop->least_margin_deg == 100);
    CHECK(c.loop->margin_deg.min >= 100);
    CHECK(c.loop->corners >= 16);
    // The capacitor buys the margin: without it the same design falls short at nominal.
    stages::Values bare = c.values;
    bare[c.topology->role_index("CF")] = 0;
    const auto g = stages::loop_gain(*c.topology, bare, c.nominal_device, c.conditions, c.loop->f_mid_hz);
    REQUIRE(g.has_value());
    CHECK(g->phase_margin_deg < 100);
    // ngspice's own injection on the design's netlist: at the nominal pieces and at the hFE
    // limits of both devices (every pairing of Q1's and Q2's corner pieces), within 1.5
    // degrees of the design's figures and never below the margin asked for by more than that.
    const synth::StageSpread spread = synth::spread_of(c);
    std::vector<stages::Transistor> pieces = {c.nominal_device};
    if (&c == &held.candidates.front())  // the others at their nominal pieces alone (time)
      for (const auto& f : spread.corners()) pieces.push_back(synth::make_transistor(spread, f, c.conditions.celsius));
    for (const auto& q : pieces) {
      const test::SpiceLoop ng = spice_loop_of(c, q);
      const auto ours = stages::loop_gain(*c.topology, c.values, q, c.conditions, c.loop->f_mid_hz);
      REQUIRE(ours.has_value());
      REQUIRE(ng.crosses);
      MESSAGE(c.id << ": margin " << ours->phase_margin_deg << " deg, ngspice " << ng.margin_deg);
      CHECK(std::abs(ours->phase_margin_deg - ng.margin_deg) < 1.5);
      CHECK(ng.margin_deg > 100 - 1.5);
    }
  }
  // The capacitor is a piece: the compensated design scores that piece worse than the bare one
  // it came from would, and its id differs (a new design, kept apart).
  CHECK(held.candidates.front().id != plain.candidates.front().id);
}

TEST_CASE("a margin no capacitor on the shelf can give lists no design, and says why") {
  synth::Inventory inv = test::demo_shelf();
  // Only electrolytics and large film parts left: nothing small and non-polarised for CF.
  std::erase_if(inv.parts, [](const store::Part& p) { return p.kind == store::PartKind::capacitor && p.value < 1e-7; });
  synth::Spec spec = cabled_request(130);
  spec.explain_failure = false;
  const auto r = synth::design(spec, inv);
  for (const auto& c : r.candidates) {
    REQUIRE(c.loop.has_value());
    CHECK(c.loop->margin_deg.min >= 130);
  }
  if (r.candidates.empty()) CHECK(r.diagnosis.binding == "stability");
}
