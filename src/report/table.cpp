// Plain-text tables: column widths, alignment, and the header rule.
#include "shelfstage/report/table.hpp"

#include <algorithm>
#include <stdexcept>

#include "shelfstage/units/text.hpp"

namespace shelfstage::report {

namespace detail {
namespace {

/// Line breaks and tabs become spaces so one row stays one line; any other control character
/// or byte that is not UTF-8 is escaped (units::escape_text), so no cell can drive a terminal.
std::string printable(std::string_view text) {
  std::string out(text);
  for (char& c : out) {
    if (c == '\n' || c == '\r' || c == '\t') c = ' ';
  }
  return units::escape_text(out);
}

void append_padded(std::string& line, const std::string& cell, std::size_t width, Align align) {
  const std::size_t w = display_width(cell);
  const std::size_t pad = width > w ? width - w : 0;
  if (align == Align::right) line.append(pad, ' ');
  line += cell;
  if (align == Align::left) line.append(pad, ' ');
}

void trim_right(std::string& line) {
  while (!line.empty() && line.back() == ' ') line.pop_back();
}

}  // namespace
}  // namespace detail

std::size_t display_width(std::string_view utf8) {
  std::size_t n = 0;
  for (char c : utf8) {
    if ((static_cast<unsigned char>(c) & 0xC0) != 0x80) ++n;  // not a continuation byte
  }
  return n;
}

TextTable::TextTable(std::vector<Column> columns) : columns_(std::move(columns)) {}

void TextTable::add_row(std::vector<std::string> cells) {
  if (cells.size() > columns_.size()) {
    throw std::invalid_argument("TextTable::add_row: " + std::to_string(cells.size()) + " cells for " +
                                std::to_string(columns_.size()) + " columns");
  }
  cells.resize(columns_.size());
  for (auto& cell : cells) cell = detail::printable(cell);
  rows_.push_back(std::move(cells));
}

std::string TextTable::render(const TableLayout& layout) const {
  // Which columns to show, and how wide each is.
  std::vector<std::size_t> shown;
  std::vector<std::size_t> width;
  for (std::size_t c = 0; c < columns_.size(); ++c) {
    std::size_t w = 0;
    for (const auto& row : rows_) w = std::max(w, display_width(row[c]));
    if (layout.drop_empty_columns && w == 0 && !rows_.empty()) continue;
    shown.push_back(c);
    width.push_back(std::max(w, display_width(columns_[c].title)));
  }

  std::string out;
  auto emit = [&](auto cell_of) {
    std::string line = layout.indent;
    for (std::size_t i = 0; i < shown.size(); ++i) {
      if (i > 0) line += layout.gap;
      const std::size_t c = shown[i];
      detail::append_padded(line, cell_of(c, width[i]), width[i], columns_[c].align);
    }
    detail::trim_right(line);
    out += line;
    out += '\n';
  };
  emit([&](std::size_t c, std::size_t) { return detail::printable(columns_[c].title); });
  if (layout.rule) emit([](std::size_t, std::size_t w) { return std::string(w, '-'); });
  for (const auto& row : rows_) emit([&](std::size_t c, std::size_t) { return row[c]; });
  return out;
}

}  // namespace shelfstage::report
