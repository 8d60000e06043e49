// How the transistor types and measured pieces look to a person (tables) and to a script (JSON).
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

/// "25V/25V/350mW": the maximum ratings stated (VDS or VCEO, reverse, dissipation), or
/// "not stated".
std::string ratings_text(const devices::Ratings& r) {
  if (!r.any()) return "not stated";
  auto v = [](const std::optional<double>& x, Unit u) { return x ? units::format_value(*x, u) : std::string("?"); };
  return fmt::format("{}/{}/{}", v(r.v_max_v, Unit::volt), v(r.v_rev_max_v, Unit::volt), v(r.p_max_w, Unit::watt));
}

std::string devices_table(const std::vector<DeviceRecord>& records, const std::vector<MeasuredPiece>& pieces) {
  if (records.empty()) {
    return "No transistor types yet. Add them with `shelfstage devices add` or "
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
  for (const auto& d : records) {
    const std::string kind(devices::kind_name(d.kind));
    if (devices::is_jfet(d.kind)) {
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
  // The figures of its family, the note, then the maximum ratings (null: not stated).
  const Family own = devices::is_jfet(d.kind) ? Family::jfet : Family::bjt;
  for (const auto& c : store::device_columns())
    if (c.family == own) j[std::string(c.name)] = report::number_or_null(c.get(d));
  j["note"] = d.note;
  for (const auto& c : store::device_columns())
    if (c.family == Family::rating) j[std::string(c.name)] = report::number_or_null(c.get(d));
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
