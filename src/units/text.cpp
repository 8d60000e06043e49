// Plain text as it enters and leaves the program: UTF-8 checks, escapes for output and messages, legacy encodings.
#include "shelfstage/units/text.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cctype>

#include "shelfstage/error.hpp"

namespace shelfstage::units {

namespace {

bool in(unsigned char c, unsigned char lo, unsigned char hi) { return c >= lo && c <= hi; }

/// The code point of the well-formed sequence of n bytes at pos.
std::uint32_t decode(std::string_view text, std::size_t pos, std::size_t n) {
  const auto b = [&](std::size_t i) { return static_cast<std::uint32_t>(static_cast<unsigned char>(text[pos + i])); };
  switch (n) {
    case 1: return b(0);
    case 2: return ((b(0) & 0x1F) << 6) | (b(1) & 0x3F);
    case 3: return ((b(0) & 0x0F) << 12) | ((b(1) & 0x3F) << 6) | (b(2) & 0x3F);
    default: return ((b(0) & 0x07) << 18) | ((b(1) & 0x3F) << 12) | ((b(2) & 0x3F) << 6) | (b(3) & 0x3F);
  }
}

bool is_control(std::uint32_t cp) { return cp < 0x20 || (cp >= 0x7F && cp <= 0x9F); }

void append_utf8(std::string& out, std::uint32_t cp) {
  if (cp < 0x80) {
    out += static_cast<char>(cp);
  } else if (cp < 0x800) {
    out += static_cast<char>(0xC0 | (cp >> 6));
    out += static_cast<char>(0x80 | (cp & 0x3F));
  } else {
    out += static_cast<char>(0xE0 | (cp >> 12));
    out += static_cast<char>(0x80 | ((cp >> 6) & 0x3F));
    out += static_cast<char>(0x80 | (cp & 0x3F));
  }
}

/// Windows-1252 bytes 0x80..0x9F (the code page's table as the Unicode Consortium publishes
/// it, CP1252.TXT); 0 where the code page defines nothing (NOTES 5).
constexpr std::array<std::uint16_t, 32> kCp1252High{0x20AC, 0,      0x201A, 0x0192, 0x201E, 0x2026, 0x2020, 0x2021,
                                                    0x02C6, 0x2030, 0x0160, 0x2039, 0x0152, 0,      0x017D, 0,
                                                    0,      0x2018, 0x2019, 0x201C, 0x201D, 0x2022, 0x2013, 0x2014,
                                                    0x02DC, 0x2122, 0x0161, 0x203A, 0x0153, 0,      0x017E, 0x0178};

/// Walks a text one character at a time: fn(pos, length, code point or nullopt for a stray
/// byte); stops when fn returns false.
template <class F>
void walk(std::string_view text, F fn) {
  std::size_t pos = 0;
  while (pos < text.size()) {
    const std::size_t n = utf8_sequence_length(text, pos);
    if (n == 0) {
      if (!fn(pos, std::size_t{1}, std::optional<std::uint32_t>{})) return;
      ++pos;
    } else {
      if (!fn(pos, n, std::optional<std::uint32_t>{decode(text, pos, n)})) return;
      pos += n;
    }
  }
}

/// One character as escape_text writes it.
void append_escaped(std::string& out, std::string_view text, std::size_t pos, std::size_t n,
                    std::optional<std::uint32_t> cp) {
  if (!cp) {
    out += fmt::format("\\x{:02X}", static_cast<unsigned>(static_cast<unsigned char>(text[pos])));
  } else if (is_control(*cp)) {
    out += *cp < 0x80 ? fmt::format("\\x{:02X}", *cp) : fmt::format("\\u{:04X}", *cp);
  } else {
    out.append(text.substr(pos, n));
  }
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

}  // namespace

std::size_t utf8_sequence_length(std::string_view text, std::size_t pos) {
  if (pos >= text.size()) return 0;
  const auto at = [&](std::size_t i) { return static_cast<unsigned char>(text[pos + i]); };
  const unsigned char lead = at(0);
  if (lead < 0x80) return 1;
  // RFC 3629, section 4: the second byte's range depends on the lead byte.
  std::size_t n = 0;
  unsigned char lo = 0x80, hi = 0xBF;
  if (in(lead, 0xC2, 0xDF)) {
    n = 2;
  } else if (in(lead, 0xE0, 0xEF)) {
    n = 3;
    if (lead == 0xE0) lo = 0xA0;  // no overlong forms
    if (lead == 0xED) hi = 0x9F;  // no surrogates
  } else if (in(lead, 0xF0, 0xF4)) {
    n = 4;
    if (lead == 0xF0) lo = 0x90;  // no overlong forms
    if (lead == 0xF4) hi = 0x8F;  // nothing above U+10FFFF
  } else {
    return 0;
  }
  if (pos + n > text.size() || !in(at(1), lo, hi)) return 0;
  for (std::size_t i = 2; i < n; ++i)
    if (!in(at(i), 0x80, 0xBF)) return 0;
  return n;
}

std::optional<TextFault> find_text_fault(std::string_view text) {
  std::optional<TextFault> fault;
  walk(text, [&](std::size_t pos, std::size_t, std::optional<std::uint32_t> cp) {
    if (!cp) {
      fault = TextFault{pos, TextFault::Kind::invalid_utf8, static_cast<unsigned char>(text[pos])};
    } else if (is_control(*cp)) {
      fault = TextFault{pos, TextFault::Kind::control, *cp};
    }
    return !fault;
  });
  return fault;
}

std::string fault_text(const TextFault& fault, std::string_view place) {
  if (fault.kind == TextFault::Kind::invalid_utf8)
    return fmt::format("byte {}{} is not UTF-8 (0x{:02X})", fault.offset + 1, place, fault.code);
  return fmt::format("byte {}{} is a control character (U+{:04X})", fault.offset + 1, place, fault.code);
}

void check_text(std::string_view field, std::string_view text) {
  if (const auto fault = find_text_fault(text))
    throw InputError(fmt::format("{} '{}': {}", field, clip(text), fault_text(*fault)));
}

std::string escape_text(std::string_view text) {
  if (!find_text_fault(text)) return std::string(text);
  std::string out;
  out.reserve(text.size() + 16);
  walk(text, [&](std::size_t pos, std::size_t n, std::optional<std::uint32_t> cp) {
    append_escaped(out, text, pos, n, cp);
    return true;
  });
  return out;
}

namespace {

/// escape_text cut before the character that would pass either limit, "..." marking the cut.
std::string clip_within(std::string_view text, std::size_t max_chars, std::size_t max_bytes) {
  std::string out;
  std::size_t chars = 0;
  walk(text, [&](std::size_t pos, std::size_t n, std::optional<std::uint32_t> cp) {
    const std::size_t before = out.size();
    if (chars < max_chars) append_escaped(out, text, pos, n, cp);
    if (chars == max_chars || out.size() > max_bytes) {
      out.resize(before);
      out += "...";
      return false;
    }
    ++chars;
    return true;
  });
  return out;
}

}  // namespace

std::string clip(std::string_view text, std::size_t max_chars) {
  return clip_within(text, max_chars, std::string::npos);
}

std::string clip_bytes(std::string_view text, std::size_t max_bytes) {
  return clip_within(text, std::string::npos, max_bytes);
}

namespace {

// Levenshtein's distance: single-character insertions, deletions and substitutions.
std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t up = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diagonal = up;
    }
  }
  return row[b.size()];
}

}  // namespace

std::string closest_word(std::string_view typed, const std::vector<std::string>& known) {
  if (typed.size() < 3) return {};  // ("-x": one edit from every short option)
  const std::size_t allowed = std::max<std::size_t>(1, typed.size() / 3);
  std::string best;
  std::size_t best_distance = allowed + 1;
  for (const std::string& word : known) {
    if (word == typed) return word;
    // A word cut short counts as one edit away, however much is missing.
    const std::size_t d = word.starts_with(typed) ? 1 : edit_distance(typed, word);
    if (d < best_distance) {
      best = word;
      best_distance = d;
    }
  }
  return best;
}

bool parse_encoding(std::string_view name, Encoding& out) {
  const std::string n = lower(name);
  if (n == "utf-8" || n == "utf8") {
    out = Encoding::utf8;
  } else if (n == "latin1" || n == "latin-1" || n == "iso-8859-1" || n == "iso8859-1") {
    out = Encoding::latin1;
  } else if (n == "cp1252" || n == "windows-1252" || n == "win1252") {
    out = Encoding::cp1252;
  } else {
    return false;
  }
  return true;
}

std::string to_utf8(std::string_view text, Encoding from) {
  if (from == Encoding::utf8) return std::string(text);
  std::string out;
  out.reserve(text.size() + text.size() / 8);
  for (const char ch : text) {
    const auto c = static_cast<unsigned char>(ch);
    std::uint32_t cp = c;
    if (from == Encoding::cp1252 && c >= 0x80 && c <= 0x9F && kCp1252High[c - 0x80] != 0) cp = kCp1252High[c - 0x80];
    append_utf8(out, cp);
  }
  return out;
}

}  // namespace shelfstage::units
