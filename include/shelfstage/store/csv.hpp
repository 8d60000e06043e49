// CSV in and out of the stock: RFC 4180 reading, the columns of docs/interface.md, all-or-nothing
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
  /// Byte offset in the file (from 0) where each field's text starts: after the opening quote
  /// of a quoted field.
  std::vector<std::size_t> offsets;
};

/// Splits CSV text per RFC 4180: comma separated, fields optionally in double quotes, a
/// doubled quote inside quotes is a quote, quoted fields may hold commas and line breaks.
/// CRLF or LF line ends; a UTF-8 byte-order mark is skipped; blank lines are skipped. A file
/// that starts with a UTF-16 byte-order mark is refused (save it as UTF-8).
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
  CsvError(const std::string& summary, std::vector<std::string> problems, bool not_utf8 = false)
      : InputError(summary), problems_(std::move(problems)), not_utf8_(not_utf8) {}
  const std::vector<std::string>& problems() const { return problems_; }
  /// True when a field held bytes that are not UTF-8 (the file may be in another encoding).
  bool not_utf8() const { return not_utf8_; }

 private:
  std::vector<std::string> problems_;
  bool not_utf8_ = false;
};

/// Throws the CsvError of a file with bad rows: "SOURCE: N bad rows, nothing imported" and
/// the problems, one line each (several may name one row).
[[noreturn]] void throw_bad_rows(std::string_view source, std::vector<std::string> problems, std::size_t bad_rows,
                                 bool not_utf8 = false);

/// Parses and validates a stock CSV (columns: kind, value, qty, tol, power, volts,
/// dielectric, package, bin, note; header required, names
/// case-insensitive, order free, unknown or duplicate column rejected; kind, value and qty
/// required). Either every row is good, or CsvError lists every bad row. Every field must be
/// clean text (units/text.hpp): a bad one is named with its column, line and byte offset.
/// A capacitor's value needs a multiplier, an exponent or the unit F (units::parse_capacitance).
/// `source` names the file in messages. Values: SI or IEC 60062 notation with an optional
/// unit (4.7k, 4k7, 4.7kohm, 100n, 100nF); power in watts, also as a fraction (0.25, 1/4,
/// 1/4W, 250mW); volts with an optional V. Rows of empty fields are skipped; a row shorter
/// than the header leaves the missing fields empty. Transistor and op-amp rows name a device
/// in `value` (an op-amp row's qty counts packages); a name not in known_devices (compared
/// case-insensitively) is a bad row, and the part takes the spelling of the list.
/// When `lines` is given it receives the line each returned part was read from.
std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<std::string>& known_devices,
                                  std::vector<std::size_t>* lines = nullptr);
/// As above, and a row whose kind differs from its device's kind is a bad row ("value
/// 'SJ-101' is a device of kind NJFET, not NPN", "value 'SA-210' is a device of kind OPAMP,
/// not NPN").
std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<devices::DeviceRecord>& known_devices,
                                  std::vector<std::size_t>* lines = nullptr);

/// The stock as CSV with every column, one row per stock line (quantities on hand;
/// reservations are not exported). parse_stock_csv(write_stock_csv(p)) gives p back. Text
/// that is not clean (from a database written before text was checked) is written escaped
/// (units::escape_text), so the file always reads back; the same goes for the writers below.
std::string write_stock_csv(const std::vector<Part>& parts);

/// Parses and validates a device CSV. All or nothing, as above. Columns (docs/interface.md):
/// name, kind, idss_min, idss_max, vp_min, vp_max (either order; stored with
/// Range::min <= Range::max numerically), lambda, cgs, cgd (JFET); hfe_min, hfe_max, is,
/// vaf, cje, cjc (BJT); optional idss_typ, vp_typ, hfe_typ, note; also tc_idss
/// (fraction per K), tc_vp (V per K), vce_sat (V); the maximum ratings; for op-amps (kind
/// OPAMP) channels, vs_min, vs_max, gbw, slew, aol, out_drop_hi, out_drop_lo, out_drop_ohm,
/// iout_max, cm_drop_hi, cm_drop_lo, vos, ib (required) and gbw_min, slew_min, aol_min, pole2,
/// ios, en, in, iq (empty: not stated), in the notations of DeviceColumn::Notation. Required
/// per row: name, kind, and the idss and vp ranges (JFET), the hfe range (BJT) or the required
/// op-amp figures; the other figures default to the DeviceRecord defaults. A figure of
/// another family on a row is an error. The writer puts the op-amp columns after the ratings.
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
