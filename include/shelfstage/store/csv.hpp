// CSV in and out of the stock: RFC 4180 reading, the INTERFACE.md columns, all-or-nothing
// validation with every bad row named.
#pragma once
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/devices/record.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/store/part.hpp"

namespace shelfstage::store {

/// One record of a CSV file with the line number it starts on (1-based; the header is 1).
struct CsvRow {
  std::size_t line = 0;
  std::vector<std::string> fields;
};

/// Splits CSV text per RFC 4180: comma separated, fields optionally in double quotes, a
/// doubled quote inside quotes is a quote, quoted fields may hold commas and line breaks.
/// CRLF or LF line ends; a UTF-8 byte-order mark is skipped; blank lines are skipped.
/// A field that opens with a quote (after optional spaces) is quoted; text after its closing
/// quote other than spaces is an error; a quote inside an unquoted field is kept as is.
/// Throws CsvError ("line 7: unterminated quoted field").
std::vector<CsvRow> read_csv(std::string_view text);
/// As above, errors naming the file: "stock.csv:7: unterminated quoted field".
std::vector<CsvRow> read_csv(std::string_view text, std::string_view source);

/// Quotes a field when it needs it (a comma, quote, line break, or spaces at either end).
std::string csv_field(std::string_view field);

/// A CSV that failed validation: every bad row, each "FILE:LINE: reason". what() is the
/// summary line ("stock.csv: 4 bad rows, nothing imported").
class CsvError : public InputError {
 public:
  CsvError(const std::string& summary, std::vector<std::string> problems)
      : InputError(summary), problems_(std::move(problems)) {}
  const std::vector<std::string>& problems() const { return problems_; }

 private:
  std::vector<std::string> problems_;
};

/// Parses and validates a stock CSV (columns: kind, value, qty, tol, power, volts,
/// dielectric, bin, note, and the extension `package`; header required, names
/// case-insensitive, order free, unknown or duplicate column rejected; kind, value and qty
/// required). Either every row is good, or CsvError lists every bad row.
/// `source` names the file in messages. Values: SI or IEC 60062 notation with an optional
/// unit (4.7k, 4k7, 4.7kohm, 100n, 100nF); power in watts, also as a fraction (0.25, 1/4,
/// 1/4W, 250mW); volts with an optional V. Rows of empty fields are skipped; a row shorter
/// than the header leaves the missing fields empty. Transistor rows name a device in
/// `value`; a name not in known_devices (compared case-insensitively) is a bad row, and the
/// part takes the spelling of the list.
std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<std::string>& known_devices);
/// As above, and a transistor row whose kind differs from its device's kind is a bad row
/// ("value 'SJ-101' is a device of kind NJFET, not NPN").
std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<devices::DeviceRecord>& known_devices);

/// The stock as CSV with every column, one row per stock line (quantities on hand;
/// reservations are not exported). parse_stock_csv(write_stock_csv(p)) gives p back.
std::string write_stock_csv(const std::vector<Part>& parts);

/// Parses and validates a device CSV. All or nothing, as above. Columns (INTERFACE.md):
/// name, kind, idss_min, idss_max, vp_min, vp_max (either order; stored with
/// Range::min <= Range::max numerically), lambda, cgs, cgd (JFET); hfe_min, hfe_max, is,
/// vaf, cje, cjc (BJT); optional idss_typ, vp_typ, hfe_typ, note; extensions tc_idss
/// (fraction per K), tc_vp (V per K), vce_sat (V). Required per row: name, kind, and the
/// idss and vp ranges (JFET) or the hfe range (BJT); the other figures default to the
/// DeviceRecord defaults. A figure of the other family on a row is an error.
std::vector<devices::DeviceRecord> parse_devices_csv(std::string_view text, std::string_view source);
std::string write_devices_csv(const std::vector<devices::DeviceRecord>& records);

/// Parses and validates a measured-piece CSV: columns label, device, idss, vp, hfe,
/// uncertainty, note (label and device required). uncertainty is "3%" or a fraction
/// ("0.03"), 3 % when empty. The device must be one of known (case-insensitive); the piece
/// is checked against its kind (piece_problems). Duplicate labels in the file are bad rows.
std::vector<devices::MeasuredPiece> parse_pieces_csv(std::string_view text, std::string_view source,
                                                     const std::vector<devices::DeviceRecord>& known);
std::string write_pieces_csv(const std::vector<devices::MeasuredPiece>& pieces);

}  // namespace shelfstage::store
