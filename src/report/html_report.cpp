// The design report as one self-contained HTML file: the document skeleton and its print
// stylesheet, and each section built from the analysis, the curves and the drawing layer.
#include "shelfstage/report/html_report.hpp"

#include "html_parts.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <optional>

#include "shelfstage/draw/palette.hpp"
#include "shelfstage/draw/plot.hpp"
#include "shelfstage/draw/svg.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/analysis.hpp"
#include "shelfstage/report/curves.hpp"
#include "shelfstage/report/design_text.hpp"
#include "shelfstage/stages/chain.hpp"
#include "shelfstage/synth/cautions.hpp"
#include "shelfstage/synth/shelf.hpp"
#include "shelfstage/units/notation.hpp"

namespace shelfstage::report {

namespace html {

std::string esc(std::string_view s) { return draw::xml_escape(s); }

int chain_stage_of(const synth::Candidate& c) { return c.parts.empty() ? 0 : c.parts.front().stage; }

namespace {
/// A stage's designator as its netlist has it: as given for a single stage, renumbered for
/// a chain's stage (stages::chain_designator).
std::string stage_designator(const synth::Candidate& c, std::string_view designator) {
  const int stage = chain_stage_of(c);
  return stage > 0 ? stages::chain_designator(static_cast<std::size_t>(stage - 1), designator)
                   : std::string(designator);
}
}  // namespace

namespace {
/// A net for people in the report: an op-amp's pin by its name ("the op-amp output of U1"),
/// every other net as the pick list says it (net_for_people).
std::string net_words_here(const std::string& net, const synth::Candidate& c) {
  if (c.topology && !c.is_chain() && opamp_stage(*c.topology)) {
    const std::string words = c.topology->net_words(net);
    if (words.starts_with("op-amp "))
      return fmt::format("the {} of {}", words.substr(7), stage_designator(c, c.topology->device_designator()));
  }
  return net_for_people(net, c);
}
}  // namespace

std::string transistor_designator(const synth::Candidate& c) {
  return stage_designator(c, c.topology ? c.topology->device_designator() : std::string_view("Q1"));
}

std::string second_transistor_designator(const synth::Candidate& c) { return stage_designator(c, "Q2"); }

std::string volts(double v) { return format_value(v, Unit::volt); }
std::string amps(double v) { return format_value(v, Unit::ampere); }
std::string ohms(double v) { return format_value(v, Unit::ohm); }
std::string hertz(double v) { return v > 0 ? format_value(v, Unit::hertz) : std::string("\u2014"); }
std::string watts(double v) { return format_value(v, Unit::watt); }
std::string signed3(double v) {
  std::string s = fmt::format("{:.3g}", v);
  if (s.starts_with("-")) s = "\u2212" + s.substr(1);
  return s;
}
std::string db(double v) { return signed3(v) + " dB"; }

std::string kind_text(devices::DeviceKind k) {
  switch (k) {
    case devices::DeviceKind::njfet: return "N-channel JFET";
    case devices::DeviceKind::pjfet: return "P-channel JFET";
    case devices::DeviceKind::npn: return "NPN transistor";
    case devices::DeviceKind::pnp: return "PNP transistor";
    case devices::DeviceKind::opamp: return "op-amp";
  }
  return "transistor";
}

bool p_type(devices::DeviceKind k) { return k == devices::DeviceKind::pjfet || k == devices::DeviceKind::pnp; }

// The page's style: colours by name from the project's palette (draw/palette.hpp, declared
// by palette_css as CSS variables), grid layouts that collapse for print. No character in it
// needs escaping in XML (no '<' or '&').
extern const char* const kStyle;
const char* const kStyle = R"css(
* { box-sizing: border-box; }
html { background: var(--surround); }
body { margin: 0; color: var(--ink); font: 14px/1.45 'DejaVu Sans', 'Liberation Sans', Arial, sans-serif; }
main { max-width: 1080px; margin: 0 auto; padding: 22px 30px 36px; background: var(--paper); }
header.top { border-bottom: 3px solid var(--ink); padding-bottom: 10px; margin-bottom: 16px; }
h1 { font-size: 22px; margin: 0 0 6px; }
h2 { font-size: 14px; text-transform: uppercase; letter-spacing: .09em; color: var(--brick);
     border-bottom: 1px solid var(--rule); padding-bottom: 4px; margin: 28px 0 10px; }
h3 { font-size: 14px; margin: 16px 0 6px; }
p { margin: 4px 0; }
.id { font-family: 'DejaVu Sans Mono', 'Liberation Mono', monospace; background: var(--band); padding: 1px 6px;
      border-radius: 3px; }
.muted { color: var(--muted); }
.strip { display: grid; grid-template-columns: repeat(auto-fill, minmax(148px, 1fr)); gap: 8px; margin-top: 12px; }
.card { border-left: 4px solid var(--brick); background: var(--band); padding: 6px 10px; }
.card b { display: block; font-size: 17px; }
.card span { font-size: 12px; color: var(--muted); }
figure { margin: 0 0 14px; }
figure svg { max-width: 100%; height: auto; display: block; }
figcaption { font-size: 12.5px; color: var(--muted); margin-top: 4px; max-width: 62em; }
.pair { display: grid; grid-template-columns: 1fr 1fr; gap: 14px; }
table { border-collapse: collapse; width: 100%; font-size: 13px; margin: 4px 0 8px; }
th, td { text-align: left; padding: 4px 8px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td:first-child, td:nth-child(3) { white-space: nowrap; }
.ok { color: var(--good); }
.warn { color: var(--alarm); font-weight: bold; }
.note { color: var(--caution); }
ul.cautions li { margin: 4px 0; }
.hazard { border: 2px solid var(--alarm); background: var(--alarm-ground); padding: 8px 12px; margin: 8px 0; }
footer { margin-top: 28px; font-size: 12px; color: var(--muted); border-top: 1px solid var(--rule); padding-top: 8px; }
@media print {
  html, body { background: var(--blank); }
  body { font-size: 10pt; }
  main { max-width: none; padding: 0; }
  section, figure, table, .card { break-inside: avoid; }
  h2 { break-after: avoid; }
  @page { size: A4; margin: 14mm; }
}
)css";

std::string palette_css() {
  std::string css = ":root {";
  for (const auto& c : draw::palette::all) {
    std::string name(c.name);
    std::replace(name.begin(), name.end(), '_', '-');
    css += fmt::format(" --{}: {};", name, c.hex);
  }
  return css + " }\n";
}

/// A table from a header and rows; cells are escaped; a header starting with '#' is numeric
/// (right-aligned, the '#' dropped).
std::string table(const std::vector<std::string>& head, const std::vector<std::vector<std::string>>& rows,
                  const std::vector<std::string>& row_class) {
  std::string h = "<table><thead><tr>";
  std::vector<bool> numeric;
  for (const auto& c : head) {
    const bool n = c.starts_with("#");
    numeric.push_back(n);
    h += fmt::format("<th{}>{}</th>", n ? " class=\"num\"" : "", esc(n ? c.substr(1) : c));
  }
  h += "</tr></thead><tbody>";
  for (std::size_t r = 0; r < rows.size(); ++r) {
    const std::string cls = r < row_class.size() && !row_class[r].empty() ? " class=\"" + row_class[r] + "\"" : "";
    h += "<tr" + cls + ">";
    for (std::size_t i = 0; i < rows[r].size(); ++i)
      h += fmt::format("<td{}>{}</td>", i < numeric.size() && numeric[i] ? " class=\"num\"" : "", esc(rows[r][i]));
    h += "</tr>";
  }
  return h + "</tbody></table>";
}

std::string figure(const std::string& svg, const std::string& caption) {
  return fmt::format("<figure>{}<figcaption>{}</figcaption></figure>", svg, esc(caption));
}

std::string range_text(const synth::Range& r, std::string (*f)(double)) {
  if (r.empty) return "\u2014";
  return f(r.min) + " \u2026 " + f(r.max);
}

// --- sections ---------------------------------------------------------------------------

bool is_hazard(const std::string& s) { return synth::is_hazard_caution(s); }

/// The cautions to show: the kept design's, the analysis's hazard caution when the design's
/// own list lacks one, and every polarised part with the way it goes in.
std::vector<std::string> all_cautions(const ReportInput& in, const Analysis& a) {
  std::vector<std::string> cautions = in.candidate.cautions;
  synth::take_hazard_caution(cautions, a.cautions);
  for (const auto& rp : in.candidate.parts)
    if (rp.polarised) {
      const std::string part = fmt::format("{} ({})", rp.designator, rp.role);
      const bool named = std::any_of(cautions.begin(), cautions.end(),
                                     [&](const std::string& s) { return synth::is_polarised_caution(s, part); });
      if (!named) cautions.push_back(synth::polarised_caution(part, net_words_here(rp.plus_net, in.candidate)));
    }
  return cautions;
}

/// The hazard caution as a boxed paragraph (empty when there is none).
std::vector<std::pair<std::string, std::string>> figure_cards(const stages::Performance& p,
                                                              const std::optional<double>& yield,
                                                              const std::pair<std::string, std::string>& second) {
  return {
      {fmt::format("{} ({})", signed3(p.gain), db(units::to_db(p.gain))), "gain, source to load"},
      second,
      {hertz(p.f_low_hz) + " \u2026 " + hertz(p.f_high_hz), "\u22123 dB band"},
      {volts(p.swing_peak_v), "symmetric output peak"},
      {ohms(p.zin_ohm), "input impedance"},
      {ohms(p.zout_ohm), "output impedance"},
      {amps(p.supply_current_a), "supply current"},
      {yield ? fmt::format("{:.0f} %", *yield * 100) : std::string("\u2014"), "Monte Carlo yield"},
  };
}

std::string page_start(const ReportInput& in, const std::string& title) {
  std::string h =
      "<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\"><head><meta charset=\"utf-8\"/>"
      "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>"
      "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'\"/>";
  h += fmt::format("<meta name=\"generator\" content=\"{}\"/>", esc(in.generator));
  h += fmt::format("<title>{}</title>", esc(title));
  return h + fmt::format("<style>{}{}</style></head><body><main>", palette_css(), kStyle);
}

std::string page_end(const ReportInput& in) {
  return fmt::format(
             "<footer>Made by {}. This file is complete in itself: it loads no scripts, fonts or images. Figures are "
             "computed by the program's own models; check a build on the bench before relying on it.</footer>",
             esc(in.generator.empty() ? std::string("shelfstage") : in.generator)) +
         "</main></body></html>\n";
}

std::string cautions_block(const std::vector<std::string>& warnings, const std::vector<std::string>& cautions) {
  std::string h = "<section id=\"cautions\"><h2>Cautions</h2>" + hazard_box(cautions);
  if (warnings.empty() && cautions.empty()) return h + "<p class=\"ok\">None.</p></section>";
  h += "<ul class=\"cautions\">";
  for (const auto& s : warnings) h += "<li class=\"warn\">" + esc(s) + "</li>";
  for (const auto& s : cautions)
    if (!is_hazard(s)) h += "<li>" + esc(s) + "</li>";
  return h + "</ul></section>";
}

std::string card_strip(const std::vector<std::pair<std::string, std::string>>& cards) {
  std::string h = "<div class=\"strip\">";
  for (const auto& [value, what] : cards)
    h += fmt::format("<div class=\"card\"><b>{}</b><span>{}</span></div>", esc(value), esc(what));
  return h + "</div>";
}

std::string hazard_box(const std::vector<std::string>& cautions) {
  std::string h;
  for (const auto& s : cautions)
    if (is_hazard(s)) {
      std::string text = s.substr(std::string_view("hazardous voltage").size());  // synth::hazard_caution's head
      if (text.starts_with(":")) text = text.substr(1);
      if (text.starts_with(" ")) text = text.substr(1);
      h += "<div class=\"hazard\"><b>Hazardous voltage.</b> " + esc(text) + "</div>";
    }
  return h;
}

std::string header_section(const ReportInput& in, const Analysis& a) {
  const auto& c = in.candidate;
  const auto& p = a.best();
  std::string h = "<header class=\"top\">";
  h += fmt::format("<h1>Design <span class=\"id\">{}</span>: {} with {}{}</h1>", esc(in.id), esc(c.topology->name()),
                   esc(c.device.name + (c.device2 ? " and " + c.device2->name : "")),
                   c.piece ? esc(" (measured piece " + c.piece->label + ")") : "");
  h += fmt::format("<p>{}</p>", esc(c.topology->summary()));
  h += fmt::format("<p class=\"muted\">Request: {}</p>", esc(spec_line(in.spec)));
  h += fmt::format("<p class=\"muted\">Kept {}; every figure below recomputed from the device list as it is now.</p>",
                   esc(in.created));
  const auto cards = figure_cards(p, c.yield, {amps(p.bias_current_a), device_current_name(*c.topology)});
  h += hazard_box(all_cautions(in, a));
  h += card_strip(cards) + "</header>";
  return h;
}

std::string schematic_section(const ReportInput& in) {
  const auto& c = in.candidate;
  const int stage = chain_stage_of(c);
  const circuit::Circuit net = stage > 0
                                   ? stages::chain_stage_netlist({c.topology, c.values, c.nominal_device},
                                                                 static_cast<std::size_t>(stage - 1), c.conditions)
                                   : c.topology->netlist(c.values, c.nominal_device, c.conditions);
  const auto s = draw::lay_out(net, schematic_notes(c));
  return "<section id=\"schematic\"><h2>Schematic</h2>" +
         figure(draw::schematic_svg(s, fmt::format("Schematic of {} with {}", c.topology->name(), c.device.name)),
                "Drawn from the stage's netlist: every wire joins the pins of one net. Values in IEC 60062 code; a "
                "combined value gives its recipe under it. Grey parts are the test bench the figures assume: the "
                "signal source behind its resistance, and the load. Filled plate and + sign: an electrolytic, fitted "
                "as drawn.") +
         "</section>";
}

std::string response_section(const ReportInput& in, const Response& r) {
  std::string h = "<section id=\"response\"><h2>Frequency response</h2>";
  if (!r.nominal.solved)
    return h + fmt::format("<p class=\"warn\">No response: {}</p></section>", esc(r.nominal.problem));
  const std::size_t n = r.f_hz.size();
  int solved = 0;
  for (const auto& k : r.corners) solved += k.solved;

  draw::Plot g;
  g.id = "gain";
  g.title = "Gain from the source to the load";
  g.width = 1000;
  g.height = 340;
  g.x.scale = draw::Scale::log;
  g.x.title = "frequency (Hz)";
  g.y.title = "gain (dB)";
  // The gain axis: from 40 dB under the peak to a little above the envelope.
  double top = r.peak_gain_db;
  for (double v : r.gain_hi_db)
    if (std::isfinite(v)) top = std::max(top, v);
  const auto ticks = draw::linear_ticks(r.peak_gain_db - 40, top + 2, 7);
  g.y.fixed = true;
  g.y.lo = ticks.lo;
  g.y.hi = ticks.hi;
  g.x.fixed = true;
  g.x.lo = r.f_hz.front();
  g.x.hi = r.f_hz.back();
  if (r.band_hz) g.spans.push_back({"requested band", r.band_hz->first, r.band_hz->second});
  if (solved > 0) g.envelopes.push_back({fmt::format("{} device corners", solved), r.f_hz, r.gain_lo_db, r.gain_hi_db});
  draw::Series nominal;
  nominal.name = "nominal piece";
  for (std::size_t i = 0; i < n; ++i) nominal.points.push_back({r.f_hz[i], r.nominal.gain_db[i]});
  g.series.push_back(nominal);
  if (r.requested_gain_db != 0 || in.spec.gain > 0) {
    draw::Series want;
    want.name = "requested gain";
    want.colour = draw::palette::brick;
    want.width = 1.5;
    want.dash = "6 4";
    want.points = {{r.f_hz.front(), r.requested_gain_db}, {r.f_hz.back(), r.requested_gain_db}};
    g.series.push_back(want);
  }
  draw::Series corner3db;
  corner3db.name = "\u22123 dB from the peak";
  corner3db.colour = draw::palette::muted;
  corner3db.width = 1;
  corner3db.dash = "2 3";
  corner3db.points = {{r.f_hz.front(), r.peak_gain_db - 3.0103}, {r.f_hz.back(), r.peak_gain_db - 3.0103}};
  g.series.push_back(corner3db);

  draw::Plot ph;
  ph.id = "phase";
  ph.title = "Phase";
  ph.width = 1000;
  ph.height = 260;
  ph.x = g.x;
  ph.y.title = "phase (degrees)";
  if (r.band_hz) ph.spans.push_back({"", r.band_hz->first, r.band_hz->second});
  if (solved > 0) ph.envelopes.push_back({"", r.f_hz, r.phase_lo_deg, r.phase_hi_deg});
  draw::Series pn;
  pn.name = "";
  for (std::size_t i = 0; i < n; ++i) pn.points.push_back({r.f_hz[i], r.nominal.phase_deg[i]});
  ph.series.push_back(pn);

  std::string failed;
  for (const auto& k : r.corners)
    if (!k.solved) failed += fmt::format(" The {} corner has no operating point: {}.", k.tag, k.problem);
  h += figure(g.svg() + ph.svg(),
              fmt::format("The stage's netlist solved exactly (modified nodal analysis) at the nominal piece of the "
                          "device (line) and at each of its {} corner pieces (shaded envelope), nominal parts, supply "
                          "{}, {:g} \u00b0C. Nominal \u22123 dB points from the peak of {}: {} and {}.{}",
                          r.corners.size(), volts(in.candidate.conditions.supply_v), in.spec.temp_nominal_c(),
                          db(r.peak_gain_db), hertz(r.f_low_hz), hertz(r.f_high_hz), failed));
  return h + "</section>";
}

namespace {

draw::Point bias_point(const BiasPoint& q) { return draw::Point{q.v, q.i_a * 1e3}; }

// The DC load line through the nominal parts: V = supply - I R (common source or emitter),
// V = I R (follower), up to 1.3 times the largest current drawn; none without a resistance.
std::optional<draw::Series> dc_load_line(const ReportInput& in, const BiasSpread& b) {
  const auto& c = in.candidate;
  const bool follower = b.line.at_common;
  const double r_line = b.line.r_dc_ohm;
  double i_top = b.nominal.i_a;
  for (const auto& q : b.samples) i_top = std::max(i_top, q.i_a);
  for (const auto& q : b.corners) i_top = std::max(i_top, q.i_a);
  i_top *= 1.3;
  const double s = p_type(c.device.kind) ? -1 : 1;
  const double vs = c.conditions.supply_v;
  if (!(r_line > 0 && i_top > 0)) return std::nullopt;
  draw::Series line;
  line.name = "DC load line, nominal parts";
  line.colour = draw::palette::muted;
  line.width = 1.2;
  line.dash = "5 4";
  for (int k = 0; k <= 20; ++k) {
    const double i = i_top * k / 20;
    const double v = follower ? i * r_line : vs - i * r_line;
    line.points.push_back({s * v, i * 1e3});
  }
  return line;
}

// The Monte Carlo builds (safe, outside), the device corners and the nominal piece as point
// clouds on the plot; returns how many builds lie in the safe region.
int add_bias_clouds(draw::Plot& p, const BiasSpread& b) {
  draw::Cloud in_cloud, out_cloud, corners, nominal;
  in_cloud.colour = draw::palette::inside;
  in_cloud.opacity = 0.45;
  out_cloud.colour = draw::palette::alarm;
  out_cloud.opacity = 0.7;
  int n_in = 0, n_out = 0;
  for (const auto& q : b.samples) {
    if (q.safe) {
      in_cloud.points.push_back(bias_point(q));
      ++n_in;
    } else {
      out_cloud.points.push_back(bias_point(q));
      ++n_out;
    }
  }
  in_cloud.name = fmt::format("Monte Carlo builds, safe ({})", n_in);
  out_cloud.name = fmt::format("outside ({})", n_out);
  corners.name = "device corners";
  corners.colour = draw::palette::ink;
  corners.radius = 5;
  corners.hollow = true;
  corners.opacity = 1;
  for (const auto& q : b.corners) corners.points.push_back(bias_point(q));
  nominal.name = "nominal";
  nominal.colour = draw::palette::brick;
  nominal.radius = 5.5;
  nominal.opacity = 1;
  nominal.points.push_back(bias_point(b.nominal));
  if (!b.samples.empty()) p.clouds.push_back(in_cloud);
  if (n_out > 0) p.clouds.push_back(out_cloud);
  p.clouds.push_back(corners);
  p.clouds.push_back(nominal);
  return n_in;
}

std::string bias_caption(const ReportInput& in, const BiasSpread& b, int n_in) {
  const bool jfet = devices::is_jfet(in.candidate.device.kind);
  std::string caption = fmt::format(
      "Operating points from the exact solver: the nominal piece, the {} corner pieces of the device (nominal parts "
      "and supply), and {} Monte Carlo builds drawn as the yield draws them (pieces from the device spread, parts "
      "uniform within their tolerances, supply and temperature over their ranges; seed {}). {} of {} builds lie "
      "in the safe region",
      b.corners.size(), b.samples.size() + static_cast<std::size_t>(b.failed), in.spec.seed, n_in, b.samples.size());
  caption += b.swing_peak_v > 0
                 ? fmt::format(", where the output can swing \u00b1{} without cut-off or leaving the {} region",
                               volts(b.swing_peak_v), jfet ? "saturation" : "active")
                 : fmt::format(", where the device stays in its {} region", jfet ? "saturation" : "active");
  caption += jfet ? " (VDS above the overdrive of the weakest corner piece)." : " (VCE above its saturation edge).";
  if (b.failed > 0) caption += fmt::format(" {} builds had no operating point.", b.failed);
  return caption;
}

}  // namespace

std::string opamp_bias_note(const ReportInput& in) {
  return fmt::format(
      "<section id=\"bias\"><h2>Bias spread</h2><p class=\"muted\">No bias picture for an op-amp stage: {} has "
      "no load line to bias on (its loop holds the output at its reference, mid-rail or ground); the output's DC "
      "over the corners is in the figures below, the DC error from each corner's offset and bias "
      "currents.</p></section>",
      esc(transistor_designator(in.candidate)));
}

std::string bias_section(const ReportInput& in, const BiasSpread& b) {
  const std::string current_name = devices::is_jfet(in.candidate.device.kind) ? "drain current" : "collector current";
  draw::Plot p;
  p.id = "bias";
  p.title = fmt::format("Bias point: V({}) and {}", b.node, current_name);
  p.width = 1000;
  p.height = 400;
  p.x.title = fmt::format("V({}) (V)", b.node);
  p.y.title = current_name + " (mA)";
  p.y.include_zero = true;
  if (!b.safe_region.empty()) {
    draw::Region reg;
    reg.name = b.swing_peak_v > 0 ? fmt::format("safe: active with room for \u00b1{}", volts(b.swing_peak_v))
                                  : "safe: active region";
    for (const auto& [v, i] : b.safe_region) reg.points.push_back({v, i * 1e3});
    p.regions.push_back(reg);
  }
  if (auto line = dc_load_line(in, b)) p.series.push_back(*line);
  const int n_in = add_bias_clouds(p, b);
  return "<section id=\"bias\"><h2>Bias spread</h2>" + figure(p.svg(), bias_caption(in, b, n_in)) + "</section>";
}

std::string swing_section(const Transfer& tr) {
  std::string h = "<section id=\"swing\"><h2>Output swing</h2>";
  if (tr.phase_deg.empty()) return h + "<p class=\"warn\">The large-signal transfer could not be solved.</p></section>";
  const double in_peak = tr.rated_peak_v / std::max(std::abs(tr.gain), 1e-6);
  draw::Plot a;
  a.id = "transfer";
  a.title = "Transfer: load voltage against source voltage";
  a.width = 500;
  a.height = 340;
  a.x.title = "source EMF (V)";
  a.y.title = "load voltage (V)";
  a.spans.push_back({"rated input", -in_peak, in_peak});
  draw::Series ideal, real;
  ideal.name = "small-signal gain";
  ideal.colour = draw::palette::muted;
  ideal.width = 1.2;
  ideal.dash = "5 4";
  real.name = "stage";
  double lo = 0, hi = 0;
  for (std::size_t i = 0; i < tr.v_in.size(); ++i) {
    real.points.push_back({tr.v_in[i], tr.v_out[i]});
    if (std::isfinite(tr.v_out[i])) lo = std::min(lo, tr.v_out[i]), hi = std::max(hi, tr.v_out[i]);
  }
  for (double x : {tr.v_in.front(), tr.v_in.back()}) ideal.points.push_back({x, tr.gain * x});
  a.x.fixed = true;
  a.x.lo = tr.v_in.front();
  a.x.hi = tr.v_in.back();
  a.y.fixed = true;
  const auto yt = draw::linear_ticks(std::min(lo, -tr.rated_peak_v) * 1.1, std::max(hi, tr.rated_peak_v) * 1.1, 6);
  a.y.lo = yt.lo;
  a.y.hi = yt.hi;
  a.series = {ideal, real};

  draw::Plot s;
  s.id = "sine";
  s.title = "A sine through the stage";
  s.width = 500;
  s.height = 340;
  s.x.title = "phase of the input (degrees)";
  s.y.title = "load voltage (V)";
  s.x.fixed = true;
  s.x.lo = 0;
  s.x.hi = 360;
  s.y = a.y;
  s.y.title = "load voltage (V)";
  draw::Series rated, rated_ideal, over, over_ideal;
  rated.name = fmt::format("at {} peak", volts(tr.rated_peak_v));
  rated_ideal.name = "undistorted";
  rated_ideal.colour = draw::palette::muted;
  rated_ideal.width = 1.2;
  rated_ideal.dash = "5 4";
  over.name = "input doubled";
  over.colour = draw::palette::overdrive;
  over.width = 1.8;
  over_ideal.name = "";
  over_ideal.colour = draw::palette::overdrive_light;
  over_ideal.width = 1;
  over_ideal.dash = "2 3";
  for (std::size_t i = 0; i < tr.phase_deg.size(); ++i) {
    rated.points.push_back({tr.phase_deg[i], tr.out_rated[i]});
    rated_ideal.points.push_back({tr.phase_deg[i], tr.ideal_rated[i]});
    over.points.push_back({tr.phase_deg[i], tr.out_over[i]});
    over_ideal.points.push_back({tr.phase_deg[i], tr.ideal_over[i]});
  }
  s.series = {over_ideal, rated_ideal, over, rated};
  h += "<div class=\"pair\">" + figure(a.svg(), "") + figure(s.svg(), "") + "</div>";
  h += fmt::format(
      "<p class=\"muted\">Quasi-static: every coupling and bypass capacitor holds its DC voltage (the mid-band load "
      "lines), the source EMF stepped and the stage solved exactly at each step. The sine is drawn at {} ({} peak at "
      "the load, small-signal gain {}) and with its input doubled, where the stage clips.</p>",
      esc(tr.rated_what), esc(volts(tr.rated_peak_v)), esc(signed3(tr.gain)));
  return h + "</section>";
}

namespace {

// An op-amp's row of the parts table (synth::DeviceStress NOTES): its supply current at its
// supply span, the worst span, differential input and dissipation; its ratings (the absolute
// maximum span, the operating range, the differential input, the package); the largest share.
void opamp_row(const ReportInput& in, const Analysis& a, std::string& stress, std::string& rating, std::string& use) {
  const auto& c = in.candidate;
  const auto& w = c.worst;
  const auto& rt = c.device.ratings;
  const auto& o = c.device.opamp;
  const double k = in.spec.split_supply ? 2.0 : 1.0;
  stress = fmt::format("{} from a {} span", amps(a.best().bias_current_a), volts(k * c.conditions.supply_v));
  if (!w.device_v.empty)
    stress += fmt::format("; up to {} span, {} between the inputs, {}", volts(w.device_v.max), volts(w.device_rev.max),
                          watts(w.device_p.max));
  auto opt = [](const std::optional<double>& v, std::string (*f)(double)) { return v ? f(*v) : std::string("?"); };
  rating = fmt::format("supply {} (operating {} \u2026 {}), inputs {} apart, {} at 25 °C", opt(rt.v_max_v, volts),
                       volts(o.vs_min_v), volts(o.vs_max_v), opt(rt.v_rev_max_v, volts), opt(rt.p_max_w, watts));
  use = "\u2014";
  if (!w.device_v.empty && (rt.v_max_v || rt.p_max_w || o.vs_max_v > 0)) {
    double share = o.vs_max_v > 0 ? w.device_v.max / o.vs_max_v : 0.0;
    if (rt.v_max_v) share = std::max(share, w.device_v.max / (synth::kDeviceVoltageShare * *rt.v_max_v));
    if (rt.v_rev_max_v) share = std::max(share, w.device_rev.max / (synth::kDeviceVoltageShare * *rt.v_rev_max_v));
    if (rt.p_max_w && w.device_p_allowed.min > 0)
      share = std::max(share, w.device_p.max / (synth::kDevicePowerShare * w.device_p_allowed.min));
    use = fmt::format("{:.0f} %", share * 100);
  }
}

}  // namespace

std::string parts_section(const ReportInput& in, const Analysis& a) {
  const auto& c = in.candidate;
  std::vector<std::vector<std::string>> rows;
  std::vector<std::string> cls;
  for (const auto& p : a.parts) {
    const auto rp =
        std::find_if(c.parts.begin(), c.parts.end(), [&](const synth::RolePart& x) { return x.role == p.name; });
    const bool r = p.kind == 'R';
    std::string recipe = rp != c.parts.end() ? rp->recipe : std::string();
    const std::string value = synth::compact_value(p.value, r);
    if (recipe == value) recipe.clear();
    // Below a nanowatt (a gate resistor's leakage) the figure means nothing on the bench.
    std::string stress = r ? (p.power_w < 1e-9 ? std::string("\u2248 0 W") : watts(p.power_w))
                           : fmt::format("{} DC + {} peak", volts(p.dc_v), volts(p.peak_v));
    std::string rating = p.info.rating > 0 ? (r ? watts(p.info.rating) : volts(p.info.rating)) : "not stated";
    std::string use = p.use > 0 ? fmt::format("{:.0f} %", p.use * 100) : "\u2014";
    std::string check = "ok";
    std::string k;
    if (p.over) check = "over its rating", k = "warn";
    if (p.reversed) check = "+ lead reversed", k = "warn";
    if (!(p.info.rating > 0) && k.empty()) check = "check the rating", k = "note";
    std::string plus;
    if (!r && p.info.polarised)
      plus = "+ to " + net_words_here(p.info.fitted_plus_net.empty() ? p.plus_net : p.info.fitted_plus_net, c);
    rows.push_back(
        {p.designator, p.name, value, recipe, p.info.tol, p.info.dielectric, stress, rating, use, plus, check});
    cls.push_back(k);
  }
  {
    // The transistor: its worst-case stress (the rail it may hold whole, the reverse voltage on
    // its control junction, its dissipation) beside its ratings, as the search checked them.
    const auto& w = c.worst;
    const auto& rt = c.device.ratings;
    const bool jfet = devices::is_jfet(c.device.kind);
    std::string stress =
        fmt::format("{} at {}", amps(a.best().bias_current_a), volts(std::abs(a.best().v_out - a.best().v_common)));
    if (!w.device_v.empty)
      stress += fmt::format("; up to {}, {} reverse, {}", volts(w.device_v.max), volts(w.device_rev.max),
                            watts(w.device_p.max));
    auto opt = [](const std::optional<double>& v, std::string (*f)(double)) { return v ? f(*v) : std::string("?"); };
    std::string rating = rt.any()
                             ? fmt::format("{} {}, {} {}, {} at 25 °C", jfet ? "VDS" : "VCEO", opt(rt.v_max_v, volts),
                                           jfet ? "VGS" : "VEBO", opt(rt.v_rev_max_v, volts), opt(rt.p_max_w, watts))
                             : "not stated";
    std::string use = "\u2014";
    if (!w.device_v.empty && (rt.v_max_v || rt.p_max_w)) {
      double share = 0;
      if (rt.v_max_v) share = std::max(share, w.device_v.max / (synth::kDeviceVoltageShare * *rt.v_max_v));
      if (rt.v_rev_max_v) share = std::max(share, w.device_rev.max / (synth::kDeviceVoltageShare * *rt.v_rev_max_v));
      if (rt.p_max_w && w.device_p_allowed.min > 0)
        share = std::max(share, w.device_p.max / (synth::kDevicePowerShare * w.device_p_allowed.min));
      use = fmt::format("{:.0f} %", share * 100);
    }
    if (c.device.kind == devices::DeviceKind::opamp) opamp_row(in, a, stress, rating, use);
    rows.push_back({transistor_designator(c), "device", c.device.name + (c.piece ? " (" + c.piece->label + ")" : ""),
                    kind_text(c.device.kind), "", "", stress, rating, use, "", rt.any() ? "ok" : "check the ratings"});
    cls.emplace_back(rt.any() ? "" : "note");
  }
  if (c.device2) {
    // A pair's second transistor the same way: the rail it may hold whole and its
    // dissipation (its base-emitter junction is never reversed), against its own ratings;
    // its dissipation against what it may take at the warmest ambient asked.
    const auto& w = c.worst;
    const auto& rt = c.device2->ratings;
    std::string stress = fmt::format("{} at {}", amps(a.best().q2_current_a), volts(a.best().q2_v_main));
    if (!w.device2_v.empty) stress += fmt::format("; up to {}, {}", volts(w.device2_v.max), watts(w.device2_p.max));
    auto opt = [](const std::optional<double>& v, std::string (*f)(double)) { return v ? f(*v) : std::string("?"); };
    const std::string rating = rt.any() ? fmt::format("VCEO {}, VEBO {}, {} at 25 °C", opt(rt.v_max_v, volts),
                                                      opt(rt.v_rev_max_v, volts), opt(rt.p_max_w, watts))
                                        : "not stated";
    std::string use = "\u2014";
    if (!w.device2_v.empty && (rt.v_max_v || rt.p_max_w)) {
      const double warmest = std::max(in.spec.temp_nominal_c(), in.spec.temp_c ? in.spec.temp_c->second : -273.15);
      const double allowed = rt.p_max_at(warmest);
      double share = 0;
      if (rt.v_max_v) share = std::max(share, w.device2_v.max / (synth::kDeviceVoltageShare * *rt.v_max_v));
      if (rt.p_max_w && allowed > 0) share = std::max(share, w.device2_p.max / (synth::kDevicePowerShare * allowed));
      use = fmt::format("{:.0f} %", share * 100);
    }
    rows.push_back({second_transistor_designator(c), "device", c.device2->name, kind_text(c.device2->kind), "", "",
                    stress, rating, use, "", rt.any() ? "ok" : "check the ratings"});
    cls.emplace_back(rt.any() ? "" : "note");
  }
  return "<section id=\"parts\"><h2>Parts and ratings</h2>" +
         table(
             {"part", "role", "value", "recipe", "tol", "dielectric", "stress", "rating", "#use", "polarity", "check"},
             rows, cls) +
         "<p class=\"muted\">Use: resistors against half their power rating, capacitors against their voltage rating "
         "less a quarter of margin, each transistor's voltages against 80 % of its maximum ratings and its "
         "dissipation against half its rating derated to the warmest ambient (common practice); its voltage is the "
         "whole rail, which it holds when cut off. Stress from the exact operating point; a capacitor also takes "
         "the output's signal peak." +
         std::string(c.device.kind == devices::DeviceKind::opamp
                         ? " An op-amp's supply span V+ \u2212 V\u2212 is held within its operating range and under "
                           "its absolute maximum (80 % of it when no operating range is stated), the voltage between "
                           "its inputs against 80 % of its "
                           "differential rating, and its dissipation (the span times its supply current, plus its "
                           "output's drop times the output's DC current) against half its package's rating derated "
                           "to the warmest ambient."
                         : "") +
         "</p></section>";
}

std::string pick_section(const ReportInput& in) {
  std::string h = "<section id=\"pick\"><h2>Pick list</h2>";
  if (!in.pick) {
    std::vector<std::vector<std::string>> rows;
    for (const auto& rp : in.candidate.parts)
      rows.push_back({rp.designator, rp.role, rp.recipe, fmt::format("{}", rp.lines.size())});
    return h + "<p>No stock was given for a pick list; the parts and their recipes:</p>" +
           table({"part", "role", "recipe", "#stock lines"}, rows) + "</section>";
  }
  const PickList& p = *in.pick;
  h += fmt::format("<p>{} cop{} of {}: {} pieces to take{}.</p>", p.copies, p.copies == 1 ? "y" : "ies",
                   esc(p.design_id), p.pieces(), p.complete() ? "" : "; the shelf is short of some");
  std::vector<std::vector<std::string>> rows;
  for (const auto& l : p.lines) {
    std::string tol = l.tol ? units::format_tolerance(*l.tol) : "";
    std::string rating = l.rating > 0 ? (l.kind == store::PartKind::resistor ? watts(l.rating) : volts(l.rating)) : "";
    rows.push_back({l.bin.empty() ? "\u2014" : l.bin, fmt::format("{}", l.qty),
                    build::item_value_text(l.kind, l.value, l.device), std::string(store::kind_code(l.kind)), tol,
                    rating, l.dielectric, fmt::format("{}", fmt::join(l.designators, " "))});
  }
  h += table({"bin", "#take", "value", "kind", "tol", "rating", "dielectric", "designators"}, rows);
  if (const auto notes = package_notes(p); !notes.empty()) {
    // Op-amp lines count packages; which package and channel each U place takes.
    h += "<h3>Op-amp packages</h3><p>Each U place takes one amplifier (a channel) of a package; channel A is the "
         "datasheet's amplifier 1.</p><ul>";
    for (const auto& n : notes) h += "<li>" + esc(n.substr(n.find_first_not_of(' '))) + "</li>";
    h += "</ul>";
  }
  if (!p.assemblies.empty()) {
    h += "<h3>Combined values</h3><ul>";
    for (const auto& a : p.assemblies) h += "<li>" + esc(a.text) + "</li>";
    h += "</ul>";
  }
  if (!p.polarities.empty()) {
    h += "<h3>Polarity</h3><ul>";
    for (const auto& a : p.polarities) h += "<li>" + esc(a.text) + "</li>";
    h += "</ul>";
  }
  if (!p.short_items.empty()) {
    h += "<h3 class=\"warn\">Short</h3><ul>";
    for (const auto& s : p.short_items)
      h += fmt::format("<li>{} \u00d7 {}{} for {}</li>", s.qty, esc(build::item_value_text(s.kind, s.value, s.device)),
                       s.channels > 0 ? fmt::format(" (package{} of {})", s.qty == 1 ? "" : "s", s.channels) : "",
                       esc(fmt::format("{}", fmt::join(s.designators, " "))));
    h += "</ul>";
  }
  return h + "</section>";
}

std::string figures_section(const ReportInput& in, const Analysis& a) {
  const auto& c = in.candidate;
  const auto& w = c.worst;
  const auto& x = a.best();
  const auto& f = a.closed_form;
  const auto names = node_labels(*c.topology);
  std::vector<std::vector<std::string>> rows = {
      {"gain (V/V)", signed3(x.gain), signed3(f.gain), range_text(w.gain, signed3)},
      {device_current_name(*c.topology), amps(x.bias_current_a), amps(f.bias_current_a),
       range_text(w.bias_current, amps)},
      {names[0], volts(x.v_in), volts(f.v_in), range_text(w.v_in, volts)},
      {names[1], volts(x.v_common), volts(f.v_common), range_text(w.v_common, volts)},
      {names[2], volts(x.v_out), volts(f.v_out), range_text(w.v_out, volts)},
      {"input impedance", ohms(x.zin_ohm), ohms(f.zin_ohm), range_text(w.zin, ohms)},
      {"output impedance", ohms(x.zout_ohm), ohms(f.zout_ohm), range_text(w.zout, ohms)},
      {"\u22123 dB low", hertz(x.f_low_hz), hertz(f.f_low_hz), range_text(w.f_low, hertz)},
      {"\u22123 dB high", hertz(x.f_high_hz), hertz(f.f_high_hz), range_text(w.f_high, hertz)},
      {"clipping (symmetric peak)", volts(x.clip_peak_v), volts(f.clip_peak_v), "\u2014"},
      {"rated peak (within the THD bound)", volts(x.swing_peak_v), volts(f.swing_peak_v),
       range_text(w.swing_peak, volts)},
      {"second harmonic", fmt::format("{:.2g} %", x.hd2 * 100), fmt::format("{:.2g} %", f.hd2 * 100), "\u2014"},
      {"third harmonic", fmt::format("{:.2g} %", x.hd3 * 100), fmt::format("{:.2g} %", f.hd3 * 100), "\u2014"},
      {"THD", fmt::format("{:.2g} %", x.thd * 100), fmt::format("{:.2g} %", f.thd * 100),
       range_text(w.thd, [](double v) { return fmt::format("{:.2g} %", v * 100); })},
      {"input noise", format_value(x.noise_v_rthz, Unit::volt) + "/\u221aHz",
       format_value(f.noise_v_rthz, Unit::volt) + "/\u221aHz", "\u2014"},
      {"supply current", amps(x.supply_current_a), amps(f.supply_current_a), range_text(w.supply_current, amps)},
  };
  std::string h = "<section id=\"figures\"><h2>Figures</h2>";
  h += table({"", a.exact ? "exact" : "closed form", "closed form", "worst case"}, rows);
  h += fmt::format(
      "<p class=\"muted\">Exact: the netlist solved by modified nodal analysis; closed form: the design equations. "
      "Worst case over {} evaluations of the closed form: the device corners, part tolerances at their bounds, the "
      "supply and temperature ranges.{}</p>",
      w.evaluations, a.exact ? "" : esc(" The exact solver failed: " + a.exact_problem));
  return h + "</section>";
}

std::string cautions_section(const ReportInput& in, const Analysis& a) {
  const std::vector<std::string> cautions = all_cautions(in, a);
  return cautions_block(a.warnings, cautions);
}

}  // namespace html

using namespace html;

draw::SchematicOptions schematic_notes(const synth::Candidate& c) {
  draw::SchematicOptions o;
  const auto& t = *c.topology;
  const bool p = p_type(c.device.kind);
  for (const auto& rp : c.parts) {
    const std::size_t i = t.role_index(rp.role);
    if (i >= t.roles().size()) continue;
    draw::PartNote n;
    const bool r = rp.kind == 'R';
    n.value = synth::compact_value(c.values[i], r);
    if (!rp.recipe.empty() && rp.recipe != n.value)
      n.detail = rp.recipe;
    else if (!r && rp.rating > 0)
      n.detail = units::format_value(rp.rating, Unit::volt);
    n.polarised = rp.polarised;
    if (rp.polarised) {
      const auto& role = t.roles()[i];
      n.plus_net = !rp.plus_net.empty() ? rp.plus_net : std::string(p ? role.neg_net : role.pos_net);
    }
    o.notes[rp.designator] = n;
  }
  for (const auto& role : t.roles())
    if (role.at.x >= 0) o.places[std::string(role.name)] = {role.at.x, role.at.y, role.at.vertical, role.at.label};
  for (const auto& inner : t.inner_nets()) {
    o.net_levels[std::string(inner.name)] = inner.level;
    o.net_orders[std::string(inner.name)] = inner.order;
  }
  o.notes[transistor_designator(c)] = {c.device.name + (c.piece ? " " + c.piece->label : ""), kind_text(c.device.kind),
                                       false, ""};
  if (c.device2) o.notes[second_transistor_designator(c)] = {c.device2->name, kind_text(c.device2->kind), false, ""};
  o.notes["VDD"] = {volts(c.conditions.supply_v), "supply", false, ""};
  if (c.conditions.split_supply) o.notes["VEE"] = {volts(-c.conditions.supply_v), "supply", false, ""};
  o.notes["VSIG"] = {"signal", "", false, ""};
  o.notes["RSIG"] = {c.conditions.source_ohm > 0 ? synth::compact_value(c.conditions.source_ohm, true) : "0 (ideal)",
                     "source", false, ""};
  o.notes["RL"] = {synth::compact_value(c.conditions.load_ohm, true), "load", false, ""};
  return o;
}

std::string html_report(const ReportInput& in) {
  const auto& c = in.candidate;
  if (c.is_chain()) return chain_html_report(in);
  if (!c.topology) throw InputError("report: the design has no topology");
  const synth::StageSpread spread = synth::spread_of(c);
  const Analysis a = analyze_stage(stage_under_test(c), &spread.first(), spread.second());
  const Response r = frequency_response(c, in.spec);
  const bool opamp = c.device.kind == devices::DeviceKind::opamp;
  const BiasSpread b = opamp ? BiasSpread{} : bias_spread(c, in.spec, in.bias_samples);
  Transfer tr;
  try {
    tr = transfer_curve(c, in.spec);
  } catch (const InfeasibleError&) {
    // Drawn as "could not be solved".
  }

  std::string h = page_start(in, fmt::format("Design {}: {} with {}{}", in.id, c.topology->name(), c.device.name,
                                             c.device2 ? " and " + c.device2->name : ""));
  h += header_section(in, a);
  h += schematic_section(in);
  h += response_section(in, r);
  h += opamp ? opamp_bias_note(in) : bias_section(in, b);
  h += swing_section(tr);
  h += parts_section(in, a);
  h += pick_section(in);
  h += figures_section(in, a);
  h += cautions_section(in, a);
  return h + page_end(in);
}

}  // namespace shelfstage::report
