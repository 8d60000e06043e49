// `shelfstage show ID`: the full analysis of a kept design, recomputed from today's device list.
#include <fmt/format.h>

#include <algorithm>
#include <memory>
#include <optional>

#include "commands.hpp"
#include "kept_design.hpp"
#include "stage_view.hpp"
#include "shelfstage/synth/cautions.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/analysis.hpp"
#include "shelfstage/report/chain_view.hpp"
#include "shelfstage/report/curves.hpp"
#include "shelfstage/report/design_json.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/store/designs.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::cli {

namespace {

using units::format_value;
using units::Unit;

/// The options of `show`.
struct ShowOptions {
  std::string id;
  std::optional<std::string> spice;  ///< --spice FILE: the netlist for ngspice
  bool plot = false;                 ///< --plot: the frequency response as a terminal plot
};

/// A combination's tolerance for people: "5%", "3.2%" or "-10/+20%" (two significant digits).
std::string range_text(const synth::Range& r, std::string (*format)(double)) {
  if (r.empty) return "—";
  return fmt::format("{} .. {}", format(r.min), format(r.max));
}

std::string volts(double v) { return format_value(v, Unit::volt); }
std::string amps(double v) { return format_value(v, Unit::ampere); }
std::string ohms(double v) { return format_value(v, Unit::ohm); }
std::string hertz(double v) { return v > 0 ? format_value(v, Unit::hertz) : "none"; }

// An op-amp's stress beside its ratings (synth::DeviceStress NOTES): its supply span against
// 80 % of its absolute maximum and within its operating range, its differential input, its
// dissipation against half its package's rating derated to the ambient.
void opamp_stress_rows(report::TextTable& t, const synth::Candidate& c, const synth::Spec& spec) {
  const auto& w = c.worst;
  const auto& r = c.device.ratings;
  const auto& o = c.device.opamp;
  const std::string u(c.topology->device_designator());
  const double k = spec.split_supply ? 2.0 : 1.0;
  const synth::Range span{k * spec.supply_lo_v, k * spec.supply_hi_v, false};
  t.add_row({fmt::format("{} supply span V+ - V- (allowed {}{})", u,
                         r.v_max_v ? volts(synth::opamp_span_share(o) * *r.v_max_v) + " absolute, " : "",
                         o.vs_max_v > 0 ? fmt::format("{}..{} operating", volts(o.vs_min_v), volts(o.vs_max_v))
                                        : std::string("operating range not stated")),
             range_text(span, volts)});
  t.add_row(
      {fmt::format("{} differential input{}", u,
                   r.v_rev_max_v ? fmt::format(" (allowed {})", volts(synth::kDeviceVoltageShare * *r.v_rev_max_v))
                                 : std::string(" (rating not stated)")),
       range_text(w.device_rev, volts)});
  t.add_row({fmt::format("{} dissipation{}", u,
                         r.p_max_w ? fmt::format(" (allowed {})",
                                                 units::format_value(synth::kDevicePowerShare * w.device_p_allowed.min,
                                                                     Unit::watt))
                                   : std::string(" (rating not stated)")),
             range_text(w.device_p, [](double v) { return units::format_value(v, Unit::watt); })});
}

std::string worst_text(const synth::Candidate& c, const synth::Spec& spec) {
  const auto& w = c.worst;
  const auto names = report::node_labels(*c.topology);
  std::string out = fmt::format(
      "Worst case over {} evaluations (closed form: device corners, part tolerances at their bounds, supply {}, "
      "{}):\n",
      w.evaluations,
      spec.supply_lo_v == spec.supply_hi_v ? volts(spec.supply_lo_v)
                                           : fmt::format("{}..{}", volts(spec.supply_lo_v), volts(spec.supply_hi_v)),
      spec.temp_c ? fmt::format("{:g}..{:g} °C", spec.temp_c->first, spec.temp_c->second)
                  : fmt::format("{:g} °C", spec.temp_nominal_c()));
  report::TextTable t({{""}, {"min .. max", report::Align::right}});
  t.add_row({"gain", range_text(w.gain, report::fixed3)});
  t.add_row({report::device_current_name(*c.topology), range_text(w.bias_current, amps)});
  t.add_row({names[0], range_text(w.v_in, volts)});
  t.add_row({names[1], range_text(w.v_common, volts)});
  t.add_row({names[2], range_text(w.v_out, volts)});
  t.add_row({fmt::format("rated peak (THD {:g} % or less)", 100 * spec.max_thd), range_text(w.swing_peak, volts)});
  if (!w.thd.empty)
    t.add_row({fmt::format("THD at {} peak", volts(spec.swing_vpp ? *spec.swing_vpp / 2 : 1.0)),
               range_text(w.thd, [](double v) { return fmt::format("{:.3g} %", 100 * v); })});
  t.add_row({"input impedance", range_text(w.zin, ohms)});
  t.add_row({"output impedance", range_text(w.zout, ohms)});
  t.add_row({"-3 dB low", range_text(w.f_low, hertz)});
  t.add_row({"-3 dB high", range_text(w.f_high, hertz)});
  t.add_row({"supply current", range_text(w.supply_current, amps)});
  if (!w.device_v.empty && c.device.kind == devices::DeviceKind::opamp) {
    opamp_stress_rows(t, c, spec);
  } else if (!w.device_v.empty) {
    // The transistor's stress beside its ratings (80 % of a voltage, half the derated dissipation).
    const auto& r = c.device.ratings;
    const bool jfet = devices::is_jfet(c.device.kind);
    auto of = [](const std::optional<double>& rating, const std::string& allowed) {
      return rating ? fmt::format(" (allowed {})", allowed) : std::string(" (rating not stated)");
    };
    t.add_row({fmt::format("Q1 {} (the rail when cut off){}", jfet ? "VDS" : "VCE",
                           of(r.v_max_v, r.v_max_v ? volts(synth::kDeviceVoltageShare * *r.v_max_v) : "")),
               range_text(w.device_v, volts)});
    t.add_row({fmt::format("Q1 {} reverse{}", jfet ? "gate-source" : "emitter-base",
                           of(r.v_rev_max_v, r.v_rev_max_v ? volts(synth::kDeviceVoltageShare * *r.v_rev_max_v) : "")),
               range_text(w.device_rev, volts)});
    t.add_row({fmt::format("Q1 dissipation{}",
                           of(r.p_max_w, r.p_max_w ? units::format_value(
                                                         synth::kDevicePowerShare * w.device_p_allowed.min, Unit::watt)
                                                   : "")),
               range_text(w.device_p, [](double v) { return units::format_value(v, Unit::watt); })});
  }
  if (c.device2 && !w.device2_v.empty) {
    // A pair's Q2 the same way, its dissipation against the rating at the warmest ambient.
    const auto& r = c.device2->ratings;
    const double warmest = spec.temp_c ? spec.temp_c->second : spec.temp_nominal_c();
    t.add_row({fmt::format("Q2 VCE (the rail when cut off){}",
                           r.v_max_v ? fmt::format(" (allowed {})", volts(synth::kDeviceVoltageShare * *r.v_max_v))
                                     : std::string(" (rating not stated)")),
               range_text(w.device2_v, volts)});
    t.add_row({fmt::format("Q2 dissipation{}",
                           r.p_max_w ? fmt::format(" (allowed {})",
                                                   units::format_value(synth::kDevicePowerShare * r.p_max_at(warmest),
                                                                       Unit::watt))
                                     : std::string(" (rating not stated)")),
               range_text(w.device2_p, [](double v) { return units::format_value(v, Unit::watt); })});
  }
  if (spec.band_hz) {
    t.add_row({fmt::format("loss at {}", format_value(spec.band_hz->first, Unit::hertz)),
               range_text(w.loss_lo_db, [](double d) { return fmt::format("{:.2f} dB", d); })});
    t.add_row({fmt::format("loss at {}", format_value(spec.band_hz->second, Unit::hertz)),
               range_text(w.loss_hi_db, [](double d) { return fmt::format("{:.2f} dB", d); })});
  }
  out += t.render({"  "});
  return out;
}

std::string yield_text(const synth::Candidate& c, const synth::Spec& spec) {
  if (!c.yield || spec.mc_samples <= 0) return "Yield: not computed (no Monte Carlo samples asked for).\n";
  return fmt::format(
      "Yield: {:.0f} % of {} Monte Carlo builds (pieces from the device spread, parts uniform within their "
      "tolerance, seed {}) keep the gain within ±{:g} % of {} and meet every other limit of the request.\n",
      *c.yield * 100, spec.mc_samples, spec.seed, spec.gain_tol * 100, report::fixed3(spec.gain));
}

// The JSON document of `show`: the design, its analysis, cautions, and the response with --plot.
report::Json show_json(const ShowOptions& o, const store::SavedDesign& saved, const synth::Spec& spec,
                       const synth::Candidate& c, const report::Json& analysis,
                       const std::vector<std::string>& cautions) {
  report::Json doc;
  doc["schema"] = 1;
  doc["id"] = saved.id;
  doc["created"] = saved.created;
  doc["spec"] = report::spec_json(spec);
  doc["candidate"] = report::candidate_json(c);
  doc["analysis"] = analysis;
  doc["cautions"] = cautions;
  doc["spice"] = o.spice ? report::Json(*o.spice) : report::Json(nullptr);
  if (o.plot) {
    const report::Response r = report::frequency_response(c, spec);
    doc["response"] = {
        {"f_hz", r.f_hz}, {"gain_db", r.nominal.gain_db}, {"gain_lo_db", r.gain_lo_db}, {"gain_hi_db", r.gain_hi_db}};
  }
  return doc;
}

// A chain: the stages side by side and the whole, then each stage's parts and their stress.
void show_chain(const ShowOptions& o, Context& ctx, const store::SavedDesign& saved, const synth::Spec& spec,
                const synth::Candidate& c) {
  const std::vector<report::Analysis> analyses = report::analyze_chain(c);
  if (o.spice) write_text_file("--spice", *o.spice, report::chain_spice(c));
  if (ctx.global.json) {
    report::Json list = report::Json::array();
    for (const auto& a : analyses) {
      report::Json j = report::analysis_json(a);
      j.erase("schema");
      list.push_back(std::move(j));
    }
    print_json(ctx, show_json(o, saved, spec, c, {{"stages", list}}, c.cautions));
    return;
  }
  ctx.out << fmt::format("Design {} (kept {}): a chain of {} stages, {}\n", saved.id, saved.created, c.stages.size(),
                         c.topology_name());
  for (std::size_t k = 0; k < c.stages.size(); ++k)
    ctx.out << fmt::format("  stage {}: {} with {}: {}\n", k + 1, c.stages[k].topology->name(),
                           report::device_text(c.stages[k]), c.stages[k].topology->summary());
  ctx.out << "Request: " << report::spec_line(spec) << "\n\n";
  ctx.out << report::chain_figures_text(c, spec) << "\n";
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    ctx.out << fmt::format("Stage {} ({}):\n", k + 1, c.stages[k].topology->name());
    ctx.out << report::parts_text(analyses[k]) << "\n";
  }
  if (const std::string loop = report::loop_text(c); !loop.empty()) ctx.out << loop << "\n";
  ctx.out << yield_text(c, spec);
  print_list(ctx.out, "Warnings", report::chain_warnings(analyses));
  print_list(ctx.out, "Cautions", c.cautions);
  if (o.plot) ctx.out << "\n" << report::response_text(report::frequency_response(c, spec));
  if (o.spice)
    ctx.out << fmt::format("\nSPICE netlist of the whole chain written to {} (run it with: ngspice -b {}).\n", *o.spice,
                           *o.spice);
}

void run_show(const ShowOptions& o, Context& ctx) {
  auto db = ctx.open_database();
  KeptDesign kept = load_kept(db, o.id);
  const store::SavedDesign& saved = kept.saved;
  const synth::Spec& spec = kept.spec;
  synth::Candidate& c = kept.candidate;
  synth::evaluate_candidate(c, spec);
  if (c.is_chain()) {
    show_chain(o, ctx, saved, spec, c);
    return;
  }

  const report::StageUnderTest stage = report::stage_under_test(c);
  const synth::StageSpread spread = synth::spread_of(c);
  const report::Analysis a = report::analyze_stage(stage, &spread.first(), spread.second());
  if (o.spice) write_spice(*o.spice, stage);

  // The kept design's cautions, and the hazard caution of the analysis when the design's
  // own list lacks one.
  std::vector<std::string> cautions = c.cautions;
  synth::take_hazard_caution(cautions, a.cautions);

  if (ctx.global.json) {
    report::Json analysis = report::analysis_json(a);
    analysis.erase("schema");
    print_json(ctx, show_json(o, saved, spec, c, analysis, cautions));
    return;
  }

  const auto& t = *c.topology;
  ctx.out << fmt::format("Design {} (kept {}): {} with {}{}{}\n", saved.id, saved.created, t.name(), c.device.name,
                         c.piece ? " [measured piece " + c.piece->label + "]" : "",
                         c.device2 ? " and " + c.device2->name + " (Q2)" : "");
  ctx.out << fmt::format("  {}\n", t.summary());
  ctx.out << "Request: " << report::spec_line(spec) << "\n\n";
  ctx.out << report::parts_text(a) << "\n";
  ctx.out << report::figures_text(a) << "\n";
  ctx.out << worst_text(c, spec) << "\n";
  if (const std::string loop = report::loop_text(c); !loop.empty()) ctx.out << loop << "\n";
  ctx.out << yield_text(c, spec);
  print_list(ctx.out, "Warnings", a.warnings);
  print_list(ctx.out, "Cautions", cautions);
  if (const std::string corners = report::corners_text(a); !corners.empty()) ctx.out << "\n" << corners;
  if (o.plot) ctx.out << "\n" << report::response_text(report::frequency_response(c, spec));
  if (o.spice)
    ctx.out << fmt::format("\nSPICE netlist written to {} (run it with: ngspice -b {}).\n", *o.spice, *o.spice);
}

}  // namespace

void setup_show(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<ShowOptions>();
  CLI::App* cmd =
      parent.add_subcommand("show", "The full analysis of a kept design: bias, signal, worst case, ratings");
  cmd->add_option("ID", o->id, "Design id from `shelfstage design` (or its first four or more characters)")
      ->type_name("")
      ->required();
  cmd->add_flag("--plot", o->plot,
                "Also print the frequency response in the terminal: nominal, the device corners' envelope, the band");
  cmd->add_option("--spice", o->spice, "Also write the stage's SPICE netlist (with .op and .ac) to FILE for ngspice")
      ->type_name("FILE");
  cmd->footer(
      "Recomputes the design from the device list as it is now: the nominal figures from the\n"
      "netlist solved exactly and from the closed form (both shown where they differ by more\n"
      "than 1 %), the worst case over the device corners, part tolerances, supply and\n"
      "temperature, the Monte Carlo yield, the stress of every part against its rating\n"
      "(resistors at most half their rating, common practice), cautions, and the figures at\n"
      "each corner piece of the device.");
  cmd->callback([o, &ctx] { run_show(*o, ctx); });
}

}  // namespace shelfstage::cli
