// Tests of the SVG builder: escaping against the XML 1.0 rules, compact numbers, and documents
// that Chromium's XML parser accepts.
#include "shelfstage/draw/svg.hpp"

#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <random>

#include "support/browser.hpp"

using namespace shelfstage::draw;

namespace {

/// Writes text to a fresh file under the temp folder and returns its path.
std::string write_temp(const std::string& name, const std::string& text) {
  std::random_device rd;
  const auto dir = std::filesystem::temp_directory_path() / ("shelfstage-svg-test-" + std::to_string(rd()));
  std::filesystem::create_directories(dir);
  const auto p = dir / name;
  std::ofstream(p, std::ios::binary) << text;
  return p.string();
}

}  // namespace

TEST_CASE("xml_escape: the five predefined entities of XML 1.0 (section 4.6)") {
  CHECK(xml_escape("a<b & \"c\" 'd'>") == "a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;");
  CHECK(xml_escape("4k7 \u03a9") == "4k7 \u03a9");  // UTF-8 passes through
  CHECK(xml_escape("") == "");
}

TEST_CASE("xml_escape: characters XML 1.0 (section 2.2) does not allow are dropped or replaced") {
  CHECK(xml_escape(std::string("a\x01"
                               "b\x1f"
                               "c",
                               5)) == "abc");
  CHECK(xml_escape("tab\there\nnl") == "tab\there\nnl");
  CHECK(xml_escape(std::string("x\0y", 3)) == "xy");
  // A lone continuation byte and a truncated sequence become U+FFFD.
  CHECK(xml_escape("a\x80z") == "a\xEF\xBF\xBDz");
  CHECK(xml_escape("\xE2\x82") == "\xEF\xBF\xBD\xEF\xBF\xBD");
  // An overlong encoding of '<' (C0 BC) must not sneak a markup character through.
  CHECK(xml_escape("\xC0\xBC") == "\xEF\xBF\xBD\xEF\xBF\xBD");
  // UTF-16 surrogates encoded in UTF-8 (ED A0 80) are not characters (RFC 3629).
  CHECK(xml_escape("\xED\xA0\x80").find("\xED") == std::string::npos);
}

TEST_CASE("num: compact coordinates") {
  CHECK(num(12.0) == "12");
  CHECK(num(0.5) == "0.5");
  CHECK(num(1234.567) == "1234.57");
  CHECK(num(-0.001) == "0");
  CHECK(num(-3.25) == "-3.25");
  CHECK(num(100) == "100");
  CHECK(num(1e-9) == "0");
  CHECK(num(std::numeric_limits<double>::quiet_NaN()) == "0");
  CHECK(num(std::numeric_limits<double>::infinity()) == "0");
}

TEST_CASE("Paint: only the attributes that were set") {
  CHECK(Paint().attributes() == "");
  CHECK(Paint().stroke("#123456", 2).attributes() == " stroke=\"#123456\" stroke-width=\"2\"");
  CHECK(Paint().fill("none").opacity(0.25).attributes() ==
        " fill=\"none\" fill-opacity=\"0.25\" stroke-opacity=\"0.25\"");
  CHECK(Paint().dash("4 3").round().attributes() ==
        " stroke-dasharray=\"4 3\" stroke-linecap=\"round\" stroke-linejoin=\"round\"");
}

TEST_CASE("Svg: elements, nesting and text come out escaped and closed") {
  Svg s(200, 100, "R&D <test>");
  s.open("g", Paint().stroke("#000", 1), {{"data-part", "R1 \"a\""}});
  s.line({0, 0}, {10.5, 20}, Paint().stroke("red", 2));
  s.text({5, 5}, "I < 2 mA & V > 1", 12, "middle");
  // left open on purpose: str() closes it
  const std::string doc = s.str();
  CHECK(doc.starts_with("<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"200\" height=\"100\""));
  CHECK(doc.find("<title>R&amp;D &lt;test&gt;</title>") != std::string::npos);
  CHECK(doc.find("data-part=\"R1 &quot;a&quot;\"") != std::string::npos);
  CHECK(doc.find("<line x1=\"0\" y1=\"0\" x2=\"10.5\" y2=\"20\" stroke=\"red\" stroke-width=\"2\"/>") !=
        std::string::npos);
  CHECK(doc.find(">I &lt; 2 mA &amp; V &gt; 1</text>") != std::string::npos);
  CHECK(doc.ends_with("</g></svg>"));
  // Fewer than two points: nothing to draw.
  Svg t(10, 10);
  t.polyline({{1, 1}}, Paint());
  t.polygon({{1, 1}, {2, 2}}, Paint());
  CHECK(t.str().find("poly") == std::string::npos);
}

TEST_CASE("Svg: Chromium's XML parser accepts the document and keeps hostile text as text") {
  Svg s(300, 120, "escaping <check> & \"quotes\"");
  s.open("g", Paint().stroke("#333", 1));
  s.rect(10, 10, 100, 50, Paint().fill("#eee"));
  s.text({20, 40}, "</text><script>alert(1)</script> & \xff", 14);
  s.polyline({{0, 0}, {50, 50}, {100, 0}}, Paint().stroke("blue", 2).fill("none").dash("3 2").round());
  s.title("R1 & R2 < 1k");
  const std::string path = write_temp("doc.svg", s.str());
  const std::string dom = shelfstage::test::dump_dom(path);
  CHECK(dom.find("parsererror") == std::string::npos);
  CHECK(dom.find("<script") == std::string::npos);
  CHECK(dom.find("&lt;/text&gt;&lt;script&gt;alert(1)&lt;/script&gt; &amp;") != std::string::npos);

  // The check itself can fail: an unescaped ampersand is reported by the parser.
  const std::string bad = write_temp("bad.svg", "<svg xmlns=\"http://www.w3.org/2000/svg\"><text>a & b</text></svg>");
  CHECK(shelfstage::test::dump_dom(bad).find("parsererror") != std::string::npos);
  std::filesystem::remove_all(std::filesystem::path(path).parent_path());
  std::filesystem::remove_all(std::filesystem::path(bad).parent_path());
}
