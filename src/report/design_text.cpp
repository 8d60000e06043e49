// The design tables people read.
#include "shelfstage/report/design_text.hpp"

#include <cmath>
#include <fmt/format.h>

#include "shelfstage/report/table.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::report {

namespace {

using units::format_value;
using units::Unit;

/// The worst THD at the request's level; "clips" where some corner cannot reach that level
/// (the evaluators then state a THD of 1: nothing to promise there).
std::string thd_cell(const synth::Range& thd) {
  if (thd.empty) return "";
  return thd.max >= 1.0 ? "clips" : fmt::format("{:.2g}%", 100 * thd.max);
}

}  // namespace

bool opamp_stage(const stages::Topology& t) { return t.accepts(devices::DeviceKind::opamp); }

std::array<std::string, 3> node_keys(const stages::Topology& t) {
  if (opamp_stage(t)) return {"plus", "minus", "output"};
  const auto n = t.node_names();
  return {std::string(n[0]), std::string(n[1]), std::string(n[2])};
}

std::array<std::string, 3> node_labels(const stages::Topology& t) {
  if (opamp_stage(t)) {
    const std::string u(t.device_designator());
    return {fmt::format("V({} +in)", u), fmt::format("V({} -in)", u), fmt::format("V({} out)", u)};
  }
  const auto n = t.node_names();
  return {fmt::format("V({})", n[0]), fmt::format("V({})", n[1]), fmt::format("V({})", n[2])};
}

std::string device_current_name(const stages::Topology& t) {
  if (opamp_stage(t)) return fmt::format("{} supply current (quiescent)", t.device_designator());
  return t.node_names()[2] == "drain" ? "drain current" : "collector current";
}

std::string upper_corner(double f_hz) {
  // The device models carry no transit time or base resistance: an upper corner beyond
  // 1 GHz says only that the stage is not what limits the bandwidth.
  if (f_hz > 1e9) return ">1GHz";
  return format_value(f_hz, Unit::hertz);
}

std::string fixed3(double v) {
  // Three significant figures, plain decimals (gains read better as 10.0 than 10).
  if (v == 0) return "0";
  const int mag = static_cast<int>(std::floor(std::log10(std::abs(v))));
  const int decimals = std::max(0, 2 - mag);
  return fmt::format("{:.{}f}", v, decimals);
}

std::string rail_words(const synth::Spec& s) {
  if (s.split_supply) {
    const std::string volts = s.supply_lo_v == s.supply_hi_v ? format_value(s.supply_lo_v, Unit::volt)
                                                             : fmt::format("{}..{}", format_value(s.supply_lo_v),
                                                                           format_value(s.supply_hi_v, Unit::volt));
    return fmt::format("\u00b1{} split supply, ground between the rails", volts);
  }
  // "+9V", "+7..9.6V", "-9V", "-7..-9.6V": each end signed on a negative rail, as typed.
  const std::string sign = s.negative_rail ? "-" : "+";
  const std::string volts = s.supply_lo_v == s.supply_hi_v
                                ? sign + format_value(s.supply_lo_v, Unit::volt)
                                : fmt::format("{}{}..{}{}", sign, format_value(s.supply_lo_v),
                                              s.negative_rail ? "-" : "", format_value(s.supply_hi_v, Unit::volt));
  return fmt::format("{} rail, ground at the battery's {} terminal", volts, s.negative_rail ? "+" : "-");
}

std::string spread_words(const synth::Spec& s) {
  return s.spread == devices::SpreadModel::box
             ? "whole-box spread (every datasheet IDSS with every VP)"
             : "correlated spread (JFETs about the datasheet's IDSS-VP diagonal, every limit reached)";
}

std::string spec_line(const synth::Spec& s) {
  std::string out = fmt::format("gain {} ({:.1f} dB) into {}", fixed3(s.gain), units::to_db(s.gain),
                                format_value(s.load_ohm, Unit::ohm));
  if (s.load_farads > 0) out += fmt::format(" || {}", format_value(s.load_farads, Unit::farad));
  if (s.source_ohm > 0) out += fmt::format(" from {}", format_value(s.source_ohm, Unit::ohm));
  out += ", " + rail_words(s);
  if (s.zin_min_ohm > 0) out += fmt::format(", Zin ≥ {}", format_value(s.zin_min_ohm, Unit::ohm));
  if (s.band_hz)
    out += fmt::format(", band {}..{}", format_value(s.band_hz->first, Unit::hertz),
                       format_value(s.band_hz->second, Unit::hertz));
  // The distortion bound holds at the swing asked for; without one there is no level to hold
  // it at, and the search does not apply it (synth::detail::violation), so the line says so
  // rather than promise it, when a bound other than the default was given.
  if (s.swing_vpp)
    out += fmt::format(", swing {} Vpp at THD ≤ {:g} %", format_value(*s.swing_vpp), 100 * s.max_thd);
  else if (s.max_thd != synth::Spec{}.max_thd)
    out += fmt::format(", THD ≤ {:g} % not applied (it holds at a swing; none asked)", 100 * s.max_thd);
  if (s.prefer == synth::Spec::Prefer::distortion) out += ", preferring low distortion";
  if (s.max_current_a) out += fmt::format(", ≤ {}", format_value(*s.max_current_a, Unit::ampere));
  if (s.temp_c) out += fmt::format(", {:g}..{:g} °C", s.temp_c->first, s.temp_c->second);
  out += fmt::format(", {} cop{}", s.copies, s.copies == 1 ? "y" : "ies");
  if (s.piece) out += fmt::format(", piece {}", *s.piece);
  out += ", " + spread_words(s);
  return out;
}

std::string recipe_line(const synth::Candidate& c) {
  std::string out;
  int stage = 0;
  for (const auto& rp : c.parts) {
    // A chain's parts go stage by stage: "1: RG 1M  RS 2k2 | 2: RD 4k7 ..."
    std::string lead = out.empty() ? "" : "  ";
    if (rp.stage > 0 && rp.stage != stage) {
      lead = fmt::format("{}{}: ", out.empty() ? "" : " | ", rp.stage);
      stage = rp.stage;
    }
    out += fmt::format("{}{} {}", lead, rp.role, rp.recipe);
  }
  return out;
}

std::string device_text(const synth::Candidate& c) {
  if (!c.is_chain())
    return c.device.name + (c.piece ? " [" + c.piece->label + "]" : "") + (c.device2 ? "+" + c.device2->name : "");
  std::string out;
  for (const auto& s : c.stages) out += (out.empty() ? "" : " > ") + device_text(s);
  return out;
}

std::string candidates_table(const synth::DesignResult& r) {
  TextTable t({{"#", Align::right},
               {"id"},
               {"stage"},
               {"device"},
               {"gain", Align::right},
               {"worst", Align::right},
               {"bias", Align::right},
               {"swing Vpp", Align::right},
               {"THD", Align::right},
               {"band (-3 dB)", Align::right},
               {"yield", Align::right},
               {"pcs", Align::right}});
  std::string out;
  for (const auto& c : r.candidates) {
    const auto& n = c.nominal;
    const auto& w = c.worst;
    t.add_row({std::to_string(c.rank), c.id, c.topology_name(), device_text(c), fixed3(n.gain),
               fmt::format("{}..{}", fixed3(w.gain.min), fixed3(w.gain.max)),
               format_value(n.bias_current_a, Unit::ampere),
               fmt::format("{} ({})", format_value(2 * n.swing_peak_v), format_value(2 * w.swing_peak.min)),
               thd_cell(w.thd), fmt::format("{}..{}", format_value(n.f_low_hz, Unit::hertz), upper_corner(n.f_high_hz)),
               c.yield ? fmt::format("{:.0f}%", *c.yield * 100) : "", std::to_string(c.pieces)});
  }
  // Render the figures, then put each candidate's recipes under its line.
  const std::string table = t.render();
  std::size_t pos = 0, line = 0;
  while (pos < table.size()) {
    const std::size_t end = table.find('\n', pos);
    out += table.substr(pos, end - pos + 1);
    if (line >= 2 && line - 2 < r.candidates.size()) out += "      " + recipe_line(r.candidates[line - 2]) + "\n";
    pos = end + 1;
    ++line;
  }
  return out;
}

std::string gain_window_note(const synth::DesignResult& r) {
  const synth::Spec& s = r.spec;
  std::vector<std::string> outside;
  for (const auto& c : r.candidates)
    if (c.error_worst > s.gain_tol) outside.push_back("#" + std::to_string(c.rank));
  if (outside.empty()) return {};
  const std::string window = fmt::format("{}..{} (±{:g} %)", fixed3(s.gain * (1 - s.gain_tol)),
                                         fixed3(s.gain * (1 + s.gain_tol)), 100 * s.gain_tol);
  const std::string why =
      "the spread of the transistors and the parts' tolerances carry the gain out of it (a measured piece, "
      "--piece, narrows a transistor's spread; --gain-tol widens the window)";
  if (outside.size() == r.candidates.size())
    return fmt::format("No design here holds the gain within {} at every corner: {}. The closest are listed.\n", window,
                       why);
  std::string list;
  for (const auto& o : outside) list += (list.empty() ? "" : ", ") + o;
  return fmt::format("{} leave{} the gain window {} at some corner: {}.\n", list, outside.size() == 1 ? "s" : "",
                     window, why);
}

namespace {

std::string loop_lines(const synth::Candidate& s, const std::string& whose) {
  if (!s.loop) return {};
  const synth::LoopFigures& l = *s.loop;
  auto hz = [](const synth::Range& r) {
    return r.min == r.max
               ? units::format_value(r.min, units::Unit::hertz)
               : units::format_value(r.min, units::Unit::hertz) + ".." + units::format_value(r.max, units::Unit::hertz);
  };
  std::string out = fmt::format("Feedback loop{}: broken at {}, read at {}\n", whose, l.broken_at,
                                units::format_value(l.f_mid_hz, units::Unit::hertz));
  out += fmt::format("  loop gain {:.3g} ({:.1f} dB) at nominal, {:.3g}..{:.3g} over {} builds at the corners\n",
                     l.nominal.mid, 20 * std::log10(std::max(l.nominal.mid, 1e-12)), l.mid.min, l.mid.max, l.corners);
  if (l.crossing == 0) {
    out += fmt::format("  it stays below 1 at every frequency: no crossover, this loop cannot oscillate{}\n",
                       l.nominal.mid < 0.5
                           ? "; so weak a loop leaves the gain to the rest of the stage (its load over its emitter "
                             "resistance, and the transistor), not to the feedback resistors' ratio"
                           : "");
    return out;
  }
  // A range that rounds to one figure is printed as that figure.
  const std::string lo = fmt::format("{:.0f}", l.margin_deg.min), hi = fmt::format("{:.0f}", l.margin_deg.max);
  out += fmt::format(
      "  unity-gain crossover {}; phase margin {}\u00b0{} (asked for: at least "
      "{:.0f}\u00b0){}\n",
      hz(l.f_cross), lo == hi ? lo : lo + ".." + hi,
      l.crossing < l.corners ? fmt::format(" where it crosses ({} of {})", l.crossing, l.corners) : "",
      l.least_margin_deg, l.margin_deg.min < l.least_margin_deg ? ": SHORT, see the cautions" : "");
  return out;
}

}  // namespace

std::string loop_text(const synth::Candidate& c) {
  if (!c.is_chain()) return loop_lines(c, "");
  std::string out;
  for (std::size_t k = 0; k < c.stages.size(); ++k)
    out += loop_lines(c.stages[k], fmt::format(" of stage {} ({})", k + 1, c.stages[k].topology->name()));
  return out;
}

std::string diagnosis_text(const synth::DesignResult& r) {
  std::string out = fmt::format("error: no stage meets the request: {}\n", r.diagnosis.detail);
  if (!r.diagnosis.suggestions.empty()) {
    const int pieces = r.diagnosis.with_purchases ? r.diagnosis.with_purchases->purchases : 0;
    out += pieces > 0 ? fmt::format("the smallest purchase that makes it feasible ({} piece{}):\n", pieces,
                                    pieces == 1 ? "" : "s")
                      : std::string("what would make it feasible:\n");
    for (const auto& s : r.diagnosis.suggestions) out += "  " + s + "\n";
    if (r.diagnosis.with_purchases) {
      const auto& c = *r.diagnosis.with_purchases;
      out += fmt::format("  then: {} with {}, gain {} ({}..{} worst case, error up to {:.1f} %): {}\n",
                         c.topology_name(), device_text(c), fixed3(c.nominal.gain), fixed3(c.worst.gain.min),
                         fixed3(c.worst.gain.max), 100 * c.error_worst, recipe_line(c));
    }
  }
  return out;
}

}  // namespace shelfstage::report
