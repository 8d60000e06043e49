// Builds as tables and JSON.
#include "builds_view.hpp"

#include <fmt/format.h>

#include "shelfstage/report/table.hpp"

namespace shelfstage::cli {

namespace {

std::vector<std::string> split_designators(const std::string& text) {
  std::vector<std::string> out;
  std::string cur;
  for (const char ch : text) {
    if (ch == ',') {
      if (!cur.empty()) out.push_back(cur);
      cur.clear();
    } else {
      cur += ch;
    }
  }
  if (!cur.empty()) out.push_back(cur);
  return out;
}

report::TableLayout indented() {
  report::TableLayout layout;
  layout.indent = "  ";
  return layout;
}

}  // namespace

nlohmann::ordered_json build_json(const store::BuildRecord& b) {
  nlohmann::ordered_json lines = nlohmann::ordered_json::array();
  for (const auto& l : b.lines)
    lines.push_back(
        {{"part_id", l.part_id}, {"part", l.part}, {"qty", l.qty}, {"designators", split_designators(l.designators)}});
  return {{"id", b.id},
          {"design", b.design_id},
          {"copies", b.copies},
          {"state", b.state},
          {"when", b.created},
          {"undone", b.undone ? nlohmann::ordered_json(*b.undone) : nlohmann::ordered_json(nullptr)},
          {"pieces", b.pieces()},
          {"lines", lines}};
}

std::string build_lines_table(const store::BuildRecord& b) {
  using report::Align;
  report::TextTable t({{"LINE", Align::right}, {"PART"}, {"QTY", Align::right}, {"FOR"}});
  for (const auto& l : b.lines) {
    const auto d = split_designators(l.designators);
    t.add_row({std::to_string(l.part_id), l.part, std::to_string(l.qty), fmt::format("{}", fmt::join(d, " "))});
  }
  return t.render(indented());
}

std::string builds_table(const std::vector<store::BuildRecord>& builds) {
  if (builds.empty()) return "No builds yet. `shelfstage build ID` builds a kept design.\n";
  using report::Align;
  report::TextTable t({{"BUILD", Align::right},
                       {"DESIGN"},
                       {"COPIES", Align::right},
                       {"PIECES", Align::right},
                       {"STATE"},
                       {"WHEN"},
                       {"UNDONE"}});
  for (const auto& b : builds)
    t.add_row({std::to_string(b.id), b.design_id, std::to_string(b.copies), std::to_string(b.pieces()), b.state,
               b.created, b.undone.value_or("")});
  return t.render();
}

}  // namespace shelfstage::cli
