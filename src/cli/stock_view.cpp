// How the stock looks to a person (grouped tables) and to a script (JSON, schema 1).
#include "stock_view.hpp"

#include <fmt/format.h>

#include <functional>

#include "shelfstage/report/design_json.hpp"
#include "shelfstage/report/table.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/text.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::cli {

using report::Align;
using report::Column;
using report::TextTable;
using store::Part;
using store::PartKind;

namespace detail {
namespace {

std::string tol_text(const Part& p) { return p.tol ? units::format_tolerance(*p.tol) : std::string(); }

std::string count_text(int n) { return std::to_string(n); }
std::string reserved_text(int n) { return n == 0 ? std::string() : std::to_string(n); }

struct Group {
  const char* heading;
  std::function<bool(const Part&)> member;
  std::vector<Column> columns;
  std::function<std::vector<std::string>(const Part&)> row;
};

// A line naming a device type: the same columns for JFETs, BJTs and op-amps.
std::vector<std::string> transistor_row(const Part& p) {
  return {std::to_string(p.id),
          p.device,
          std::string(store::kind_code(p.kind)),
          p.bin,
          count_text(p.qty),
          reserved_text(p.reserved),
          std::string(stock_status(p)),
          p.package,
          p.note};
}

std::vector<Group> groups() {
  const Column id{"ID", Align::right};
  const Column qty{"QTY", Align::right};
  const Column reserved{"RESERVED", Align::right};
  const Column status{"STATUS"};
  return {
      {"Resistors",
       [](const Part& p) { return p.kind == PartKind::resistor; },
       {id,
        {"VALUE", Align::right},
        {"TOL"},
        {"POWER", Align::right},
        {"BIN"},
        qty,
        reserved,
        status,
        {"PACKAGE"},
        {"NOTE"}},
       [](const Part& p) {
         return std::vector<std::string>{std::to_string(p.id),
                                         value_text(p),
                                         tol_text(p),
                                         p.power_w ? power_text(*p.power_w) : "",
                                         p.bin,
                                         count_text(p.qty),
                                         reserved_text(p.reserved),
                                         std::string(stock_status(p)),
                                         p.package,
                                         p.note};
       }},
      {"Capacitors",
       [](const Part& p) { return p.kind == PartKind::capacitor; },
       {id,
        {"VALUE", Align::right},
        {"TOL"},
        {"VOLTS", Align::right},
        {"DIELECTRIC"},
        {"BIN"},
        qty,
        reserved,
        status,
        {"PACKAGE"},
        {"NOTE"}},
       [](const Part& p) {
         return std::vector<std::string>{std::to_string(p.id),
                                         value_text(p),
                                         tol_text(p),
                                         p.volts ? units::format_value(*p.volts, units::Unit::volt) : "",
                                         p.dielectric,
                                         p.bin,
                                         count_text(p.qty),
                                         reserved_text(p.reserved),
                                         std::string(stock_status(p)),
                                         p.package,
                                         p.note};
       }},
      {"JFETs",
       [](const Part& p) { return p.kind == PartKind::njfet || p.kind == PartKind::pjfet; },
       {id, {"DEVICE"}, {"TYPE"}, {"BIN"}, qty, reserved, status, {"PACKAGE"}, {"NOTE"}},
       transistor_row},
      {"BJTs",
       [](const Part& p) { return p.kind == PartKind::npn || p.kind == PartKind::pnp; },
       {id, {"DEVICE"}, {"TYPE"}, {"BIN"}, qty, reserved, status, {"PACKAGE"}, {"NOTE"}},
       transistor_row},
      {"Op-amps, in packages",
       [](const Part& p) { return p.kind == PartKind::opamp; },
       {id, {"DEVICE"}, {"TYPE"}, {"BIN"}, qty, reserved, status, {"PACKAGE"}, {"NOTE"}},
       transistor_row},
  };
}

}  // namespace
}  // namespace detail

std::string_view stock_status(const Part& part) {
  const int available = part.available();
  if (available <= 0) return "out";
  if (available <= kLowMark) return "low";
  return "";
}

std::string value_text(const Part& part) {
  switch (part.kind) {
    case PartKind::resistor: return units::format_value(part.value, units::Unit::ohm);
    case PartKind::capacitor: return units::format_value(part.value, units::Unit::farad);
    default: return part.device;
  }
}

std::string describe_part(const Part& part) {
  std::string text = fmt::format("{} {}", store::kind_code(part.kind), value_text(part));
  if (part.tol) text += " " + units::format_tolerance(*part.tol);
  if (part.power_w) text += " " + power_text(*part.power_w);
  if (part.volts) text += " " + units::format_value(*part.volts, units::Unit::volt);
  if (!part.dielectric.empty()) text += " " + part.dielectric;
  if (!part.bin.empty()) text += " bin " + part.bin;
  return units::escape_text(text);  // an old database may hold text that is not clean
}

std::string power_text(double watts) {
  // Resistors are marked 0.125 W, 0.25 W, 0.6 W, 1 W: a plain decimal reads better than mW.
  if (watts >= 0.01 && watts < 1000) return fmt::format("{:g}W", watts);
  return units::format_value(watts, units::Unit::watt);
}

std::string stock_table(const std::vector<Part>& parts) {
  if (parts.empty()) {
    return "The shelf is empty. Add parts with `shelfstage stock add` or `shelfstage stock import FILE.csv`.\n";
  }
  std::string out;
  int lines = 0, out_count = 0, low_count = 0;
  std::int64_t pieces = 0;  // each line counts up to INT_MAX: their sum needs 64 bits
  for (const auto& group : detail::groups()) {
    TextTable table(group.columns);
    for (const auto& p : parts) {
      if (!group.member(p)) continue;
      table.add_row(group.row(p));
      ++lines;
      pieces += p.qty;
      const auto status = stock_status(p);
      out_count += status == "out";
      low_count += status == "low";
    }
    if (table.row_count() == 0) continue;
    if (!out.empty()) out += '\n';
    out += fmt::format("{} ({} {})\n", group.heading, table.row_count(), table.row_count() == 1 ? "line" : "lines");
    out += table.render({.indent = "  "});
  }
  out += fmt::format("\n{} {}, {} {} on hand; {} out, {} low (at most {} available).\n", lines,
                     lines == 1 ? "line" : "lines", pieces, pieces == 1 ? "piece" : "pieces", out_count, low_count,
                     kLowMark);
  return out;
}

nlohmann::ordered_json part_json(const Part& part) {
  nlohmann::ordered_json j;
  j["kind"] = store::kind_code(part.kind);
  if (store::is_passive(part.kind)) {
    j["value"] = part.value;
  } else {
    j["value"] = part.device;
  }
  j["qty"] = part.qty;
  j["reserved"] = part.reserved;
  j["bin"] = part.bin;
  j["tol"] = part.tol ? nlohmann::ordered_json(units::format_tolerance(*part.tol)) : nlohmann::ordered_json(nullptr);
  j["power"] = report::number_or_null(part.power_w);
  j["volts"] = report::number_or_null(part.volts);
  j["dielectric"] = report::text_or_null(part.dielectric);
  j["note"] = part.note;
  j["id"] = part.id;
  j["package"] = report::text_or_null(part.package);
  j["available"] = part.available();
  const auto status = stock_status(part);
  j["status"] = status.empty() ? std::string_view("ok") : status;
  return j;
}

nlohmann::ordered_json stock_json(const std::vector<Part>& parts) {
  nlohmann::ordered_json list = nlohmann::ordered_json::array();
  for (const auto& p : parts) list.push_back(part_json(p));
  return {{"schema", 1}, {"parts", std::move(list)}};
}

}  // namespace shelfstage::cli
