// The design report of a chain: the whole chain first (its figures, the response of the
// whole circuit over every stage's corner pieces), then each stage as the chain builds it
// (schematic with the chain's designators, bias spread, parts and ratings), the pick list
// of every stage together, and the cautions.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cctype>
#include <set>

#include "html_parts.hpp"
#include "shelfstage/synth/cautions.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/chain_view.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/stages/chain.hpp"

namespace shelfstage::report::html {

namespace {

/// Every id="..." in a piece of the page gets a prefix, and so does every reference to it
/// (#id in url(), href): the stages' sections and plots repeat the single-stage ids.
std::string prefix_ids(std::string h, const std::string& prefix) {
  std::set<std::string> ids;
  for (std::size_t at = h.find("id=\""); at != std::string::npos; at = h.find("id=\"", at + 4)) {
    const std::size_t end = h.find('"', at + 4);
    if (end == std::string::npos) break;
    ids.insert(h.substr(at + 4, end - at - 4));
  }
  std::string out;
  out.reserve(h.size() + 64);
  for (std::size_t i = 0; i < h.size();) {
    bool done = false;
    for (const char* lead : {"id=\"", "#"}) {
      const std::string_view l(lead);
      if (h.compare(i, l.size(), l) != 0) continue;
      const std::size_t start = i + l.size();
      std::size_t end = start;
      while (end < h.size() && (std::isalnum(static_cast<unsigned char>(h[end])) || h[end] == '-' || h[end] == '_'))
        ++end;
      const std::string name = h.substr(start, end - start);
      // A reference ends the name at a quote or a parenthesis (not a colour such as #1d2b3a;).
      if (!name.empty() && ids.count(name) && end < h.size() && (h[end] == '"' || h[end] == ')')) {
        out += std::string(l) + prefix + name;
        i = end;
        done = true;
        break;
      }
    }
    if (!done) out += h[i++];
  }
  return out;
}

/// What the chain asks of one stage: its load and source as the chain sets them, the peak
/// it must pass on (the requested peak over the gain after it).
synth::Spec stage_spec(const synth::Spec& spec, const synth::Candidate& chain, std::size_t k) {
  synth::Spec s = spec;
  const auto& st = chain.stages[k];
  s.load_ohm = st.conditions.load_ohm;
  s.source_ohm = st.conditions.source_ohm;
  s.gain = std::abs(st.nominal.gain);
  double after = 1.0;
  for (std::size_t j = k + 1; j < chain.stages.size(); ++j) after *= std::abs(chain.stages[j].nominal.gain);
  if (spec.swing_vpp && after > 0) s.swing_vpp = *spec.swing_vpp / after;
  s.topologies = {std::string(st.topology->name())};
  return s;
}

std::string chain_header(const ReportInput& in, const std::vector<std::string>& cautions) {
  const auto& c = in.candidate;
  const auto& p = c.nominal;
  std::string h = "<header class=\"top\">";
  h += fmt::format("<h1>Design <span class=\"id\">{}</span>: a chain of {} stages</h1>", esc(in.id), c.stages.size());
  h += fmt::format("<p>{} ({})</p>", esc(c.topology_name()), esc(device_text(c)));
  h += fmt::format("<p class=\"muted\">Request: {}</p>", esc(spec_line(in.spec)));
  h += fmt::format("<p class=\"muted\">Kept {}; every figure below recomputed from the device list as it is now.</p>",
                   esc(in.created));
  const auto cards =
      figure_cards(p, c.yield, {signed3(c.worst.gain.min) + " \u2026 " + signed3(c.worst.gain.max), "worst-case gain"});

  h += hazard_box(cautions);
  return h + card_strip(cards) + "</header>";
}

std::string stages_section(const ReportInput& in) {
  const auto& c = in.candidate;
  std::vector<std::vector<std::string>> rows;
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    const auto& s = c.stages[k];
    const auto& n = s.nominal;
    rows.push_back({fmt::format("{}", k + 1), std::string(s.topology->name()), device_text(s),
                    k == 0 ? ohms(s.conditions.source_ohm) : fmt::format("stage {}", k),
                    ohms(s.conditions.load_ohm) + (k + 1 == c.stages.size() ? " (load)" : ""), signed3(n.gain),
                    range_text(s.worst.gain, signed3), ohms(n.zin_ohm), ohms(n.zout_ohm), amps(n.bias_current_a),
                    volts(n.swing_peak_v), amps(n.supply_current_a)});
  }
  std::string h = "<section id=\"stages\"><h2>Stages</h2>";
  h += table({"#stage", "topology", "device", "driven from", "into", "#gain", "worst gain", "#Zin", "#Zout", "#bias",
              "#swing peak", "#supply"},
             rows);
  h += "<p class=\"muted\">Each stage in the conditions the chain puts it in: driven from the previous stage's "
       "output, loaded by the next stage's input impedance (the last by the load). One coupling capacitor joins two "
       "stages: the earlier stage's COUT. Designators carry the stage in the hundreds (R203 is R3 of stage 2). The "
       "chain's worst-case gain is the product of the stages' ranges (their pieces and parts are independent), "
       "scaled by the ratio of the whole circuit's exact gain to the cascade's.</p>";
  std::vector<std::vector<std::string>> fig = {
      {"gain (V/V)", signed3(c.nominal.gain), range_text(c.worst.gain, signed3)},
      {"input impedance", ohms(c.nominal.zin_ohm), range_text(c.worst.zin, ohms)},
      {"output impedance", ohms(c.nominal.zout_ohm), range_text(c.worst.zout, ohms)},
      {"\u22123 dB low", hertz(c.nominal.f_low_hz), "\u2014"},
      {"\u22123 dB high", hertz(c.nominal.f_high_hz), "\u2014"},
      {"rated peak (within the THD bound)", volts(c.nominal.swing_peak_v), range_text(c.worst.swing_peak, volts)},
      {"THD at the requested level", fmt::format("{:.2g} %", c.nominal.thd * 100),
       range_text(c.worst.thd, [](double v) { return fmt::format("{:.2g} %", v * 100); })},
      {"input noise", format_value(c.nominal.noise_v_rthz, Unit::volt) + "/\u221aHz", "\u2014"},
      {"supply current", amps(c.nominal.supply_current_a), range_text(c.worst.supply_current, amps)},
  };
  h += "<h3>The whole chain</h3>" + table({"", "exact", "worst case"}, fig);
  h += "<p class=\"muted\">Exact: the whole chain's netlist solved as one circuit by modified nodal analysis.</p>";
  return h + "</section>";
}

}  // namespace

std::string chain_html_report(const ReportInput& in) {
  const auto& c = in.candidate;
  if (!c.is_chain()) throw InputError(fmt::format("report: design '{}' is not a chain", in.id));
  const Response r = frequency_response(c, in.spec);

  // Each stage as the chain builds it.
  const std::vector<Analysis> analyses = analyze_chain(c);
  const std::vector<std::string> warnings = chain_warnings(analyses);
  std::vector<std::string> cautions = c.cautions;
  std::string stage_html;
  for (std::size_t k = 0; k < c.stages.size(); ++k) {
    ReportInput sin = in;
    sin.spec = stage_spec(in.spec, c, k);
    sin.candidate = c.stages[k];
    sin.pick.reset();
    const auto& s = sin.candidate;
    const Analysis& a = analyses[k];
    synth::take_hazard_caution(cautions, a.cautions);
    const bool opamp = s.device.kind == devices::DeviceKind::opamp;
    const BiasSpread b = opamp ? BiasSpread{} : bias_spread(s, sin.spec, in.bias_samples);
    std::string h = fmt::format("<section id=\"stage\"><h2>Stage {}: {} with {}</h2><p>{}</p></section>", k + 1,
                                esc(s.topology->name()), esc(device_text(s)), esc(s.topology->summary()));
    h += schematic_section(sin);
    h += opamp ? opamp_bias_note(sin) : bias_section(sin, b);
    h += parts_section(sin, a);
    stage_html += prefix_ids(h, fmt::format("s{}-", k + 1));
  }

  std::string h = page_start(in, fmt::format("Design {}: chain {}", in.id, c.topology_name()));
  h += chain_header(in, cautions);
  h += stages_section(in);
  h += response_section(in, r);
  h += stage_html;
  h += pick_section(in);
  h += cautions_block(warnings, cautions);
  return h + page_end(in);
}

}  // namespace shelfstage::report::html
