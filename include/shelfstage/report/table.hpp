// Plain-text tables for a terminal: aligned columns a person can scan, with no box drawing.
#pragma once
#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace shelfstage::report {

/// How a column's cells line up: text to the left, numbers to the right.
enum class Align { left, right };

/// One column: its title (printed in the header line) and its alignment.
struct Column {
  std::string title;
  Align align = Align::left;
};

/// How a table is laid out.
struct TableLayout {
  std::string indent;              ///< put in front of every line (e.g. two spaces under a heading)
  std::string gap = "  ";          ///< between columns
  bool rule = true;                ///< a line of dashes under the header
  bool drop_empty_columns = true;  ///< leave out a column whose cells are all empty
};

/// A table of text cells. Widths are counted in characters (UTF-8 code points), so "4.7kΩ"
/// takes five columns on a terminal. Control characters in cells (a line break in a note)
/// print as spaces so that one row stays one line.
class TextTable {
 public:
  explicit TextTable(std::vector<Column> columns);

  /// Appends a row. Missing trailing cells are empty; more cells than columns is a
  /// programming error (std::invalid_argument).
  void add_row(std::vector<std::string> cells);

  std::size_t row_count() const { return rows_.size(); }

  /// The table as lines, each ending in '\n', without trailing blanks. An empty table
  /// (no rows) renders as its header alone.
  std::string render(const TableLayout& layout = {}) const;

 private:
  std::vector<Column> columns_;
  std::vector<std::vector<std::string>> rows_;
};

/// The number of terminal columns text takes: its UTF-8 code points (continuation bytes do
/// not count). Wide East Asian characters and combining marks are not special-cased.
std::size_t display_width(std::string_view utf8);

}  // namespace shelfstage::report
