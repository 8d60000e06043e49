// Tests of src/report/chain_view.cpp: a chain's stages analysed as the chain builds them, its
// warnings by stage, its figures stage by stage and whole, and its SPICE netlist, which
// ngspice runs to the chain's own figures (operating point, supply current, mid-band gain).
#include "shelfstage/report/chain_view.hpp"

#include <doctest/doctest.h>
#include <fmt/format.h>

#include <cmath>

#include "report_fixture.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/notation.hpp"
#include "support/lines.hpp"
#include "support/ngspice.hpp"

using namespace shelfstage;

namespace {

/// The fixture's chain request and its best design, evaluated.
struct ChainCase {
  synth::Spec spec;
  synth::Candidate chain;
};

const ChainCase& chain_case() {
  static const ChainCase cc = [] {
    ChainCase out;
    out.spec = test::chain_request();
    out.chain = test::design_one(out.spec, test::demo_inventory());
    return out;
  }();
  return cc;
}

std::string row_of(const std::string& text, const std::string& lead) {
  for (const std::string& l : test::lines_of(text))
    if (l.rfind(lead, 0) == 0) return l;
  return {};
}

}  // namespace

TEST_CASE("analyze_chain: one analysis per stage; after the first, the stage has no CIN of its own") {
  const auto& cc = chain_case();
  REQUIRE(cc.chain.is_chain());
  const auto analyses = report::analyze_chain(cc.chain);
  REQUIRE(analyses.size() == cc.chain.stages.size());
  for (std::size_t k = 0; k < analyses.size(); ++k) {
    INFO("stage ", k + 1);
    CHECK(analyses[k].stage.topology == cc.chain.stages[k].topology);
    bool has_cin = false;
    for (const auto& p : analyses[k].parts) has_cin |= p.name == "CIN";
    CHECK(has_cin == (k == 0));
  }
  // A single stage is not a chain.
  synth::Candidate single = cc.chain.stages.front();
  CHECK_THROWS_AS(report::analyze_chain(single), InputError);
  CHECK_THROWS_AS(report::chain_figures_text(single, cc.spec), InputError);
  CHECK_THROWS_AS(report::chain_spice(single), InputError);
}

TEST_CASE("chain_warnings: every stage's warnings, each led by its stage number") {
  std::vector<report::Analysis> stages(3);
  stages[0].warnings = {"R3 (RD) dissipates 0.3W"};
  stages[2].warnings = {"C2 (COUT) is polarised", "the transistor does not conduct"};
  const auto w = report::chain_warnings(stages);
  REQUIRE(w.size() == 3);
  CHECK(w[0] == "stage 1: R3 (RD) dissipates 0.3W");
  CHECK(w[1] == "stage 3: C2 (COUT) is polarised");
  CHECK(w[2] == "stage 3: the transistor does not conduct");
  CHECK(report::chain_warnings({}).empty());
}

TEST_CASE("chain_figures_text: each stage driven by the one before, the gain in dB as 20 log10 |A|") {
  const auto& cc = chain_case();
  const std::string text = report::chain_figures_text(cc.chain, cc.spec);
  const std::size_t n = cc.chain.stages.size();
  for (std::size_t k = 0; k < n; ++k) {
    const std::string row = row_of(text, fmt::format("  {} ", k + 1));
    INFO(row);
    REQUIRE(!row.empty());
    CHECK(row.find(std::string(cc.chain.stages[k].topology->name())) != std::string::npos);
    if (k > 0) CHECK(row.find(fmt::format("stage {}", k)) != std::string::npos);
  }
  // The last stage drives the request's load.
  CHECK(row_of(text, fmt::format("  {} ", n)).find(units::format_value(150, units::Unit::ohm) + " load") !=
        std::string::npos);
  // Decibels of a voltage ratio: 20 log10 |A| (IEC 60027-3), from the chain's exact gain.
  const std::string db = row_of(text, "  gain, dB");
  CHECK(db.find(fmt::format("{:.2f}", 20 * std::log10(std::abs(cc.chain.nominal.gain)))) != std::string::npos);
  // The gain the request asked for, 5, to within the spec's window at nominal.
  CHECK(std::abs(cc.chain.nominal.gain) == doctest::Approx(5).epsilon(cc.spec.gain_tol));
  // The band-edge losses are listed when the request has a band.
  CHECK(text.find("loss at 20Hz") != std::string::npos);
  CHECK(text.find("loss at 20kHz") != std::string::npos);
}

TEST_CASE("chain_spice: ngspice runs the netlist to the chain's exact operating point and gain") {
  const auto& cc = chain_case();
  const std::string netlist = report::chain_spice(cc.chain);
  const auto run = test::run_ngspice(netlist);
  INFO(run.output);
  CHECK(run.error_lines().empty());
  // The whole chain solved exactly (the figures the text shows as "exact") and ngspice's
  // solution of the netlist written agree: supply current and mid-band gain within 1 %.
  CHECK(run.get("supply_current") == doctest::Approx(cc.chain.nominal.supply_current_a).epsilon(0.01));
  CHECK(std::pow(10.0, run.get("gain_mid_db") / 20) == doctest::Approx(std::abs(cc.chain.nominal.gain)).epsilon(0.01));
  CHECK(run.get("f_low") == doctest::Approx(cc.chain.nominal.f_low_hz).epsilon(0.05));
  // Every transistor's terminals printed: three nets per stage at least, less the shared ones.
  int printed = 0;
  for (const auto& [name, v] : run.values) printed += name.rfind("v(", 0) == 0 ? 1 : 0;
  CHECK(printed >= 2 * static_cast<int>(cc.chain.stages.size()));
}
