// Tests of the report's curves against ngspice (the outside reference): the frequency response
// at the nominal piece (gain in dB and phase at frequencies across the band and its edges), the
// bias point, and the large-signal transfer with the capacitors held at their DC voltages
// (ngspice's own operating point and .dc sweep), for designs from the demo shelf in every
// topology, N and P. Plus the shape of the data: envelopes, corners, the safe region.
#include "shelfstage/report/curves.hpp"

#include <doctest/doctest.h>
#include <fmt/format.h>

#include <cmath>
#include <map>
#include <numbers>

#include "report_fixture.hpp"
#include "shelfstage/circuit/solver.hpp"
#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage;

namespace {

using Case = test::TopologyCase;

const synth::Inventory& inventory() {
  static const synth::Inventory inv = test::demo_inventory();
  return inv;
}

struct Designed {
  synth::Spec spec;
  synth::Candidate c;
};

const Designed& designed(const Case& k) {
  static std::map<std::string, Designed> cache;
  auto it = cache.find(k.topology);
  if (it == cache.end()) {
    Designed d;
    d.spec = test::request(k.topology, k.device, k.gain, k.supply_v, k.swing_vpp);
    d.c = test::design_one(d.spec, inventory());
    it = cache.emplace(k.topology, d).first;
  }
  return it->second;
}

/// The element name ngspice knows a component by (lower case, as it prints).
std::string spice_device(const circuit::Circuit& net) {
  for (const auto& el : net.elements())
    if (el.c.kind == circuit::ElementKind::jfet || el.c.kind == circuit::ElementKind::bjt) {
      std::string n = circuit::spice_name(el.c);
      for (char& ch : n) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
      return n;
    }
  return {};
}

double wrap180(double deg) { return deg - 360 * std::round(deg / 360); }

}  // namespace

TEST_CASE("frequency_response: the nominal curve matches ngspice's AC analysis of the same netlist") {
  for (const auto& k : test::kTopologyCases) {
    INFO(k.topology);
    const auto& d = designed(k);
    const auto r = report::frequency_response(d.c, d.spec, 12);
    REQUIRE(r.nominal.solved);
    REQUIRE(r.f_hz.size() == r.nominal.gain_db.size());
    // Whole decades that contain the band.
    CHECK(r.f_hz.front() <= 2.0 + 1e-9);
    CHECK(r.f_hz.back() >= 2e5 - 1e-6);
    CHECK(std::abs(std::log10(r.f_hz.front()) - std::round(std::log10(r.f_hz.front()))) < 1e-9);

    // ngspice at a few of the sweep's own frequencies: the low edge, mid-band, the high edge.
    const auto spread = synth::spread_of(d.c);
    const auto q = synth::make_transistor(spread, spread.nominal(), d.spec.temp_nominal_c());
    const auto net = d.c.topology->netlist(d.c.values, q, d.c.conditions);
    std::vector<std::size_t> idx;
    for (double f : {r.f_low_hz > 0 ? r.f_low_hz : 10.0, 1000.0, r.f_high_hz > 0 ? r.f_high_hz : 1e6}) {
      std::size_t best = 0;
      for (std::size_t i = 0; i < r.f_hz.size(); ++i)
        if (std::abs(std::log(r.f_hz[i] / f)) < std::abs(std::log(r.f_hz[best] / f))) best = i;
      idx.push_back(best);
    }
    circuit::SpiceOptions so;
    so.celsius = d.spec.temp_nominal_c();
    so.analyses.push_back(".control");
    for (std::size_t j = 0; j < idx.size(); ++j) {
      const std::string f = fmt::format("{:.9g}", r.f_hz[idx[j]]);
      so.analyses.push_back("ac lin 1 " + f + " " + f);
      so.analyses.push_back(fmt::format("let g{} = vdb(out)", j));
      so.analyses.push_back(fmt::format("let p{} = vp(out)", j));
      so.analyses.push_back(fmt::format("print g{}", j));
      so.analyses.push_back(fmt::format("print p{}", j));
    }
    so.analyses.push_back(".endc");
    const auto run = test::run_ngspice(circuit::to_spice(net, so));
    INFO(run.output);
    for (std::size_t j = 0; j < idx.size(); ++j) {
      const double g = run.get(fmt::format("g{}", j)), p = run.get(fmt::format("p{}", j)) * 180 / std::numbers::pi;
      CHECK(std::abs(r.nominal.gain_db[idx[j]] - g) < 0.02);
      CHECK(std::abs(wrap180(r.nominal.phase_deg[idx[j]] - p)) < 0.2);
    }
    // The envelope holds the nominal curve and every corner; each corner piece was swept.
    CHECK(r.corners.size() == spread.corners().size());
    for (std::size_t i = 0; i < r.f_hz.size(); ++i) {
      CHECK(r.gain_lo_db[i] <= r.nominal.gain_db[i] + 1e-12);
      CHECK(r.gain_hi_db[i] >= r.nominal.gain_db[i] - 1e-12);
      for (const auto& c : r.corners)
        if (c.solved) CHECK(c.gain_db[i] <= r.gain_hi_db[i] + 1e-12);
    }
    // The -3 dB points are 3.01 dB under the peak (a half-power point, by definition).
    if (r.f_low_hz > 0) {
      const auto again = report::frequency_response(d.c, d.spec, 48);
      CHECK(again.f_low_hz == doctest::Approx(r.f_low_hz).epsilon(0.03));
    }
    // Phase: read within (-180, 180] where the gain peaks; an inverting stage sits near 180.
    const auto peak = static_cast<std::size_t>(std::max_element(r.nominal.gain_db.begin(), r.nominal.gain_db.end()) -
                                               r.nominal.gain_db.begin());
    CHECK(r.nominal.phase_deg[peak] > -180);
    CHECK(r.nominal.phase_deg[peak] <= 180);
    if (d.c.nominal.gain < 0) CHECK(std::abs(std::abs(r.nominal.phase_deg[peak]) - 180) < 45);
    if (d.c.nominal.gain > 0) CHECK(std::abs(r.nominal.phase_deg[peak]) < 45);
  }
}

TEST_CASE("bias_spread: the nominal operating point matches ngspice's .op; corners, samples, safe region") {
  for (const auto& k : test::kTopologyCases) {
    INFO(k.topology);
    const auto& d = designed(k);
    const auto b = report::bias_spread(d.c, d.spec, 40);
    const auto spread = synth::spread_of(d.c);
    CHECK(b.corners.size() == spread.corners().size());
    CHECK(b.samples.size() + static_cast<std::size_t>(b.failed) == 40);
    const bool follower = d.c.topology->is_buffer();
    const auto names = d.c.topology->node_names();
    CHECK(b.node == std::string(follower ? names[1] : names[2]));

    const auto q = synth::make_transistor(spread, spread.nominal(), d.spec.temp_nominal_c());
    const auto net = d.c.topology->netlist(d.c.values, q, d.c.conditions);
    const std::string dev = spice_device(net);
    const bool jfet = devices::is_jfet(q.kind);
    circuit::SpiceOptions so;
    so.celsius = d.spec.temp_nominal_c();
    so.analyses = {".control",
                   "op",
                   fmt::format("print v({})", b.node),
                   fmt::format("let iq = @{}[{}]", dev, jfet ? "id" : "ic"),
                   "print iq",
                   ".endc"};
    const auto run = test::run_ngspice(circuit::to_spice(net, so));
    INFO(run.output);
    CHECK(b.nominal.v == doctest::Approx(run.get(fmt::format("v({})", b.node))).epsilon(1e-3));
    CHECK(b.nominal.i_a == doctest::Approx(std::abs(run.get("iq"))).epsilon(1e-3));

    // Every stage here is on a positive rail (P devices turned over, as one battery powers
    // them): node voltages and the safe region lie between ground and the rail.
    CHECK(b.nominal.v > 0);
    CHECK(b.nominal.v < d.spec.supply_hi_v);
    REQUIRE(!b.safe_region.empty());
    for (const auto& [v, i] : b.safe_region) {
      CHECK(v >= -1e-12);
      CHECK(v <= d.spec.supply_hi_v + 1e-12);
      CHECK(i >= 0);
    }
    // The cut-off rule (DOMAIN: the output rises until the current reaches zero, about
    // ID x RAC): the region starts at the current that gives the requested peak across RAC.
    double i_lo = 1e9;
    for (const auto& pt : b.safe_region) i_lo = std::min(i_lo, pt.second);
    const auto& t = *d.c.topology;
    auto role = [&](const char* n) {
      const auto i = t.role_index(n);
      return i < t.roles().size() ? d.c.values[i] : 0.0;
    };
    const double r_ac =
        stages::par(follower ? role(jfet ? "RS" : "RE") : role(jfet ? "RD" : "RC"), d.c.conditions.load_ohm);
    CHECK(i_lo == doctest::Approx(k.swing_vpp / 2 / r_ac).epsilon(1e-9));
    // The synthesizer promised the swing at nominal, so the nominal point is safe.
    CHECK(b.nominal.safe);
  }
  CHECK_THROWS_AS(report::bias_spread(designed(test::kTopologyCases[0]).c, designed(test::kTopologyCases[0]).spec, -1),
                  InputError);
}

TEST_CASE("transfer_curve: matches ngspice's .dc sweep of the stage with its capacitors held") {
  for (const auto& k : test::kTopologyCases) {
    INFO(k.topology);
    const auto& d = designed(k);
    const auto tr = report::transfer_curve(d.c, d.spec);
    REQUIRE(tr.v_in.size() == tr.v_out.size());
    CHECK(tr.rated_peak_v == doctest::Approx(k.swing_vpp / 2));  // half the requested swing
    CHECK(tr.gain == doctest::Approx(d.c.nominal.gain).epsilon(0.02));

    // ngspice: the operating point of the real netlist, then every capacitor replaced by a
    // source at the voltage ngspice found across it, and the signal source swept.
    const auto spread = synth::spread_of(d.c);
    const auto q = synth::make_transistor(spread, spread.nominal(), d.spec.temp_nominal_c());
    const auto net = d.c.topology->netlist(d.c.values, q, d.c.conditions);
    circuit::SpiceOptions so;
    so.celsius = d.spec.temp_nominal_c();
    so.analyses = {".control", "op"};
    for (std::size_t v = 1; v < net.net_count(); ++v) so.analyses.push_back("print v(" + net.net_name(v) + ")");
    so.analyses.push_back(".endc");
    const auto op = test::run_ngspice(circuit::to_spice(net, so));
    auto volt = [&](std::size_t v) { return v == 0 ? 0.0 : op.get("v(" + net.net_name(v) + ")"); };
    circuit::OperatingPoint at_ngspice;
    for (std::size_t v = 0; v < net.net_count(); ++v) at_ngspice.node_v.push_back(volt(v));
    const circuit::Circuit h = circuit::with_capacitors_held(net, at_ngspice);
    const double in_peak = tr.rated_peak_v / std::abs(tr.gain);
    const std::vector<double> xs = {-2 * in_peak, -in_peak, -0.5 * in_peak, 0.5 * in_peak, in_peak, 2 * in_peak};
    circuit::SpiceOptions sd;
    sd.celsius = d.spec.temp_nominal_c();
    sd.analyses.push_back(".control");
    for (std::size_t j = 0; j < xs.size(); ++j) {
      sd.analyses.push_back(fmt::format("dc vsig {0:.9g} {0:.9g} 1", xs[j]));
      sd.analyses.push_back(fmt::format("let o{} = v(out)", j));
      sd.analyses.push_back(fmt::format("print o{}", j));
    }
    sd.analyses.push_back(".endc");
    const auto run = test::run_ngspice(circuit::to_spice(h, sd));
    INFO(run.output);
    for (std::size_t j = 0; j < xs.size(); ++j) {
      // Ours at the same source voltage, interpolated between the 161 steps of its sweep.
      std::size_t i = 1;
      while (i + 1 < tr.v_in.size() && tr.v_in[i] < xs[j]) ++i;
      const double t = (xs[j] - tr.v_in[i - 1]) / (tr.v_in[i] - tr.v_in[i - 1]);
      const double ours = tr.v_out[i - 1] + t * (tr.v_out[i] - tr.v_out[i - 1]);
      const double theirs = run.get(fmt::format("o{}", j));
      // The interpolation over 1/32 of the rated input peak adds a little where the curve bends.
      CHECK(std::abs(ours - theirs) < 0.01 + 0.02 * std::abs(theirs));
    }
    // At the rated peak the sine comes out at about the rated peak; doubled, it grows (one
    // half-cycle a little more than twice with a square-law device, less where it clips).
    double rated = 0, over = 0;
    for (double v : tr.out_rated) rated = std::max(rated, std::abs(v));
    for (double v : tr.out_over) over = std::max(over, std::abs(v));
    CHECK(rated == doctest::Approx(tr.rated_peak_v).epsilon(0.15));
    CHECK(over > rated);
    CHECK(over <= 2 * rated * 1.25);
  }
}

TEST_CASE("response_text: the terminal plot of the response names its -3 dB points") {
  const auto& d = designed(test::kTopologyCases[0]);
  const auto r = report::frequency_response(d.c, d.spec);
  const std::string s = report::response_text(r, 60);
  CHECK(s.find("dB") != std::string::npos);
  CHECK(s.find("requested band") != std::string::npos);
  CHECK(s.find("device corners") != std::string::npos);
  CHECK(s.find(units::format_value(r.f_low_hz, units::Unit::hertz)) != std::string::npos);
  CHECK(s.find("1k") != std::string::npos);
}

TEST_CASE("stage_under_test: the candidate's parts as the analysis takes them") {
  const auto& d = designed(test::kTopologyCases[3]);
  const auto s = report::stage_under_test(d.c);
  CHECK(s.topology == d.c.topology);
  CHECK(s.device == d.c.device.name);
  REQUIRE(s.parts.size() == d.c.parts.size());
  for (std::size_t i = 0; i < s.parts.size(); ++i) {
    CHECK(s.parts[i].designator == d.c.parts[i].designator);
    CHECK(s.parts[i].recipe == d.c.parts[i].recipe);
    CHECK(s.parts[i].polarised == d.c.parts[i].polarised);
    CHECK(!s.parts[i].tol.empty());
  }
}
