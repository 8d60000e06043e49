// CSV in and out of the stock: an RFC 4180 reader and writer, and the stock, device and
// measured-piece files with every bad row reported and nothing taken from a bad file.
#include "shelfstage/store/csv.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <climits>
#include <cmath>
#include <functional>
#include <map>
#include <optional>
#include <set>
#include <span>

#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/text.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::store {
namespace {

using units::Unit;

std::string_view trim(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return s;
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

bool all_digits(std::string_view s) {
  return !s.empty() && std::all_of(s.begin(), s.end(), [](char c) { return c >= '0' && c <= '9'; });
}

/// Text as it goes between quotes in a message: escaped, cut after 40 characters.
std::string shown(std::string_view text) { return units::clip(text); }

/// A units parse error reworded for a column: "value '4.7q': ..." -> "power '4.7q': ...".
std::string reworded(std::string_view field, const std::exception& e) {
  const std::string m = e.what();
  const auto q = m.find(" '");
  if (q != std::string::npos) return std::string(field) + m.substr(q);
  return fmt::format("{}: {}", field, m);
}

// --- RFC 4180 reading ------------------------------------------------------------------

struct SyntaxError {
  std::size_t line;
  std::string message;
};

bool is_blank(char c) { return c == ' ' || c == '\t'; }

/// The reader's place in the text: the offset and the line (from 1) it is on.
struct Cursor {
  std::string_view text;
  std::size_t pos = 0;
  std::size_t line = 1;

  // Consumes one line end at pos (CRLF, LF or a lone CR), if there is one.
  bool line_end() {
    const std::size_t n = text.size();
    if (pos < n && text[pos] == '\r') {
      ++pos;
      if (pos < n && text[pos] == '\n') ++pos;
      ++line;
      return true;
    }
    if (pos < n && text[pos] == '\n') {
      ++pos;
      ++line;
      return true;
    }
    return false;
  }
};

/// Skips lines of nothing but spaces; false once nothing but blanks is left.
bool skip_blank_lines(Cursor& c) {
  const std::size_t n = c.text.size();
  while (c.pos < n) {
    std::size_t look = c.pos;
    while (look < n && is_blank(c.text[look])) ++look;
    if (look == n) return false;
    if (c.text[look] != '\r' && c.text[look] != '\n') return true;
    c.pos = look;
    c.line_end();
  }
  return false;
}

/// The quoted field whose quote is at `quote`, up to the separator after the closing quote.
std::string quoted_field(Cursor& c, std::size_t quote, CsvRow& row) {
  const std::string_view text = c.text;
  const std::size_t n = text.size();
  std::string field;
  const std::size_t open_line = c.line;
  c.pos = quote + 1;
  row.offsets.back() = c.pos;
  while (true) {
    if (c.pos >= n) throw SyntaxError{open_line, "unterminated quoted field (the quote opens on this line)"};
    const char ch = text[c.pos];
    if (ch == '"') {
      if (c.pos + 1 < n && text[c.pos + 1] == '"') {
        field += '"';
        c.pos += 2;
        continue;
      }
      ++c.pos;
      break;
    }
    if (ch == '\n' && !(c.pos > 0 && text[c.pos - 1] == '\r')) ++c.line;
    if (ch == '\r') ++c.line;
    field += ch;
    ++c.pos;
  }
  while (c.pos < n && is_blank(text[c.pos])) ++c.pos;
  if (c.pos < n && text[c.pos] != ',' && text[c.pos] != '\r' && text[c.pos] != '\n')
    throw SyntaxError{c.line, fmt::format("text after the closing quote of field {} (a quote inside a quoted "
                                          "field is written twice: \"\")",
                                          row.fields.size() + 1)};
  return field;
}

/// One record from c.pos, through its line end.
CsvRow read_record(Cursor& c) {
  const std::string_view text = c.text;
  const std::size_t n = text.size();
  CsvRow row;
  row.line = c.line;
  while (true) {
    std::string field;
    std::size_t start = c.pos;
    while (start < n && is_blank(text[start])) ++start;
    row.offsets.push_back(c.pos);
    if (start < n && text[start] == '"') {
      field = quoted_field(c, start, row);
    } else {
      while (c.pos < n && text[c.pos] != ',' && text[c.pos] != '\r' && text[c.pos] != '\n') field += text[c.pos++];
    }
    row.fields.push_back(std::move(field));
    if (c.pos < n && text[c.pos] == ',') {
      ++c.pos;
      continue;
    }
    c.line_end();
    break;
  }
  return row;
}

/// Splits text into records; throws SyntaxError.
std::vector<CsvRow> split(std::string_view text) {
  std::vector<CsvRow> rows;
  Cursor c{text};
  if (text.substr(0, 2) == "\xFF\xFE" || text.substr(0, 2) == "\xFE\xFF")
    throw SyntaxError{1, "the file is UTF-16 (it starts with a UTF-16 byte-order mark); save it as UTF-8"};
  if (text.substr(0, 3) == "\xEF\xBB\xBF") c.pos = 3;  // UTF-8 byte-order mark
  while (skip_blank_lines(c)) rows.push_back(read_record(c));
  return rows;
}

// --- column tables ---------------------------------------------------------------------

/// The problems found in a file, and the all-or-nothing rule.
class Problems {
 public:
  explicit Problems(std::string_view source) : source_(source) {}
  void add(std::size_t line, std::string_view message) {
    list_.push_back(fmt::format("{}:{}: {}", source_, line, message));
    if (bad_lines_.insert(line).second) ++bad_rows_;
  }
  /// Notes that some text was not UTF-8 (for the CsvError).
  void not_utf8() { not_utf8_ = true; }
  bool any() const { return !list_.empty(); }
  /// Throws CsvError when any row was bad.
  void finish() const {
    if (!list_.empty()) throw_bad_rows(source_, list_, bad_rows_, not_utf8_);
  }

 private:
  std::string source_;
  std::vector<std::string> list_;
  std::set<std::size_t> bad_lines_;
  std::size_t bad_rows_ = 0;
  bool not_utf8_ = false;
};

/// A CSV file with a header: data rows and the column of each name.
class Sheet {
 public:
  Sheet(std::string_view text, std::string_view source, std::vector<std::string_view> known,
        std::vector<std::string_view> required)
      : text_(text), source_(source), known_(std::move(known)) {
    std::vector<CsvRow> all = read_csv(text, source);
    if (all.empty())
      throw CsvError(fmt::format("{}: empty file, nothing imported", source),
                     {fmt::format("{}:1: the first row must name the columns ({})", source, known_list())});
    const CsvRow& header = all.front();
    std::vector<std::string> problems;
    for (std::size_t i = 0; i < header.fields.size(); ++i) {
      const std::string name = lower(trim(header.fields[i]));
      if (name.empty()) {
        nameless_.push_back(i);
        continue;
      }
      if (std::find(known_.begin(), known_.end(), name) == known_.end()) {
        problems.push_back(fmt::format("{}:{}: unknown column '{}' (columns: {})", source, header.line,
                                       shown(header.fields[i]), known_list()));
      } else if (!columns_.emplace(name, i).second) {
        problems.push_back(fmt::format("{}:{}: duplicate column '{}'", source, header.line, name));
      }
    }
    for (std::string_view r : required)
      if (!columns_.count(std::string(r)))
        problems.push_back(fmt::format("{}:{}: missing column '{}'", source, header.line, r));
    if (!problems.empty()) throw CsvError(fmt::format("{}: bad header, nothing imported", source), problems);
    width_ = header.fields.size();
    names_.resize(width_);
    for (const auto& [name, i] : columns_) names_[i] = name;
    for (std::size_t i = 1; i < all.size(); ++i) {
      const auto& f = all[i].fields;
      if (std::all_of(f.begin(), f.end(), [](const std::string& s) { return trim(s).empty(); })) continue;
      rows_.push_back(std::move(all[i]));
    }
  }

  const std::vector<CsvRow>& rows() const { return rows_; }

  /// Checks a row's shape and text; false (and problems noted) when it cannot be read.
  bool shape_ok(const CsvRow& row, Problems& problems) const {
    if (row.fields.size() > width_) {
      problems.add(row.line, fmt::format("{} fields but the header names {} columns", row.fields.size(), width_));
      return false;
    }
    for (std::size_t i : nameless_) {
      if (i < row.fields.size() && !trim(row.fields[i]).empty()) {
        problems.add(row.line, fmt::format("'{}' in column {}, which has no name in the header",
                                           shown(trim(row.fields[i])), i + 1));
        return false;
      }
    }
    // Every field clean text (units/text.hpp), each fault named with its column and place.
    bool clean = true;
    for (std::size_t i = 0; i < row.fields.size(); ++i) {
      const auto fault = units::find_text_fault(row.fields[i]);
      if (!fault) continue;
      if (fault->kind == units::TextFault::Kind::invalid_utf8) problems.not_utf8();
      const std::string place =
          fmt::format(" of the field (byte {} of the file)", file_offset(row, i, fault->offset) + 1);
      problems.add(row.line,
                   fmt::format("{} '{}': {}", names_[i], shown(row.fields[i]), units::fault_text(*fault, place)));
      clean = false;
    }
    return clean;
  }

  /// The trimmed field of the named column; empty when the column or the field is absent.
  std::string_view get(const CsvRow& row, std::string_view name) const {
    const auto it = columns_.find(std::string(name));
    if (it == columns_.end() || it->second >= row.fields.size()) return {};
    return trim(row.fields[it->second]);
  }

 private:
  /// The byte offset in the file of byte k of field i (a quoted field's doubled quotes are
  /// two bytes in the file and one in the field).
  std::size_t file_offset(const CsvRow& row, std::size_t i, std::size_t k) const {
    std::size_t at = i < row.offsets.size() ? row.offsets[i] : 0;
    const bool quoted = at > 0 && at <= text_.size() && text_[at - 1] == '"';
    for (std::size_t seen = 0; seen < k && at < text_.size(); ++seen, ++at)
      if (quoted && text_[at] == '"') ++at;
    return at;
  }

  std::string known_list() const {
    std::string out;
    for (auto k : known_) {
      if (!out.empty()) out += ", ";
      out += k;
    }
    return out;
  }
  std::string_view text_;
  std::string source_;
  std::vector<std::string_view> known_;
  std::map<std::string, std::size_t> columns_;
  std::vector<std::string> names_;  ///< column names by index ("" for a nameless column)
  std::vector<std::size_t> nameless_;
  std::size_t width_ = 0;
  std::vector<CsvRow> rows_;
};

// --- field readers: each notes its problem and returns nullopt ----------------------------

/// A whole count >= 0: "12", "+12", "12.0".
std::optional<int> read_count(std::string_view field, std::string_view text, std::size_t line, Problems& p) {
  if (text.empty()) {
    p.add(line, fmt::format("{} is missing", field));
    return std::nullopt;
  }
  std::string_view s = text;
  bool negative = false;
  if (s.front() == '+' || s.front() == '-') {
    negative = s.front() == '-';
    s.remove_prefix(1);
  }
  if (const auto dot = s.find('.');
      dot != std::string_view::npos && dot > 0 &&
      std::all_of(s.begin() + static_cast<std::ptrdiff_t>(dot) + 1, s.end(), [](char c) { return c == '0'; }))
    s = s.substr(0, dot);
  if (!all_digits(s)) {
    p.add(line, fmt::format("{} '{}' is not a whole number", field, shown(text)));
    return std::nullopt;
  }
  if (negative && s.find_first_not_of('0') != std::string_view::npos) {
    p.add(line, fmt::format("{} '{}' is negative", field, shown(text)));
    return std::nullopt;
  }
  long long v = 0;
  const auto [end, ec] = std::from_chars(s.data(), s.data() + s.size(), v);
  if (ec != std::errc() || end != s.data() + s.size() || v > INT_MAX) {
    p.add(line, fmt::format("{} '{}' is too large", field, shown(text)));
    return std::nullopt;
  }
  return static_cast<int>(v);
}

/// An engineering value with an optional unit suffix; empty text is nullopt without a problem
/// unless required. `stock_capacitance`: a capacitor's value, which must state its scale
/// (units::parse_capacitance).
std::optional<double> read_value(std::string_view field, std::string_view text, Unit unit, std::size_t line,
                                 Problems& p, bool required = false, bool stock_capacitance = false) {
  if (text.empty()) {
    if (required) p.add(line, fmt::format("{} is missing", field));
    return std::nullopt;
  }
  try {
    return stock_capacitance ? units::parse_capacitance(text) : units::parse_value(text, unit);
  } catch (const InputError& e) {
    p.add(line, reworded(field, e));
    return std::nullopt;
  }
}

/// A power rating in watts: 0.25, 0.25W, 250mW, or a fraction 1/4, 1/4W, 1/4 W.
std::optional<double> read_power(std::string_view text, std::size_t line, Problems& p) {
  if (text.empty()) return std::nullopt;
  if (const auto slash = text.find('/'); slash != std::string_view::npos) {
    std::string_view s = text;
    if (!s.empty() && (s.back() == 'W' || s.back() == 'w')) s = trim(s.substr(0, s.size() - 1));
    const auto num = trim(s.substr(0, slash));
    const auto den = trim(s.substr(slash + 1));
    unsigned long a = 0, b = 0;
    if (all_digits(num) && all_digits(den) && num.size() < 10 && den.size() < 10) {
      std::from_chars(num.data(), num.data() + num.size(), a);
      std::from_chars(den.data(), den.data() + den.size(), b);
      if (b != 0 && a != 0) return static_cast<double>(a) / static_cast<double>(b);
    }
    p.add(line, fmt::format("power '{}' is not a rating in watts (0.25, 1/4, 1/4W, 250mW)", shown(text)));
    return std::nullopt;
  }
  return read_value("power", text, Unit::watt, line, p);
}

/// A fraction written as a percentage ("3%") or plainly ("0.03"); a plain number of 1 or
/// more is refused as a likely percentage without its sign.
std::optional<double> read_fraction(std::string_view field, std::string_view text, std::size_t line, Problems& p) {
  if (text.empty()) return std::nullopt;
  std::string_view s = text;
  const bool percent = s.back() == '%';
  if (percent) s = trim(s.substr(0, s.size() - 1));
  double v = 0;
  if (!units::try_parse_value(s, v) || !std::isfinite(v)) {
    p.add(line, fmt::format("{} '{}' is not a percentage or fraction (3% or 0.03)", field, shown(text)));
    return std::nullopt;
  }
  if (percent) return v / 100.0;
  if (v >= 1.0) {
    p.add(line,
          fmt::format("{} '{}' reads as {} %; write {}% if that is meant", field, shown(text), v * 100.0, shown(text)));
    return std::nullopt;
  }
  return v;
}

/// A temperature coefficient: a plain number or a percentage, with an optional "/K".
std::optional<double> read_tempco(std::string_view field, std::string_view text, Unit unit, std::size_t line,
                                  Problems& p) {
  if (text.empty()) return std::nullopt;
  std::string_view s = text;
  if (s.size() >= 2 && (s.substr(s.size() - 2) == "/K" || s.substr(s.size() - 2) == "/k"))
    s = trim(s.substr(0, s.size() - 2));
  const bool percent = !s.empty() && s.back() == '%';
  if (percent) s = trim(s.substr(0, s.size() - 1));
  double v = 0;
  if (!units::try_parse_value(s, v, percent ? Unit::none : unit)) {
    p.add(line, fmt::format("{} '{}' is not a temperature coefficient", field, shown(text)));
    return std::nullopt;
  }
  return percent ? v / 100.0 : v;
}

/// The shortest SI-notation text that reads back as exactly v.
std::string exact(double v) {
  for (int digits = 6; digits <= 17; ++digits) {
    std::string t = units::format_value(v, Unit::none, digits);
    double back = 0;
    if (units::try_parse_value(t, back) && back == v) return t;
  }
  return fmt::format("{}", v);
}

/// A capacitor's value as exact() writes it, with the unit when that text alone would be a
/// bare number (0.0047 F), which the stock refuses as a capacitance.
std::string exact_capacitance(double v) {
  const std::string t = exact(v);
  try {
    units::parse_capacitance(t);
    return t;
  } catch (const InputError&) {
    return t + "F";
  }
}

/// A text field as the writers put it: clean text always (units::escape_text).
std::string text_field(std::string_view s) { return units::escape_text(s); }

std::string plain(double v) { return fmt::format("{}", v); }

/// Finds a name case-insensitively; the spelling of the list, or nullopt.
template <class T, class Name>
const T* find_name(const std::vector<T>& list, std::string_view want, Name name) {
  const std::string w = lower(want);
  for (const auto& item : list)
    if (lower(name(item)) == w) return &item;
  return nullptr;
}

std::string join_row(const std::vector<std::string>& fields) {
  // Every field made clean text, so whatever a database holds is written so as to read back.
  std::string out;
  for (std::size_t i = 0; i < fields.size(); ++i) {
    if (i > 0) out += ',';
    out += csv_field(text_field(fields[i]));
  }
  out += '\n';  // LF, as Unix tools expect; the reader takes CRLF as well
  return out;
}

}  // namespace

// --- public ------------------------------------------------------------------------------

void throw_bad_rows(std::string_view source, std::vector<std::string> problems, std::size_t bad_rows, bool not_utf8) {
  std::string summary =
      fmt::format("{}: {} bad {}, nothing imported", source, bad_rows, bad_rows == 1 ? "row" : "rows");
  if (not_utf8) summary += " (some text is not UTF-8)";
  throw CsvError(summary, std::move(problems), not_utf8);
}

std::vector<CsvRow> read_csv(std::string_view text) {
  try {
    return split(text);
  } catch (const SyntaxError& e) {
    const std::string m = fmt::format("line {}: {}", e.line, e.message);
    throw CsvError(m, {m});
  }
}

std::vector<CsvRow> read_csv(std::string_view text, std::string_view source) {
  try {
    return split(text);
  } catch (const SyntaxError& e) {
    throw CsvError(fmt::format("{}: not readable as CSV, nothing imported", source),
                   {fmt::format("{}:{}: {}", source, e.line, e.message)});
  }
}

std::string csv_field(std::string_view field) {
  // A field that starts with a byte-order mark is quoted too: first in a file, unquoted, the
  // reader would take the mark for the file's own and drop it (found by fuzzing).
  const bool needs = field.find_first_of(",\"\r\n") != std::string_view::npos ||
                     (!field.empty() && (is_blank(field.front()) || is_blank(field.back()))) ||
                     field.substr(0, 3) == "\xEF\xBB\xBF";
  if (!needs) return std::string(field);
  std::string out = "\"";
  for (char c : field) {
    if (c == '"') out += '"';
    out += c;
  }
  out += '"';
  return out;
}

// --- stock -------------------------------------------------------------------------------

namespace {

/// A device named on a stock row: its spelling in the device list and, when known, its kind.
struct NamedDevice {
  std::string name;
  std::optional<devices::DeviceKind> kind;
};
using DeviceLookup = std::function<std::optional<NamedDevice>(std::string_view)>;

/// The columns of a stock file, in the order the writer puts them.
constexpr std::string_view kStockColumns[] = {"kind",  "value",      "qty",     "tol", "power",
                                              "volts", "dielectric", "package", "bin", "note"};

/// A stock row's value: a resistance or capacitance for a passive part, else a type of the
/// device list of the row's kind. False when it is bad (reported on the row's line).
bool read_stock_value(std::string_view text, const DeviceLookup& lookup, std::size_t line, Problems& problems,
                      Part& p) {
  if (is_passive(p.kind)) {
    const bool capacitor = p.kind == PartKind::capacitor;
    const auto v = read_value("value", text, capacitor ? Unit::farad : Unit::ohm, line, problems, false, capacitor);
    if (v) p.value = *v;
    return v.has_value();
  }
  const auto found = lookup(text);
  devices::DeviceKind want{};
  store::device_kind(p.kind, want);
  if (!found) {
    problems.add(line, fmt::format("value '{}' is not a device in the device list (import it first with devices "
                                   "import)",
                                   shown(text)));
    return false;
  }
  if (found->kind && *found->kind != want) {
    problems.add(line, fmt::format("value '{}' is a device of kind {}, not {}", found->name,
                                   devices::kind_name(*found->kind), kind_code(p.kind)));
    return false;
  }
  p.device = found->name;
  return true;
}

/// A stock row's optional ratings: tol, power, volts. False when one is bad (reported).
bool read_stock_ratings(const Sheet& sheet, const CsvRow& row, Problems& problems, Part& p) {
  bool ok = true;
  if (const auto t = sheet.get(row, "tol"); !t.empty()) {
    try {
      p.tol = units::parse_tolerance(t);
    } catch (const InputError& e) {
      problems.add(row.line, reworded("tol", e));
      ok = false;
    }
  }
  if (const auto t = sheet.get(row, "power"); !t.empty()) {
    if (auto w = read_power(t, row.line, problems))
      p.power_w = *w;
    else
      ok = false;
  }
  if (const auto t = sheet.get(row, "volts"); !t.empty()) {
    if (auto v = read_value("volts", t, Unit::volt, row.line, problems))
      p.volts = *v;
    else
      ok = false;
  }
  return ok;
}

/// A stock row as a part; nullopt with every bad field reported on the row's line.
std::optional<Part> read_stock_row(const Sheet& sheet, const CsvRow& row, const DeviceLookup& lookup,
                                   Problems& problems) {
  const std::size_t line = row.line;
  bool bad = false;
  Part p;
  const auto kind_text = sheet.get(row, "kind");
  bool kind_ok = false;
  if (kind_text.empty())
    problems.add(line, "kind is missing");
  else if (!(kind_ok = parse_kind_code(kind_text, p.kind)))
    problems.add(line, fmt::format("kind '{}' is not one of {}", shown(kind_text), kind_codes_text()));

  const auto value_text = sheet.get(row, "value");
  if (value_text.empty()) {
    problems.add(line, "value is missing");
    bad = true;
  } else if (kind_ok && !read_stock_value(value_text, lookup, line, problems, p)) {
    bad = true;
  }
  if (auto q = read_count("qty", sheet.get(row, "qty"), line, problems))
    p.qty = *q;
  else
    bad = true;
  if (!read_stock_ratings(sheet, row, problems, p)) bad = true;
  p.dielectric = std::string(sheet.get(row, "dielectric"));
  p.package = std::string(sheet.get(row, "package"));
  p.bin = std::string(sheet.get(row, "bin"));
  p.note = std::string(sheet.get(row, "note"));
  if (bad || !kind_ok) return std::nullopt;
  const auto issues = part_problems(p);
  for (const auto& issue : issues) problems.add(line, issue);
  if (!issues.empty()) return std::nullopt;
  return p;
}

std::vector<Part> parse_stock(std::string_view text, std::string_view source, const DeviceLookup& lookup,
                              std::vector<std::size_t>* lines) {
  const Sheet sheet(text, source, {std::begin(kStockColumns), std::end(kStockColumns)}, {"kind", "value", "qty"});
  Problems problems(source);
  std::vector<Part> out;
  for (const CsvRow& row : sheet.rows()) {
    if (!sheet.shape_ok(row, problems)) continue;
    auto p = read_stock_row(sheet, row, lookup, problems);
    if (!p) continue;
    out.push_back(std::move(*p));
    if (lines != nullptr) lines->push_back(row.line);
  }
  problems.finish();
  return out;
}

}  // namespace

std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<std::string>& known_devices, std::vector<std::size_t>* lines) {
  if (lines != nullptr) lines->clear();
  return parse_stock(
      text, source,
      [&](std::string_view name) -> std::optional<NamedDevice> {
        const auto* found = find_name(known_devices, name, [](const std::string& s) { return s; });
        if (found == nullptr) return std::nullopt;
        return NamedDevice{*found, std::nullopt};
      },
      lines);
}

std::vector<Part> parse_stock_csv(std::string_view text, std::string_view source,
                                  const std::vector<devices::DeviceRecord>& known_devices,
                                  std::vector<std::size_t>* lines) {
  if (lines != nullptr) lines->clear();
  return parse_stock(
      text, source,
      [&](std::string_view name) -> std::optional<NamedDevice> {
        const auto* found = find_name(known_devices, name, [](const devices::DeviceRecord& d) { return d.name; });
        if (found == nullptr) return std::nullopt;
        return NamedDevice{found->name, found->kind};
      },
      lines);
}

std::string write_stock_csv(const std::vector<Part>& parts) {
  std::string out = join_row({std::begin(kStockColumns), std::end(kStockColumns)});
  for (const Part& p : parts) {
    const std::string value = p.kind == PartKind::capacitor  ? exact_capacitance(p.value)
                              : p.kind == PartKind::resistor ? exact(p.value)
                                                             : p.device;
    out += join_row({std::string(kind_code(p.kind)), value, std::to_string(p.qty),
                     p.tol ? units::format_tolerance(*p.tol) : std::string(),
                     p.power_w ? plain(*p.power_w) : std::string(), p.volts ? plain(*p.volts) : std::string(),
                     p.dielectric, p.package, p.bin, p.note});
  }
  return out;
}

// --- devices -------------------------------------------------------------------------------

namespace {

using Family = DeviceColumn::Family;

/// The names of one family's figure columns, in the table's order.
std::vector<std::string_view> column_names(Family family) {
  std::vector<std::string_view> out;
  for (const DeviceColumn& c : device_columns())
    if (c.family == family) out.push_back(c.name);
  return out;
}

/// Every column a device file may have.
std::vector<std::string_view> device_file_columns() {
  std::vector<std::string_view> known = {"name", "kind"};
  for (Family f : {Family::jfet, Family::bjt, Family::rating, Family::opamp}) {
    const auto names = column_names(f);
    known.insert(known.end(), names.begin(), names.end());
  }
  known.push_back("note");
  return known;
}

/// One row of a device file being read: its fields, the problems found, and whether any
/// makes the row bad.
struct DeviceRow {
  const Sheet& sheet;
  const CsvRow& row;
  Problems& problems;
  bool bad = false;

  std::string_view get(std::string_view col) const { return sheet.get(row, col); }
  void note(std::string_view m) {
    problems.add(row.line, m);
    bad = true;
  }
  /// A figure written in its column's notation (DeviceColumn::Notation); nullopt, with the
  /// problem noted, when it cannot be read or a required one is missing.
  std::optional<double> figure(const DeviceColumn& col, std::string_view text, bool required) {
    using N = DeviceColumn::Notation;
    if (col.form == DeviceColumn::Form::tempco) return read_tempco(col.name, text, col.unit, row.line, problems);
    if (col.notation == N::plain || text.empty())
      return read_value(col.name, text, col.unit, row.line, problems, required);
    if (col.notation == N::count) {
      const auto n = read_count(col.name, text, row.line, problems);
      return n ? std::optional<double>(*n) : std::nullopt;
    }
    try {
      return col.notation == N::gain ? units::parse_open_loop_gain(text) : units::parse_slew_rate(text);
    } catch (const InputError& e) {
      problems.add(row.line, reworded(col.name, e));
      return std::nullopt;
    }
  }
  /// Reads one figure column into the record (nothing when an optional one is empty).
  void read(const DeviceColumn& col, devices::DeviceRecord& d) {
    const auto text = get(col.name);
    const bool required = col.form == DeviceColumn::Form::required;
    const std::optional<double> v = figure(col, text, required);
    // Ratings are magnitudes: a datasheet's -25 V for a P type is 25 V here.
    if (v)
      col.set(d, col.form == DeviceColumn::Form::rating ? std::abs(*v) : *v);
    else if (required || !text.empty())
      bad = true;
  }
  /// Reads every figure column of a family.
  void read_family(Family family, devices::DeviceRecord& d) {
    for (const DeviceColumn& c : device_columns())
      if (c.family == family) read(c, d);
  }
};

/// Name and kind; false when the kind is missing or unknown (nothing more can be read).
bool read_name_and_kind(DeviceRow& r, std::map<std::string, std::size_t>& seen, devices::DeviceRecord& d) {
  d.name = std::string(r.get("name"));
  d.note = std::string(r.get("note"));
  if (d.name.empty()) {
    r.note("name is missing");
  } else if (const auto [it, fresh] = seen.emplace(lower(d.name), r.row.line); !fresh) {
    r.note(fmt::format("name '{}' already appears on line {}", shown(d.name), it->second));
  }
  const auto kind_text = r.get("kind");
  if (kind_text.empty()) {
    r.note("kind is missing");
    return false;
  }
  if (!devices::parse_kind(kind_text, d.kind)) {
    r.note(fmt::format("kind '{}' is not one of NJFET, PJFET, NPN, PNP, OPAMP", shown(kind_text)));
    return false;
  }
  return true;
}

/// "JFET", "BJT", "op-amp": a family in messages.
std::string_view family_words(Family f) {
  switch (f) {
    case Family::jfet: return "JFET";
    case Family::bjt: return "BJT";
    case Family::opamp: return "op-amp";
    case Family::rating: return "rating";
  }
  return "?";
}

/// Figures of another family on this row point at a shifted or mistyped row.
void check_other_family(DeviceRow& r, devices::DeviceKind kind) {
  const Family own = device_family(kind);
  for (Family other : {Family::jfet, Family::bjt, Family::opamp}) {
    if (other == own) continue;
    for (std::string_view c : column_names(other))
      if (!r.get(c).empty())
        r.note(fmt::format("{} '{}' given for kind {} ({} {} figure)", c, shown(r.get(c)), devices::kind_name(kind),
                           other == Family::opamp ? "an" : "a", family_words(other)));
  }
}

/// The figures of the record's family and its ratings.
void read_figures(DeviceRow& r, devices::DeviceRecord& d) {
  r.read_family(device_family(d.kind), d);
  // The two ends of a datasheet range come in either order (-0.5 .. -3 or -3 .. -0.5).
  auto order = [](devices::Range& range) {
    if (range.min > range.max) std::swap(range.min, range.max);
  };
  if (devices::is_jfet(d.kind)) {
    order(d.jfet.idss_a);
    order(d.jfet.vp_v);
  } else if (devices::is_bjt(d.kind)) {
    order(d.bjt.hfe);
  }
  r.read_family(Family::rating, d);
}

}  // namespace

std::vector<devices::DeviceRecord> parse_devices_csv(std::string_view text, std::string_view source) {
  const Sheet sheet(text, source, device_file_columns(), {"name", "kind"});
  Problems problems(source);
  std::vector<devices::DeviceRecord> out;
  std::map<std::string, std::size_t> seen;  // lower-case name -> line
  for (const CsvRow& row : sheet.rows()) {
    if (!sheet.shape_ok(row, problems)) continue;
    DeviceRow r{sheet, row, problems};
    devices::DeviceRecord d;
    if (!read_name_and_kind(r, seen, d)) continue;
    check_other_family(r, d.kind);
    read_figures(r, d);
    if (r.bad) continue;
    const auto issues = device_problems(d);
    for (const auto& issue : issues) problems.add(row.line, issue);
    if (issues.empty()) out.push_back(std::move(d));
  }
  problems.finish();
  return out;
}

std::string write_devices_csv(const std::vector<devices::DeviceRecord>& records) {
  // The figures of every family (the others' left empty), the note, the ratings, then the
  // op-amp figures (added last, after the columns files had before them).
  constexpr Family kBefore[] = {Family::jfet, Family::bjt};
  constexpr Family kAfter[] = {Family::rating, Family::opamp};
  std::vector<std::string> header = {"name", "kind"};
  auto add_names = [&](std::span<const Family> families) {
    for (Family f : families) {
      const auto names = column_names(f);
      header.insert(header.end(), names.begin(), names.end());
    }
  };
  add_names(kBefore);
  header.emplace_back("note");
  add_names(kAfter);
  std::string out = join_row(header);
  auto opt = [](const std::optional<double>& v) { return v ? exact(*v) : std::string(); };
  for (const auto& d : records) {
    const Family own = device_family(d.kind);
    std::vector<std::string> f = {d.name, std::string(devices::kind_name(d.kind))};
    auto add_figures = [&](std::span<const Family> families) {
      for (Family family : families)
        for (const DeviceColumn& c : device_columns())
          if (c.family == family)
            f.push_back(family == own || family == Family::rating ? opt(c.get(d)) : std::string());
    };
    add_figures(kBefore);
    f.push_back(d.note);
    add_figures(kAfter);
    out += join_row(f);
  }
  return out;
}

// --- measured pieces -------------------------------------------------------------------------

std::vector<devices::MeasuredPiece> parse_pieces_csv(std::string_view text, std::string_view source,
                                                     const std::vector<devices::DeviceRecord>& known) {
  const Sheet sheet(text, source, {"label", "device", "idss", "vp", "hfe", "uncertainty", "note"}, {"label", "device"});
  Problems problems(source);
  std::vector<devices::MeasuredPiece> out;
  std::map<std::string, std::size_t> seen;
  for (const CsvRow& row : sheet.rows()) {
    if (!sheet.shape_ok(row, problems)) continue;
    const std::size_t line = row.line;
    bool bad = false;
    auto note = [&](std::string_view m) {
      problems.add(line, m);
      bad = true;
    };
    devices::MeasuredPiece m;
    m.label = std::string(sheet.get(row, "label"));
    m.note = std::string(sheet.get(row, "note"));
    if (m.label.empty()) {
      note("label is missing");
    } else if (const auto [it, fresh] = seen.emplace(lower(m.label), line); !fresh) {
      note(fmt::format("label '{}' already appears on line {}", shown(m.label), it->second));
    }
    const auto device_text = sheet.get(row, "device");
    const devices::DeviceRecord* dev = nullptr;
    if (device_text.empty()) {
      note("device is missing");
    } else {
      dev = find_name(known, device_text, [](const devices::DeviceRecord& d) { return d.name; });
      if (dev == nullptr)
        note(fmt::format("device '{}' is not in the device list (import it first with devices import)",
                         shown(device_text)));
      else
        m.device = dev->name;
    }
    auto measured = [&](std::string_view col, Unit unit, std::optional<double>& into) {
      into = read_value(col, sheet.get(row, col), unit, line, problems);
      if (!into && !sheet.get(row, col).empty()) bad = true;
    };
    measured("idss", Unit::ampere, m.idss_a);
    measured("vp", Unit::volt, m.vp_v);
    measured("hfe", Unit::none, m.hfe);
    if (const auto u = sheet.get(row, "uncertainty"); !u.empty()) {
      if (auto f = read_fraction("uncertainty", u, line, problems))
        m.uncertainty = *f;
      else
        bad = true;
    }
    if (bad || dev == nullptr) continue;
    const auto issues = piece_problems(m, *dev);
    for (const auto& issue : issues) problems.add(line, issue);
    if (issues.empty()) out.push_back(std::move(m));
  }
  problems.finish();
  return out;
}

std::string write_pieces_csv(const std::vector<devices::MeasuredPiece>& pieces) {
  std::string out = join_row({"label", "device", "idss", "vp", "hfe", "uncertainty", "note"});
  auto opt = [](const std::optional<double>& v) { return v ? exact(*v) : std::string(); };
  for (const auto& m : pieces)
    out += join_row({m.label, m.device, opt(m.idss_a), opt(m.vp_v), opt(m.hfe), plain(m.uncertainty), m.note});
  return out;
}

}  // namespace shelfstage::store
