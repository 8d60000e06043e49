// `shelfstage analyze TOPOLOGY`: the full analysis of a stage given part by part (a board
// already built), with a stocked device type or one of its measured pieces.
#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <memory>
#include <optional>

#include "args.hpp"
#include "commands.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/report/analysis.hpp"
#include "shelfstage/synth/stage_spread.hpp"
#include "shelfstage/stages/topology.hpp"
#include "shelfstage/units/notation.hpp"
#include "stage_view.hpp"

namespace shelfstage::cli {

namespace {

using units::format_value;
using units::Unit;

/// The options of `analyze`, as text until parsed (so errors can quote what was typed).
struct AnalyzeOptions {
  std::string topology;
  std::string device;
  std::optional<std::string> device2;  ///< a pair's Q2
  std::string supply, load;
  std::string source_z = "0";
  std::vector<std::string> parts;    ///< ROLE=VALUE
  std::vector<std::string> ratings;  ///< ROLE=RATING (W or V)
  std::optional<std::string> piece, temp, band, hd2_at, spice, load_cap;
  std::string max_distortion = "1%";
  bool split = false;  ///< --split: rails at +supply and -supply, ground between
};

bool same_name(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::toupper(static_cast<unsigned char>(x)) == std::toupper(static_cast<unsigned char>(y));
         });
}

const stages::Topology& topology_named(const std::string& name) {
  for (const stages::Topology* t : stages::registry())
    if (same_name(t->name(), name)) return *t;
  std::vector<std::string> names;
  for (const stages::Topology* t : stages::registry()) names.emplace_back(t->name());
  throw InputError(fmt::format("topology '{}' is unknown; the topologies are {}", name, fmt::join(names, ", ")));
}

/// "ROLE=VALUE" split at the '='; the field names the option for errors.
std::pair<std::string, std::string> split_assignment(std::string_view option, const std::string& text,
                                                     std::string_view example) {
  const auto eq = text.find('=');
  if (eq == std::string::npos || eq == 0 || eq + 1 == text.size())
    throw InputError(fmt::format("{} '{}': write ROLE=VALUE, e.g. {}", option, text, example));
  return {text.substr(0, eq), text.substr(eq + 1)};
}

/// The role of that name (any case), or nullptr.
const stages::Role* find_role(const stages::Topology& t, std::string_view name) {
  for (const auto& r : t.roles())
    if (same_name(r.name, name)) return &r;
  return nullptr;
}

devices::DeviceRecord device_named(const store::Database& db, const std::string& name) {
  if (auto d = db.device(name)) return *d;
  const auto all = db.device_records();
  for (const auto& d : all)
    if (same_name(d.name, name)) return d;
  if (all.empty())
    throw InputError(fmt::format("--device '{}': the device list is empty (shelfstage devices import FILE.csv)", name));
  std::vector<std::string> names;
  for (const auto& d : all) names.push_back(d.name);
  throw InputError(fmt::format("--device '{}' is not in the device list ({})", name, fmt::join(names, ", ")));
}

devices::MeasuredPiece piece_named(const store::Database& db, const std::string& label,
                                   const devices::DeviceRecord& device) {
  const auto pieces = db.pieces();
  for (const auto& p : pieces) {
    if (!same_name(p.label, label)) continue;
    if (p.device != device.name)
      throw InputError(fmt::format("--piece '{}' is a piece of {}, not of {}", label, p.device, device.name));
    return p;
  }
  std::vector<std::string> mine;
  for (const auto& p : pieces)
    if (p.device == device.name) mine.push_back(p.label);
  throw InputError(fmt::format("--piece '{}': no measured piece of that label ({})", label,
                               mine.empty() ? fmt::format("{} has none", device.name)
                                            : fmt::format("pieces of {}: {}", device.name, fmt::join(mine, ", "))));
}

double positive(std::string_view field, const std::string& text, Unit unit, std::string_view hint = {}) {
  const double v = parse_quantity(field, text, unit);
  if (!std::isfinite(v) || v <= 0)
    throw InputError(fmt::format("{} '{}' must be positive{}", field, text, hint.empty() ? "" : std::string(hint)));
  return v;
}

stages::Conditions conditions_from(const AnalyzeOptions& o) {
  stages::Conditions c;
  const Supply supply = parse_supply("--supply", o.supply, false);
  c.supply_v = supply.lo_v;
  c.negative_rail = supply.negative;
  if (o.split && supply.negative)
    throw InputError(fmt::format("--supply '{}' with --split: give the rails' magnitude (15 for +/-15 V)", o.supply));
  c.split_supply = o.split;
  c.load_ohm = positive("--load", o.load, Unit::ohm);
  if (o.load_cap) c.load_farads = positive("--load-cap", *o.load_cap, Unit::farad);
  c.source_ohm = parse_quantity("--source-z", o.source_z, Unit::ohm);
  if (!std::isfinite(c.source_ohm) || c.source_ohm < 0)
    throw InputError(fmt::format("--source-z '{}' must be zero or positive", o.source_z));
  if (o.temp) {
    c.celsius = parse_quantity("--temp", *o.temp, Unit::none);
    // The device laws are linear temperature fits; far outside the industrial range they
    // mean nothing (-55..150 °C, the usual rated junction range).
    if (!(c.celsius >= -55 && c.celsius <= 150))
      throw InputError(fmt::format("--temp '{}' is outside -55..150 °C", *o.temp));
  }
  const std::string band = o.band.value_or("20..20k");
  if (band != "none") {
    const devices::Range r = parse_range("--band", band, Unit::hertz);
    if (!(r.min > 0) || r.min == r.max)
      throw InputError(fmt::format("--band '{}' needs two different edges above 0 Hz, e.g. 20..20k", band));
    c.band_lo_hz = r.min;
    c.band_hi_hz = r.max;
  } else {
    c.band_lo_hz = c.band_hi_hz = 0;
  }
  c.hd2_peak_v = o.hd2_at ? positive("--hd2-at", *o.hd2_at, Unit::volt) : 0.0;  // 0: the analysis picks
  c.max_thd = parse_fraction("--max-distortion", o.max_distortion);
  if (!(c.max_thd >= 1e-4 && c.max_thd <= 0.3))
    throw InputError(fmt::format("--max-distortion '{}' is outside 0.01 %..30 %", o.max_distortion));
  return c;
}

std::string device_line(const report::StageUnderTest& s, const devices::DeviceSpread& spread) {
  const auto& q = s.transistor;
  std::string figures;
  if (q.kind == devices::DeviceKind::opamp)
    figures = fmt::format("GBW {}, Aol {:.3g}, slew {:.3g} V/us, Vos {}, Ib+ {}, Ib- {}, Iq {}",
                          format_value(q.opamp.gbw_hz, Unit::hertz), q.opamp.aol, q.opamp.slew_v_per_s * 1e-6,
                          format_value(q.opamp.vos_v, Unit::volt), format_value(q.opamp.ib_plus_a, Unit::ampere),
                          format_value(q.opamp.ib_minus_a, Unit::ampere),
                          q.opamp.iq_a > 0 ? format_value(q.opamp.iq_a, Unit::ampere) : std::string("not stated"));
  else if (devices::is_jfet(q.kind))
    figures = fmt::format("IDSS {}, VP {}, lambda {:g}/V", format_value(q.jfet.idss_a, Unit::ampere),
                          format_value(-devices::polarity(q.kind) * q.jfet.vp_abs_v, Unit::volt), q.jfet.lambda_per_v);
  else
    figures = fmt::format("hFE {:.0f}, IS {}, VAF {}", q.bjt.bf, format_value(q.bjt.is_a, Unit::ampere),
                          format_value(q.bjt.vaf_v, Unit::volt));
  return fmt::format("Device: {} {}, {}: {} at {:g} °C", s.device, devices::kind_name(q.kind),
                     s.piece.empty() ? "nominal piece of the " + spread.description() : spread.description(), figures,
                     s.conditions.celsius);
}

/// The parts: role names checked against the topology, values in the role's unit.
stages::Values part_values(const stages::Topology& t, const AnalyzeOptions& o) {
  std::vector<std::pair<std::string, double>> given;
  for (const auto& text : o.parts) {
    const auto [role, value] = split_assignment("--part", text, "RD=4k7");
    const stages::Role* r = find_role(t, role);
    const Unit unit = r ? (r->kind == 'R' ? Unit::ohm : Unit::farad) : Unit::none;
    const std::string field = fmt::format("--part {}", role);
    // A capacitor's value states its scale, as in the stock (a bare 1 would be one farad).
    given.emplace_back(role,
                       unit == Unit::farad ? parse_capacitance(field, value) : parse_quantity(field, value, unit));
  }
  return report::role_values(t, given);
}

/// The --rating options, each for a part given and at most one per role.
std::vector<report::PartInfo> part_ratings(const stages::Topology& t, const stages::Values& values,
                                           const AnalyzeOptions& o) {
  std::vector<report::PartInfo> parts;
  for (const auto& text : o.ratings) {
    const auto [role, value] = split_assignment("--rating", text, "RD=0.25W or CIN=16V");
    const stages::Role* r = find_role(t, role);
    if (!r)
      throw InputError(
          fmt::format("--rating '{}': {} has no role {} (roles: {})", text, t.name(), role, report::role_list(t)));
    if (!(values[t.role_index(r->name)] > 0))
      throw InputError(fmt::format("--rating '{}': {} is not among the parts given", text, r->name));
    report::PartInfo info;
    info.role = std::string(r->name);
    info.rating = positive(fmt::format("--rating {}", r->name), value, r->kind == 'R' ? Unit::watt : Unit::volt);
    if (std::any_of(parts.begin(), parts.end(), [&](const auto& p) { return p.role == info.role; }))
      throw InputError(fmt::format("--rating '{}': {} has a rating already", text, r->name));
    parts.push_back(info);
  }
  return parts;
}

/// The topologies built for a split supply, for an error message.
std::string split_topologies() {
  std::vector<std::string> names;
  for (const stages::Topology* t : stages::registry())
    if (t->supply_form() == stages::SupplyForm::split) names.emplace_back(t->name());
  return fmt::format("{}", fmt::join(names, ", "));
}

/// The device from the list (or its measured piece) fitted to the stage at its temperature, and
/// a pair's Q2; returns their spreads for the corner pieces.
synth::StageSpread fit_device(Context& ctx, const AnalyzeOptions& o, report::StageUnderTest& s) {
  const stages::Topology& t = *s.topology;
  auto db = ctx.open_database();
  const devices::DeviceRecord record = device_named(db, o.device);
  const bool opamp_stage = t.accepts(devices::DeviceKind::opamp);
  if (!devices::is_transistor(record.kind) && !opamp_stage)
    throw InputError(fmt::format("--device '{}' is an op-amp; {} is a transistor stage", record.name, t.name()));
  if (devices::is_transistor(record.kind) && opamp_stage)
    throw InputError(fmt::format("--device '{}' is a transistor ({}); {} is an op-amp stage", record.name,
                                 devices::kind_name(record.kind), t.name()));
  // The supply the stage is built for: a split one only with --split, and --split only there.
  if (t.supply_form() == stages::SupplyForm::split && !s.conditions.split_supply)
    throw InputError(
        fmt::format("--split is missing: {} works from a split supply (--supply 15 --split for +/-15 V)", t.name()));
  if (t.supply_form() == stages::SupplyForm::single && s.conditions.split_supply)
    throw InputError(fmt::format("--split: {} works from one rail and ground; the split-supply stages are {}", t.name(),
                                 split_topologies()));
  if (!t.accepts(record.kind))
    throw InputError(fmt::format("--device '{}' ({}) does not fit {} ({})", o.device, devices::kind_name(record.kind),
                                 t.name(), t.summary()));
  std::optional<devices::MeasuredPiece> piece;
  if (o.piece) piece = piece_named(db, *o.piece, record);
  devices::DeviceSpread spread = piece ? devices::DeviceSpread(record, *piece) : devices::DeviceSpread(record);
  s.device = record.name;
  if (piece) s.piece = piece->label;
  s.transistor.kind = record.kind;
  if (record.kind == devices::DeviceKind::opamp)
    s.transistor.opamp = spread.opamp(spread.nominal(), s.conditions.celsius);
  else if (devices::is_jfet(record.kind))
    s.transistor.jfet = spread.jfet(spread.nominal(), s.conditions.celsius);
  else
    s.transistor.bjt = spread.bjt(spread.nominal(), s.conditions.celsius);
  // A pair's Q2: its nominal piece (the corners pair both devices' corner pieces).
  std::optional<devices::DeviceSpread> spread2;
  if (t.second_device() == stages::SecondDevice::none) {
    if (o.device2)
      throw InputError(
          fmt::format("--device2 '{}': {} has one transistor (Q2 belongs to a feedback pair)", *o.device2, t.name()));
  } else {
    if (!o.device2)
      throw InputError(fmt::format("--device2 is missing: {} takes a second, bipolar transistor (Q2)", t.name()));
    const devices::DeviceRecord second = device_named(db, *o.device2);
    if (!t.accepts_second(record.kind, second.kind))
      throw InputError(fmt::format(
          "--device2 '{}' ({}) does not fit {} beside {} ({}): Q2 is bipolar, of the "
          "{} polarity",
          *o.device2, devices::kind_name(second.kind), t.name(), record.name, devices::kind_name(record.kind),
          t.second_device() == stages::SecondDevice::same ? "same" : "other"));
    spread2.emplace(second);
    s.transistor.paired = true;
    s.transistor.bjt2 = spread2->bjt(spread2->nominal(), s.conditions.celsius);
    s.device += "+" + second.name;
  }
  return synth::StageSpread(std::move(spread), std::move(spread2));
}

/// The analysis's cautions, with its general note on unstated ratings replaced: parts given
/// by value have no stock rating, so say how to give one.
std::vector<std::string> analyze_cautions(const report::Analysis& a) {
  std::vector<std::string> cautions, unrated;
  for (const auto& p : a.parts)
    if (!(p.info.rating > 0)) unrated.push_back(p.name);
  for (const auto& line : a.cautions)
    if (!line.starts_with("no rating stated")) cautions.push_back(line);
  if (!unrated.empty())
    cautions.push_back(
        fmt::format("no rating given for {}: compare the stress listed with the parts fitted, or give "
                    "--rating ROLE=0.25W (resistors) or --rating ROLE=16V (capacitors) to have them "
                    "checked",
                    fmt::join(unrated, ", ")));
  return cautions;
}

/// The analysis as text.
void print_analysis(Context& ctx, const AnalyzeOptions& o, const report::Analysis& a, const report::StageUnderTest& s,
                    const synth::StageSpread& spread) {
  const stages::Topology& t = *s.topology;
  const auto& c = a.stage.conditions;
  ctx.out << fmt::format("Stage: {}: {}\n", t.name(), t.summary());
  ctx.out << device_line(s, spread.first()) << "\n";
  const std::string rail =
      c.split_supply
          ? fmt::format("\u00b1{} split supply (ground between the rails)", format_value(c.supply_v, Unit::volt))
          : fmt::format("{}{} rail (ground at the battery's {} terminal)", c.negative_rail ? "-" : "+",
                        format_value(c.supply_v, Unit::volt), c.negative_rail ? "+" : "-");
  ctx.out << fmt::format("Conditions: {}, load {}{}, source {}\n\n", rail, format_value(c.load_ohm, Unit::ohm),
                         c.load_farads > 0 ? " with " + format_value(c.load_farads, Unit::farad) + " across it" : "",
                         format_value(c.source_ohm, Unit::ohm));
  ctx.out << report::parts_text(a) << "\n";
  ctx.out << report::figures_text(a);
  print_list(ctx.out, "Warnings", a.warnings);
  print_list(ctx.out, "Cautions", analyze_cautions(a));
  if (const std::string corners = report::corners_text(a); !corners.empty()) ctx.out << "\n" << corners;
  if (o.spice)
    ctx.out << fmt::format("\nSPICE netlist written to {} (run it with: ngspice -b {}).\n", *o.spice, *o.spice);
}

void run_analyze(const AnalyzeOptions& o, Context& ctx) {
  const stages::Topology& t = topology_named(o.topology);
  const stages::Values values = part_values(t, o);

  report::StageUnderTest s;
  s.topology = &t;
  s.values = values;
  s.parts = part_ratings(t, values, o);
  s.conditions = conditions_from(o);
  const synth::StageSpread spread = fit_device(ctx, o, s);

  const report::Analysis a = report::analyze_stage(s, &spread.first(), spread.second());
  if (o.spice) write_spice(*o.spice, s);
  if (ctx.global.json)
    print_json(ctx, report::analysis_json(a));
  else
    print_analysis(ctx, o, a, s, spread);
}

}  // namespace

void setup_analyze(CLI::App& parent, Context& ctx) {
  auto o = std::make_shared<AnalyzeOptions>();
  CLI::App* cmd = parent.add_subcommand(
      "analyze", "The full analysis of a stage given part by part (a board already built, or one on paper)");
  cmd->add_option("TOPOLOGY", o->topology, "One of: " + stages::topology_names())->type_name("")->required();
  cmd->add_option(
         "--device", o->device,
         "Device type from the device list: a transistor for a transistor stage, an op-amp for an op-amp stage")
      ->type_name("NAME")
      ->required();
  cmd->add_option("--device2", o->device2,
                  "A feedback pair's second transistor (Q2): a bipolar type of the other polarity (of the same for "
                  "bjt-fb-pair-same)")
      ->type_name("NAME");
  cmd->add_option("--supply", o->supply, "Supply voltage: 9 for a positive rail, -9 for a negative one")
      ->type_name("V")
      ->required();
  cmd->add_flag("--split", o->split,
                "The supply is split: rails at +V and -V with ground between (--supply 15 --split for +/-15 V); "
                "for the split-supply op-amp stages, which need it");
  cmd->add_option("--load", o->load, "Load resistance at the output (10k, 4k7)")->type_name("OHMS")->required();
  cmd->add_option("--load-cap", o->load_cap, "Capacitance across the load, e.g. a cable's (470p); default none")
      ->type_name("FARADS");
  cmd->add_option("--source-z", o->source_z, "Output resistance of the source driving the stage (default 0)")
      ->type_name("OHMS");
  cmd->add_option("--part", o->parts, "A part: ROLE=VALUE in SI or IEC 60062 notation (RD=4k7, CIN=100n); repeat")
      ->type_name("ROLE=VALUE")
      ->required();
  cmd->add_option("--rating", o->ratings, "A part's rating: RD=0.25W or COUT=16V; repeatable")->type_name("ROLE=VALUE");
  cmd->add_option("--piece", o->piece, "A measured piece of the device (its label) instead of the nominal piece")
      ->type_name("LABEL");
  cmd->add_option("--temp", o->temp, "Ambient temperature in °C (default 25)")->type_name("C");
  cmd->add_option("--band", o->band, "Band edges at which the loss is given (default 20..20k; none)")
      ->type_name("LO..HI");
  cmd->add_option("--hd2-at", o->hd2_at,
                  "Output peak at which HD2, HD3 and THD are given (default 1 V, or half the clipping peak)")
      ->type_name("V");
  cmd->add_option("--max-distortion", o->max_distortion,
                  "THD that still counts as undistorted: it sets the rated peak (default 1%)")
      ->type_name("PERCENT");
  cmd->add_option("--spice", o->spice, "Also write the stage's SPICE netlist (with .op and .ac) to FILE for ngspice")
      ->type_name("FILE");
  std::string footer = "Roles (optional ones in brackets):\n";
  for (const stages::Topology* t : stages::registry())
    footer += fmt::format("  {:<16} {}\n", t->name(), report::role_list(*t));
  footer +=
      "Prints both evaluators (the netlist solved exactly, and the closed form where it differs\n"
      "by more than 1 %), each part's stress against its rating, and the figures at the device's\n"
      "corner pieces: how far another piece of the same type would move the bias.";
  cmd->footer(footer);
  cmd->callback([o, &ctx] { run_analyze(*o, ctx); });
}

}  // namespace shelfstage::cli
