// libFuzzer target: any bytes through the CSV reader and the stock, device and piece parsers.
// Errors derived from shelfstage::Error are expected; anything else (a crash, a sanitizer
// report, another exception) is a bug. Whatever parses must survive export and re-import.
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/error.hpp"
#include "shelfstage/store/csv.hpp"

using namespace shelfstage;

namespace {

[[noreturn]] void bug() { std::abort(); }

void check_stock(std::string_view text) {
  static const std::vector<std::string> known = {"SJ-101", "SQ-410", "x"};
  std::vector<store::Part> parts;
  try {
    parts = store::parse_stock_csv(text, "fuzz.csv", known);
  } catch (const Error&) {
    return;
  }
  // Property: what was read is written and read back to the same stock.
  const auto again = store::parse_stock_csv(store::write_stock_csv(parts), "again.csv", known);
  if (again.size() != parts.size()) bug();
  for (std::size_t i = 0; i < parts.size(); ++i) {
    const auto& a = parts[i];
    const auto& b = again[i];
    if (a.kind != b.kind || a.value != b.value || a.device != b.device || a.qty != b.qty || a.tol != b.tol ||
        a.power_w != b.power_w || a.volts != b.volts || a.dielectric != b.dielectric || a.package != b.package ||
        a.bin != b.bin || a.note != b.note)
      bug();
  }
}

void check_devices(std::string_view text) {
  std::vector<devices::DeviceRecord> records;
  try {
    records = store::parse_devices_csv(text, "fuzz.csv");
  } catch (const Error&) {
    return;
  }
  const std::string csv = store::write_devices_csv(records);
  const auto again = store::parse_devices_csv(csv, "again.csv");
  if (again.size() != records.size() || store::write_devices_csv(again) != csv) bug();
  try {
    (void)store::parse_pieces_csv(text, "fuzz.csv", records);
  } catch (const Error&) {
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  try {
    const auto rows = store::read_csv(text);
    // Property: every field quoted by csv_field reads back unchanged.
    std::string out;
    for (const auto& row : rows) {
      for (std::size_t i = 0; i < row.fields.size(); ++i) {
        if (i > 0) out += ',';
        out += store::csv_field(row.fields[i]);
      }
      out += '\n';
    }
    const auto again = store::read_csv(out);
    // A row of one empty field (from "" alone) is written as a blank line, which reading
    // skips; every other row must come back.
    std::size_t j = 0;
    for (const auto& row : rows) {
      if (row.fields.size() == 1 && row.fields[0].empty()) continue;
      if (j >= again.size() || again[j].fields != row.fields) bug();
      ++j;
    }
  } catch (const Error&) {
  }
  check_stock(text);
  check_devices(text);
  return 0;
}
