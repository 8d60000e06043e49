// Tests of clean text: UTF-8 well-formedness (RFC 3629), control characters, escapes, cuts, encodings.
#include <doctest/doctest.h>

#include <string>
#include <vector>

#include "shelfstage/error.hpp"
#include "shelfstage/units/text.hpp"

using namespace shelfstage;
using namespace shelfstage::units;

namespace {

/// A text and where its first fault lies, with the byte or code point found there.
struct Faulty {
  std::string text;
  std::size_t at;
  unsigned code;
};

}  // namespace

TEST_CASE("well-formed UTF-8 is clean; the ill-formed sequences of RFC 3629 are faults at their first byte") {
  // RFC 3629, section 4 (the table of well-formed byte sequences) and section 10 (overlong
  // forms and surrogates are not UTF-8).
  CHECK_FALSE(find_text_fault(""));
  CHECK_FALSE(find_text_fault("A6 drawer, 4.7 kΩ ± 5 %"));
  CHECK_FALSE(find_text_fault("\xF0\x9F\x94\xA7 spanner"));  // U+1F527, four bytes
  CHECK_FALSE(find_text_fault("\xF4\x8F\xBF\xBF"));          // U+10FFFF, the last code point
  for (const auto& [text, at, byte] :
       std::vector<Faulty>{{"Fach \xE4", 5, 0xE4},         // Latin-1 a-umlaut: a lead byte with nothing after it
                           {"\x80", 0, 0x80},              // a lone continuation byte
                           {"ab\xC0\xAF", 2, 0xC0},        // overlong '/' (C0 and C1 never appear)
                           {"\xE0\x80\xAF", 0, 0xE0},      // overlong three-byte form
                           {"\xED\xA0\x80", 0, 0xED},      // U+D800, a surrogate
                           {"\xF0\x8F\xBF\xBF", 0, 0xF0},  // overlong four-byte form
                           {"\xF4\x90\x80\x80", 0, 0xF4},  // above U+10FFFF
                           {"\xF5\x80\x80\x80", 0, 0xF5},  // F5..FF are never lead bytes
                           {"ok\xE2\x82", 2, 0xE2}}) {     // cut short at the end
    CAPTURE(text);
    const auto f = find_text_fault(text);
    REQUIRE(f);
    CHECK(f->kind == TextFault::Kind::invalid_utf8);
    CHECK(f->offset == at);
    CHECK(f->code == byte);
  }
}

TEST_CASE("control characters are faults, C0, DEL and C1 alike, tabs and line breaks included") {
  // Unicode general category Cc: U+0000..U+001F, U+007F, U+0080..U+009F.
  for (const auto& [text, at, cp] : std::vector<Faulty>{{std::string("A\0B", 3), 1, 0x00},
                                                        {"tab\there", 3, 0x09},
                                                        {"two\nlines", 3, 0x0A},
                                                        {"del\x7F", 3, 0x7F},
                                                        {"c1 \xC2\x85", 3, 0x85},
                                                        {"\x1B[31m", 0, 0x1B}}) {
    CAPTURE(text);
    const auto f = find_text_fault(text);
    REQUIRE(f);
    CHECK(f->kind == TextFault::Kind::control);
    CHECK(f->offset == at);
    CHECK(f->code == cp);
  }
  CHECK_FALSE(find_text_fault("\xC2\xA0 no-break space is not a control"));
}

TEST_CASE("fault_text counts bytes from 1 and names the place; check_text refuses exactly the faulty texts") {
  CHECK(fault_text({5, TextFault::Kind::invalid_utf8, 0xE4}) == "byte 6 is not UTF-8 (0xE4)");
  CHECK(fault_text({0, TextFault::Kind::control, 0}, " of the note") ==
        "byte 1 of the note is a control character (U+0000)");
  CHECK_NOTHROW(check_text("bin", "A6"));
  try {
    check_text("bin", "Fach \xE4");
    FAIL("a Latin-1 bin was accepted");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()) == "bin 'Fach \\xE4': byte 6 is not UTF-8 (0xE4)");
  }
  CHECK_THROWS_AS(check_text("note", std::string("x\0y", 3)), InputError);
}

TEST_CASE("escape_text keeps clean text and makes any text clean") {
  CHECK(escape_text("4.7 kΩ") == "4.7 kΩ");
  CHECK(escape_text("Fach \xE4") == "Fach \\xE4");
  CHECK(escape_text(std::string("A\0B", 3)) == "A\\x00B");
  CHECK(escape_text("c1 \xC2\x85 end") == "c1 \\u0085 end");
  CHECK(escape_text("\xED\xA0\x80") == "\\xED\\xA0\\x80");  // a surrogate: three stray bytes
  // NOTES 3: the result is always clean, whatever went in (every byte value, in pairs).
  for (int a = 0; a < 256; ++a) {
    for (int b = 0; b < 256; b += 7) {
      const std::string in{static_cast<char>(a), static_cast<char>(b), '\xA9'};
      CHECK_FALSE(find_text_fault(escape_text(in)));
    }
  }
}

TEST_CASE("clip cuts after a number of characters, not bytes, and escapes what it keeps") {
  CHECK(clip("short") == "short");
  CHECK(clip(std::string(100000, 'x')) == std::string(40, 'x') + "...");
  CHECK(clip("ΩΩΩΩ", 2) == "ΩΩ...");
  CHECK(clip("\xFF\xFF\xFF", 2) == "\\xFF\\xFF...");
}

TEST_CASE("clip_bytes bounds the escaped text's bytes, cutting only between characters") {
  CHECK(clip_bytes("short", 10) == "short");
  CHECK(clip_bytes("short", 5) == "short");
  CHECK(clip_bytes("shorts", 5) == "short...");
  CHECK(clip_bytes("ΩΩΩΩ", 5) == "ΩΩ...");                  // 2 bytes each: no half Ω
  CHECK(clip_bytes("\xFF\xFF\xFF", 9) == "\\xFF\\xFF...");  // an escape is 4 bytes
  const std::string junk(3000, '\xA3');                     // 12,000 bytes escaped
  const std::string cut = clip_bytes(junk, 2000);
  CHECK(cut.size() <= 2003);
  CHECK(cut.ends_with("\\xA3..."));
  CHECK_FALSE(find_text_fault(cut));
}

TEST_CASE("declared encodings convert to UTF-8") {
  Encoding e{};
  CHECK(parse_encoding("Latin-1", e));
  CHECK(e == Encoding::latin1);
  CHECK(parse_encoding("windows-1252", e));
  CHECK(e == Encoding::cp1252);
  CHECK(parse_encoding("UTF8", e));
  CHECK(e == Encoding::utf8);
  CHECK_FALSE(parse_encoding("ebcdic", e));
  // ISO 8859-1 maps each byte to the code point of its value: E4 is U+00E4, B5 is U+00B5.
  CHECK(to_utf8("Fach \xE4 \xB5", Encoding::latin1) == "Fach \xC3\xA4 \xC2\xB5");
  // Windows-1252 (Unicode's CP1252.TXT): 80 is U+20AC, 96 is U+2013; 81 is undefined and
  // stays U+0081, a control that check_text refuses.
  CHECK(to_utf8("\x80 \x96", Encoding::cp1252) == "\xE2\x82\xAC \xE2\x80\x93");
  CHECK(to_utf8("\x81", Encoding::cp1252) == "\xC2\x81");
  CHECK(find_text_fault(to_utf8("\x81", Encoding::cp1252))->kind == TextFault::Kind::control);
  // Latin-1 is total: any bytes give UTF-8 (controls aside).
  std::string all;
  for (int c = 0xA0; c < 256; ++c) all += static_cast<char>(c);
  CHECK_FALSE(find_text_fault(to_utf8(all, Encoding::latin1)));
  CHECK(to_utf8("as is \xE4", Encoding::utf8) == "as is \xE4");
}

TEST_CASE("closest_word: a slip of the keyboard or a word cut short, else nothing") {
  const std::vector<std::string> options = {"--gain", "--load", "--supply", "--swing", "--source-z", "--json"};
  CHECK(units::closest_word("--swng", options) == "--swing");        // a letter left out
  CHECK(units::closest_word("--sorce-z", options) == "--source-z");  // and another
  CHECK(units::closest_word("--source", options) == "--source-z");   // cut short
  CHECK(units::closest_word("--jsno", options) == "--json");         // two letters swapped: two edits
  CHECK(units::closest_word("--load", options) == "--load");
  CHECK(units::closest_word("--frobnicate", options).empty());  // nothing near
  CHECK(units::closest_word("-x", {"-h", "-o"}).empty());       // too short to tell
  CHECK(units::closest_word("", options).empty());
  CHECK(units::closest_word("lst", {"add", "list", "import"}) == "list");
}
