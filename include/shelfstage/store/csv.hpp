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
/// Throws units::ParseError-like InputError ("line 7: unterminated quoted field").
std::vector<CsvRow> read_csv(std::string_view text);

/// Quotes a field when it needs it.
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
/// dielectric, bin, note, and the extension `package`; header required, order free, unknown
/// column rejected). Either every row is good, or CsvError lists every bad row.
/// `source` names the file in messages. Transistor rows name a device; whether the device
/// exists is checked by the caller against the database (see known_devices).
std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<std::string>& known_devices);

/// The stock as CSV with every column, one row per stock line (quantities on hand;
/// reservations are not exported). parse_stock_csv(write_stock_csv(p)) gives p back.
std::string write_stock_csv(const std::vector<Part>& parts);

/// Parses and validates a device CSV (INTERFACE.md columns). All or nothing, as above.
std::vector<devices::DeviceRecord> parse_devices_csv(std::string_view text, std::string_view source);
std::string write_devices_csv(const std::vector<devices::DeviceRecord>& records);

}  // namespace shelfstage::store
