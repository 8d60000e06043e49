// Plain text as it enters and leaves the program: UTF-8 checks, escapes for output and messages, legacy encodings.
//
// NOTES (numbered invariants; tests/units/text_test.cpp checks each):
//  1. Clean text is well-formed UTF-8 (RFC 3629: no overlong forms, no surrogates, nothing
//     above U+10FFFF) holding no control character (Unicode category Cc: U+0000..U+001F,
//     U+007F, U+0080..U+009F). Tabs and line breaks are control characters too: every text
//     field the stock keeps is one line.
//  2. find_text_fault returns the first byte offset where text stops being clean, or nothing;
//     check_text throws InputError for exactly the texts find_text_fault faults.
//  3. escape_text leaves clean text unchanged and turns every other text into clean text:
//     a byte that does not start a well-formed sequence becomes \xNN, a control character
//     below U+0080 becomes \xNN and one from U+0080 becomes \u0080 (four hex digits).
//  4. clip is escape_text cut after a number of characters (not bytes) with "..." appended,
//     so a message never echoes a 100 KB value whole; clip_bytes cuts it by its bytes.
//  5. to_utf8 from Latin-1 is total (every byte is a character); from Windows-1252 the five
//     bytes the code page leaves undefined (0x81 0x8D 0x8F 0x90 0x9D) map as Latin-1 does, to
//     C1 controls, which check_text then refuses.
#pragma once
#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace shelfstage::units {

/// Where and why a text is not clean (NOTES 1).
struct TextFault {
  enum class Kind { invalid_utf8, control };
  std::size_t offset = 0;  ///< byte offset from 0
  Kind kind = Kind::invalid_utf8;
  std::uint32_t code = 0;  ///< the stray byte (invalid_utf8) or the code point (control)
};

/// The length of the well-formed UTF-8 sequence at byte pos (1 to 4), or 0 when the byte there
/// does not start one.
std::size_t utf8_sequence_length(std::string_view text, std::size_t pos);

/// The first fault of a text, or nullopt when it is clean.
std::optional<TextFault> find_text_fault(std::string_view text);

/// The fault for people, counting bytes from 1: "byte 6 is not UTF-8 (0xE9)", "byte 3 is a
/// control character (U+0000)". `place` follows the byte number: " of the field (byte 40 of
/// the file)".
std::string fault_text(const TextFault& fault, std::string_view place = "");

/// Throws InputError "<field> '<clip>': <fault_text>" when the text is not clean.
void check_text(std::string_view field, std::string_view text);

/// The text with every fault escaped (NOTES 3): clean text for any input.
std::string escape_text(std::string_view text);

/// escape_text cut after max_chars characters, "..." marking the cut (NOTES 4).
std::string clip(std::string_view text, std::size_t max_chars = 40);
/// escape_text cut where it would grow past max_bytes bytes, on a character's (or an
/// escape's) edge, "..." marking the cut: at most max_bytes + 3 bytes (NOTES 4). An escape is
/// four bytes and a character up to four, so a cut by characters alone bounds no line.
std::string clip_bytes(std::string_view text, std::size_t max_bytes);

/// The word of `known` a person most likely meant by `typed` (a slip of the keyboard: the
/// fewest single-character edits, at most a third of the word's length and at least one
/// allowed; or `typed` cut short, a known word that starts with it, counted as one edit), or
/// empty when none is close or `typed` is shorter than three characters. Ties go to the first
/// in `known`.
std::string closest_word(std::string_view typed, const std::vector<std::string>& known);

/// Encodings a file may declare.
enum class Encoding { utf8, latin1, cp1252 };
/// "utf-8"/"utf8", "latin1"/"latin-1"/"iso-8859-1", "cp1252"/"windows-1252" (any case).
bool parse_encoding(std::string_view name, Encoding& out);
/// The text re-encoded from `from` into UTF-8 (unchanged for Encoding::utf8).
std::string to_utf8(std::string_view text, Encoding from);

}  // namespace shelfstage::units
