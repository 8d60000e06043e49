// How the transistor and op-amp types and the measured pieces look to a person (tables) and to
// a script (JSON).
#include "devices_view.hpp"

#include <fmt/format.h>

#include <cmath>

#include "shelfstage/report/design_json.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/store/part.hpp"

namespace shelfstage::cli {

using devices::DeviceRecord;
using devices::MeasuredPiece;
using report::Align;
using report::TextTable;
using units::Unit;

namespace detail {
namespace {

std::string typ_text(const devices::Range& r, Unit unit) { return r.typ ? quantity_text(*r.typ, unit) : std::string(); }

std::string optional_text(const std::optional<double>& v, Unit unit) {
  return v ? quantity_text(*v, unit) : std::string();
}

/// A capacitance, blank when not given (0 in the record means "not modelled").
std::string capacitance_text(double farads) {
  return farads == 0 ? std::string() : units::format_value(farads, Unit::farad);
}

/// A plain count such as hFE: no prefix letters ("287", "1.2k" would read oddly).
std::string plain(double v) { return fmt::format("{:g}", v); }

std::string hfe_range_text(const devices::Range& r) {
  return r.min == r.max ? plain(r.min) : plain(r.min) + ".." + plain(r.max);
}

/// "0.5V/us": a slew rate as datasheets write it.
std::string slew_text(double v_per_s) { return fmt::format("{:.3g}V/us", v_per_s * 1e-6); }

/// "1.2V/1.2V": a distance from V+ and one from V-.
std::string drops_text(double hi, double lo) {
  return quantity_text(hi, Unit::volt) + "/" + quantity_text(lo, Unit::volt);
}

/// Which rails the inputs and the output reach: "in, out", "in V-, out V-", "out", "no".
std::string rail_to_rail_text(const devices::OpampParams& o) {
  auto side = [](std::string_view what, bool hi, bool lo) -> std::string {
    if (hi && lo) return std::string(what);
    if (hi) return std::string(what) + " V+";
    if (lo) return std::string(what) + " V-";
    return {};
  };
  const std::string in = side("in", o.inputs_reach_hi(), o.inputs_reach_lo());
  const std::string out = side("out", o.output_reaches_hi(), o.output_reaches_lo());
  if (in.empty() && out.empty()) return "no";
  if (in.empty() || out.empty()) return in + out;
  return in + ", " + out;
}

}  // namespace
}  // namespace detail

std::string quantity_text(double value, Unit unit) {
  // Datasheets write gate voltages as -0.5 V, not -500 mV.
  const double magnitude = value < 0 ? -value : value;
  if (unit == Unit::volt && magnitude >= 0.01 && magnitude < 1000) {
    return fmt::format("{:.3g}V", value);
  }
  return units::format_value(value, unit);
}

std::string range_text(const devices::Range& range, Unit unit) {
  if (range.min == range.max) return quantity_text(range.min, unit);
  return quantity_text(range.min, unit) + ".." + quantity_text(range.max, unit);
}

/// "25V/25V/350mW": the maximum ratings stated (VDS or VCEO, reverse, dissipation; an op-amp's
/// supply, differential input, dissipation), or "not stated".
std::string ratings_text(const devices::Ratings& r) {
  if (!r.any()) return "not stated";
  auto v = [](const std::optional<double>& x, Unit u) { return x ? units::format_value(*x, u) : std::string("?"); };
  return fmt::format("{}/{}/{}", v(r.v_max_v, Unit::volt), v(r.v_rev_max_v, Unit::volt), v(r.p_max_w, Unit::watt));
}

std::string devices_table(const std::vector<DeviceRecord>& records, const std::vector<MeasuredPiece>& pieces) {
  if (records.empty()) {
    return "No device types yet. Add them with `shelfstage devices add` or "
           "`shelfstage devices import FILE.csv`.\n";
  }
  TextTable jfets({{"NAME"},
                   {"TYPE"},
                   {"IDSS", Align::right},
                   {"TYP", Align::right},
                   {"VP", Align::right},
                   {"TYP", Align::right},
                   {"LAMBDA", Align::right},
                   {"CGS", Align::right},
                   {"CGD", Align::right},
                   {"VDS/VGS/P MAX", Align::right},
                   {"NOTE"}});
  TextTable bjts({{"NAME"},
                  {"TYPE"},
                  {"HFE", Align::right},
                  {"TYP", Align::right},
                  {"IS", Align::right},
                  {"VAF", Align::right},
                  {"CJE", Align::right},
                  {"CJC", Align::right},
                  {"VCEO/VEBO/P MAX", Align::right},
                  {"NOTE"}});
  TextTable opamps({{"NAME"},
                    {"CH", Align::right},
                    {"SUPPLY", Align::right},
                    {"GBW", Align::right},
                    {"SLEW", Align::right},
                    {"VOS", Align::right},
                    {"IB", Align::right},
                    {"OUT DROP", Align::right},
                    {"CM DROP", Align::right},
                    {"RAIL-TO-RAIL"},
                    {"IQ", Align::right},
                    {"VS/VID/P MAX", Align::right},
                    {"NOTE"}});
  for (const auto& d : records) {
    const std::string kind(devices::kind_name(d.kind));
    if (devices::is_opamp(d.kind)) {
      const auto& o = d.opamp;
      opamps.add_row({d.name, std::to_string(o.channels), range_text({o.vs_min_v, o.vs_max_v, {}}, Unit::volt),
                      units::format_value(o.gbw_hz.typ, Unit::hertz), detail::slew_text(o.slew_v_per_s.typ),
                      units::format_value(o.vos_max_v, Unit::volt), units::format_value(o.ib_max_a, Unit::ampere),
                      detail::drops_text(o.out_drop_hi_v, o.out_drop_lo_v),
                      detail::drops_text(o.cm_drop_hi_v, o.cm_drop_lo_v), detail::rail_to_rail_text(o),
                      detail::optional_text(o.iq_a, Unit::ampere), ratings_text(d.ratings), d.note});
    } else if (devices::is_jfet(d.kind)) {
      const auto& j = d.jfet;
      jfets.add_row({d.name, kind, range_text(j.idss_a, Unit::ampere), detail::typ_text(j.idss_a, Unit::ampere),
                     range_text(j.vp_v, Unit::volt), detail::typ_text(j.vp_v, Unit::volt),
                     fmt::format("{:g}/V", j.lambda_per_v), detail::capacitance_text(j.cgs_f),
                     detail::capacitance_text(j.cgd_f), ratings_text(d.ratings), d.note});
    } else {
      const auto& b = d.bjt;
      bjts.add_row({d.name, kind, detail::hfe_range_text(b.hfe), b.hfe.typ ? detail::plain(*b.hfe.typ) : "",
                    units::format_value(b.is_a, Unit::ampere), quantity_text(b.vaf_v, Unit::volt),
                    detail::capacitance_text(b.cje_f), detail::capacitance_text(b.cjc_f), ratings_text(d.ratings),
                    d.note});
    }
  }
  std::string out;
  const report::TableLayout layout{.indent = "  "};
  if (jfets.row_count() > 0) out += fmt::format("JFET types ({})\n{}", jfets.row_count(), jfets.render(layout));
  if (bjts.row_count() > 0) {
    if (!out.empty()) out += '\n';
    out += fmt::format("BJT types ({})\n{}", bjts.row_count(), bjts.render(layout));
  }
  if (opamps.row_count() > 0) {
    if (!out.empty()) out += '\n';
    out += fmt::format(
        "Op-amp types ({}): GBW and slew typical; drops are volts short of V+/V- (output at light load)\n{}",
        opamps.row_count(), opamps.render(layout));
  }
  if (!pieces.empty()) {
    TextTable measured({{"LABEL"},
                        {"DEVICE"},
                        {"IDSS", Align::right},
                        {"VP", Align::right},
                        {"HFE", Align::right},
                        {"UNCERTAINTY", Align::right},
                        {"NOTE"}});
    for (const auto& p : pieces) {
      measured.add_row({p.label, p.device, detail::optional_text(p.idss_a, Unit::ampere),
                        detail::optional_text(p.vp_v, Unit::volt), p.hfe ? detail::plain(*p.hfe) : "",
                        fmt::format("±{:g}%", p.uncertainty * 100.0), p.note});
    }
    out += fmt::format("\nMeasured pieces ({})\n{}", measured.row_count(), measured.render(layout));
  }
  return out;
}

nlohmann::ordered_json device_json(const DeviceRecord& d) {
  using Family = store::DeviceColumn::Family;
  nlohmann::ordered_json j;
  j["name"] = d.name;
  j["kind"] = devices::kind_name(d.kind);
  // A transistor's figures, the note, then the maximum ratings (null: not stated); an
  // op-amp's figures follow in an object of their own.
  const Family own = store::device_family(d.kind);
  auto figures = [&](Family family, nlohmann::ordered_json& into) {
    for (const auto& c : store::device_columns()) {
      if (c.family != family) continue;
      const auto v = c.get(d);
      // A count (an op-amp's channels) is a whole number in JSON too.
      if (v && c.notation == store::DeviceColumn::Notation::count)
        into[std::string(c.name)] = static_cast<long long>(std::llround(*v));
      else
        into[std::string(c.name)] = report::number_or_null(v);
    }
  };
  if (own != Family::opamp) figures(own, j);
  j["note"] = d.note;
  figures(Family::rating, j);
  if (own == Family::opamp) {
    nlohmann::ordered_json o;
    figures(Family::opamp, o);
    // What the worst case takes, and which rails are reached (devices::OpampParams).
    const auto& a = d.opamp;
    o["gbw_low"] = a.gbw_low_hz();
    o["slew_low"] = a.slew_low_v_per_s();
    o["aol_low"] = a.aol_low();
    o["inputs_reach_hi"] = a.inputs_reach_hi();
    o["inputs_reach_lo"] = a.inputs_reach_lo();
    o["output_reaches_hi"] = a.output_reaches_hi();
    o["output_reaches_lo"] = a.output_reaches_lo();
    j["opamp"] = std::move(o);
  }
  return j;
}

nlohmann::ordered_json piece_json(const MeasuredPiece& p) {
  return {{"label", p.label},
          {"device", p.device},
          {"idss", report::number_or_null(p.idss_a)},
          {"vp", report::number_or_null(p.vp_v)},
          {"hfe", report::number_or_null(p.hfe)},
          {"uncertainty", p.uncertainty},
          {"note", p.note}};
}

namespace detail {
namespace {

std::string percent_text(double fraction) { return fmt::format("{:.2g}%", 100.0 * fraction); }

/// "±61.5uA (1.7%)": an uncertainty in notation and as a share of the value.
std::string plus_minus(double value, double uncertainty, Unit unit, std::string_view suffix = "") {
  return fmt::format("± {}{} ({})", units::format_value(uncertainty, unit), suffix,
                     percent_text(uncertainty / std::abs(value)));
}

/// A residual with its sign: "+1.2mV", "-35uV"; "0V" below a part in 1e9 of the reading
/// (rounding, far below any meter's resolution).
std::string signed_volts(double v, double reading) {
  if (std::abs(v) <= 1e-9 * std::abs(reading)) return "0V";
  return (v > 0 ? "+" : "-") + units::format_value(std::abs(v), Unit::volt);
}

}  // namespace
}  // namespace detail

std::string fit_text(const devices::SelfBiasFit& fit, const devices::ReadingAccuracy& accuracy,
                     const devices::BenchConditions& bench) {
  std::string out = fmt::format("{} from {} self-bias readings\n", devices::kind_name(fit.kind), fit.readings.size());
  TextTable figures({{""}, {"", Align::right}, {""}});
  figures.add_row({"IDSS", quantity_text(fit.idss_a, Unit::ampere),
                   detail::plus_minus(fit.idss_a, fit.idss_uncertainty_a, Unit::ampere)});
  figures.add_row(
      {"VP", quantity_text(fit.vp_v, Unit::volt), detail::plus_minus(fit.vp_v, fit.vp_uncertainty_v, Unit::volt)});
  // Transconductance as datasheets write gfs: mA/V.
  figures.add_row({"gm0", units::format_value(fit.gm0_s, Unit::ampere) + "/V",
                   detail::plus_minus(fit.gm0_s, fit.gm0_uncertainty_s, Unit::ampere, "/V") + "  = 2 IDSS/|VP|"});
  // The figures need no header: render without the rule and drop the (empty) title line.
  std::string rows = figures.render({.indent = "  ", .rule = false});
  out += rows.substr(rows.find('\n') + 1);
  const report::TableLayout layout{.indent = "  "};

  TextTable readings({{"#", Align::right},
                      {"RS", Align::right},
                      {"VS", Align::right},
                      {"ID", Align::right},
                      {"FITTED VS", Align::right},
                      {"RESIDUAL", Align::right}});
  for (std::size_t i = 0; i < fit.readings.size(); ++i) {
    const auto& r = fit.readings[i];
    readings.add_row({std::to_string(i + 1), units::format_value(r.rs_ohm, Unit::ohm),
                      quantity_text(r.vs_v, Unit::volt), units::format_value(r.id_a, Unit::ampere),
                      quantity_text(r.fitted_vs_v, Unit::volt), detail::signed_volts(r.residual_v, r.vs_v)});
  }
  out += "\n" + readings.render(layout);
  out += fmt::format(
      "\n± is the expanded uncertainty (k = 2, about 95 %) from the meter accuracy {} and the\n"
      "resistor tolerance {}",
      detail::percent_text(accuracy.meter), detail::percent_text(accuracy.resistor));
  if (fit.readings.size() > 2) {
    out += fmt::format("; the readings scatter {:.2g} times as much as those allow{}", fit.scatter,
                       fit.widened_by_scatter ? ", which widens it" : "");
  }
  out += ".\n";
  if (bench.drain_supply_v) {
    out += fmt::format("IDSS at VDS = 0 (lambda {:g}/V, drain supply {}).\n", bench.lambda_per_v,
                       quantity_text(*bench.drain_supply_v, Unit::volt));
  } else {
    out += "IDSS at the bench's drain-source voltage (--drain-supply refers it to VDS = 0).\n";
  }
  return out;
}

nlohmann::ordered_json fit_json(const devices::SelfBiasFit& fit, const devices::ReadingAccuracy& accuracy,
                                const devices::BenchConditions& bench) {
  nlohmann::ordered_json readings = nlohmann::ordered_json::array();
  for (const auto& r : fit.readings) {
    readings.push_back(
        {{"rs", r.rs_ohm}, {"vs", r.vs_v}, {"id", r.id_a}, {"fitted_vs", r.fitted_vs_v}, {"residual", r.residual_v}});
  }
  return {{"schema", 1},
          {"kind", devices::kind_name(fit.kind)},
          {"idss", fit.idss_a},
          {"vp", fit.vp_v},
          {"idss_uncertainty", fit.idss_uncertainty_a},
          {"vp_uncertainty", fit.vp_uncertainty_v},
          {"gm0", fit.gm0_s},
          {"gm0_uncertainty", fit.gm0_uncertainty_s},
          {"correlation", fit.correlation},
          {"coverage_factor", 2},
          {"meter_accuracy", accuracy.meter},
          {"rs_tol", accuracy.resistor},
          {"drain_supply",
           bench.drain_supply_v ? nlohmann::ordered_json(*bench.drain_supply_v) : nlohmann::ordered_json(nullptr)},
          {"lambda", bench.lambda_per_v},
          {"scatter", fit.readings.size() > 2 ? nlohmann::ordered_json(fit.scatter) : nlohmann::ordered_json(nullptr)},
          {"readings", std::move(readings)},
          {"notes", fit.notes}};
}

nlohmann::ordered_json devices_json(const std::vector<DeviceRecord>& records,
                                    const std::vector<MeasuredPiece>& pieces) {
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const auto& d : records) list.push_back(device_json(d));
  nlohmann::ordered_json measured = nlohmann::ordered_json::array();
  for (const auto& p : pieces) measured.push_back(piece_json(p));
  return {{"schema", 1}, {"devices", std::move(list)}, {"pieces", std::move(measured)}};
}

}  // namespace shelfstage::cli
