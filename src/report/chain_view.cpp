// Chains for people and for ngspice: the stages analysed, the figures, the netlist.
#include "shelfstage/report/chain_view.hpp"

#include <cmath>
#include <fmt/format.h>

#include "shelfstage/circuit/spice.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/analysis.hpp"
#include "shelfstage/report/curves.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::report {

namespace {

using units::format_value;
using units::Unit;

std::string ohms(double v) { return v > 0 ? format_value(v, Unit::ohm) : std::string("\u2014"); }

}  // namespace

std::vector<Analysis> analyze_chain(const synth::Candidate& c) {
  if (!c.is_chain()) throw InputError(fmt::format("design '{}' is not a chain", c.id));
  std::vector<Analysis> analyses;
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    const auto& s = c.stages[k];
    const synth::StageSpread spread = synth::spread_of(s);
    analyses.push_back(analyze_stage(stage_under_test(s), &spread.first(), spread.second()));
    // After the first stage the previous COUT couples the stage: it has no CIN of its own.
    if (k > 0) std::erase_if(analyses.back().parts, [](const PartStress& p) { return p.name == "CIN"; });
  }
  return analyses;
}

std::vector<std::string> chain_warnings(const std::vector<Analysis>& stages) {
  std::vector<std::string> warnings;
  for (std::size_t k = 0; k < stages.size(); ++k)
    for (const auto& w : stages[k].warnings) warnings.push_back(fmt::format("stage {}: {}", k + 1, w));
  return warnings;
}

std::string chain_figures_text(const synth::Candidate& c, const synth::Spec& spec) {
  if (!c.is_chain()) throw InputError(fmt::format("design '{}' is not a chain", c.id));
  TextTable t({{"stage"},
               {"topology"},
               {"device"},
               {"driven from", Align::right},
               {"into", Align::right},
               {"gain", Align::right},
               {"worst", Align::right},
               {"Zin", Align::right},
               {"Zout", Align::right},
               {"bias", Align::right},
               {"swing pk", Align::right},
               {"supply", Align::right}});
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    const auto& s = c.stages[k];
    const auto& n = s.nominal;
    t.add_row({std::to_string(k + 1), std::string(s.topology->name()), device_text(s),
               k == 0 ? ohms(s.conditions.source_ohm) : fmt::format("stage {}", k),
               k + 1 == c.stages.size() ? ohms(s.conditions.load_ohm) + " load" : ohms(s.conditions.load_ohm),
               fixed3(n.gain), fmt::format("{}..{}", fixed3(s.worst.gain.min), fixed3(s.worst.gain.max)),
               ohms(n.zin_ohm), ohms(n.zout_ohm), format_value(n.bias_current_a, Unit::ampere),
               format_value(n.swing_peak_v, Unit::volt), format_value(n.supply_current_a, Unit::ampere)});
  }
  std::string out = "Stage by stage (closed form; each stage into the input impedance of the next):\n";
  out += t.render({"  "});
  const std::vector<stages::ChainStage> list = synth::chain_stages(c);
  const stages::Performance fast = stages::evaluate_chain(list, c.conditions, stages::Detail::full).whole;
  const auto& x = c.nominal;
  TextTable w({{""}, {"exact", Align::right}, {"cascade", Align::right}});
  auto hz = [](double f) { return f > 0 ? format_value(f, Unit::hertz) : std::string("none"); };
  w.add_row({"gain (source to load)", fixed3(x.gain), fixed3(fast.gain)});
  w.add_row({"gain, dB", fmt::format("{:.2f}", 20 * std::log10(std::abs(x.gain))),
             fmt::format("{:.2f}", 20 * std::log10(std::abs(fast.gain)))});
  w.add_row({"input impedance", ohms(x.zin_ohm), ohms(fast.zin_ohm)});
  w.add_row({"output impedance", ohms(x.zout_ohm), ohms(fast.zout_ohm)});
  w.add_row({"-3 dB low", hz(x.f_low_hz), hz(fast.f_low_hz)});
  w.add_row({"-3 dB high", hz(x.f_high_hz), hz(fast.f_high_hz)});
  w.add_row({"rated peak (within the THD bound)", format_value(x.swing_peak_v, Unit::volt),
             format_value(fast.swing_peak_v, Unit::volt)});
  w.add_row(
      {"THD at the requested level", fmt::format("{:.3g} %", 100 * x.thd), fmt::format("{:.3g} %", 100 * fast.thd)});
  w.add_row({"supply current", format_value(x.supply_current_a, Unit::ampere),
             format_value(fast.supply_current_a, Unit::ampere)});
  if (spec.band_hz) {
    w.add_row({fmt::format("loss at {}", format_value(spec.band_hz->first, Unit::hertz)),
               fmt::format("{:.2f} dB", x.loss_lo_db), fmt::format("{:.2f} dB", fast.loss_lo_db)});
    w.add_row({fmt::format("loss at {}", format_value(spec.band_hz->second, Unit::hertz)),
               fmt::format("{:.2f} dB", x.loss_hi_db), fmt::format("{:.2f} dB", fast.loss_hi_db)});
  }
  out +=
      "\nThe whole chain (exact: the chain's netlist solved as one circuit; cascade: the stages' closed forms\n"
      "multiplied, corners by the cascade rule):\n";
  out += w.render({"  "});
  out += fmt::format(
      "\nWorst-case gain {}..{} (the product of the stages' ranges over their device corners, part tolerances,\n"
      "supply and temperature, scaled by the exact-to-cascade ratio {:.4f}).\n",
      fixed3(c.worst.gain.min), fixed3(c.worst.gain.max), fast.gain != 0 ? x.gain / fast.gain : 1.0);
  return out;
}

std::string chain_spice(const synth::Candidate& c) {
  if (!c.is_chain()) throw InputError(fmt::format("design '{}' is not a chain", c.id));
  const std::vector<stages::ChainStage> list = synth::chain_stages(c);
  const circuit::Circuit net = stages::chain_netlist(list, c.conditions);
  circuit::SpiceOptions o;
  std::string names;
  for (const auto& s : c.stages) names += (names.empty() ? "" : " > ") + std::string(s.topology->name());
  o.title = fmt::format("shelfstage chain: {}, supply {} V, load {} ohm, source {} ohm", names,
                        format_value(c.conditions.negative_rail ? -c.conditions.supply_v : c.conditions.supply_v),
                        format_value(c.conditions.load_ohm), format_value(c.conditions.source_ohm));
  o.celsius = c.conditions.celsius;
  std::string nodes;
  for (const auto& el : net.elements()) {
    if (el.c.kind != circuit::ElementKind::jfet && el.c.kind != circuit::ElementKind::bjt) continue;
    for (std::size_t pin : el.c.pins) {
      const std::string n = circuit::spice_net(net, pin);
      if (n != "0" && nodes.find(" v(" + n + ")") == std::string::npos) nodes += fmt::format(" v({})", n);
    }
  }
  o.analyses = spice_run_lines(nodes);
  return circuit::to_spice(net, o);
}

}  // namespace shelfstage::report
