// The project's palette (include/shelfstage/draw/palette.hpp): well-formed, one name per
// colour, readable text, and the drawings take their colours from it and from nowhere else.
//
// Contrast: the ratio (L1 + 0.05) / (L2 + 0.05) of the lighter and darker colour's relative
// luminance L = 0.2126 R + 0.7152 G + 0.0722 B over linearised sRGB channels (c / 12.92 up to
// 0.03928, else ((c + 0.055) / 1.055)^2.4): the usual accessibility definition, from memory;
// 4.5 : 1 is the usual floor for body text. Two spot values checked by hand below: black on
// white 21 : 1 (1.05 / 0.05), and a colour against itself 1 : 1.
#include "shelfstage/draw/palette.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <regex>
#include <set>
#include <string>

#include "support/palette_check.hpp"
#include "shelfstage/draw/plot.hpp"

using namespace shelfstage::draw;

namespace {

double channel(int byte) {
  const double c = byte / 255.0;
  return c <= 0.03928 ? c / 12.92 : std::pow((c + 0.055) / 1.055, 2.4);
}

double luminance(std::string_view hex) {
  REQUIRE(hex.size() == 7);
  const auto byte = [&](std::size_t i) { return std::stoi(std::string(hex.substr(i, 2)), nullptr, 16); };
  return 0.2126 * channel(byte(1)) + 0.7152 * channel(byte(3)) + 0.0722 * channel(byte(5));
}

double contrast(std::string_view a, std::string_view b) {
  const double la = luminance(a), lb = luminance(b);
  return (std::max(la, lb) + 0.05) / (std::min(la, lb) + 0.05);
}

}  // namespace

TEST_CASE("the contrast formula: black on white is 21 : 1, a colour on itself 1 : 1") {
  CHECK(contrast("#000000", "#ffffff") == doctest::Approx(21.0));
  CHECK(contrast(palette::ink, palette::ink) == doctest::Approx(1.0));
}

TEST_CASE("palette: every entry a #rrggbb code, names and codes each used once") {
  std::set<std::string_view> names, codes;
  const std::regex hex("#[0-9a-f]{6}");
  for (const auto& c : palette::all) {
    CAPTURE(c.name);
    CHECK(std::regex_match(std::string(c.hex), hex));
    CHECK(names.insert(c.name).second);
    CHECK(codes.insert(c.hex).second);
  }
}

TEST_CASE("palette: text colours on the grounds they are written on reach 4.5 : 1") {
  // Which colour is written on which ground: the report's CSS (body text, .muted, headings
  // and cards, .ok/.warn/.note, the hazard notice) and the drawings' labels (schematic
  // designators, bench labels, values; plot titles, legends and notes).
  const std::pair<const char*, const char*> pairs[] = {
      {palette::ink, palette::paper},          {palette::ink, palette::band},
      {palette::ink, palette::blank},          {palette::muted, palette::paper},
      {palette::muted, palette::band},         {palette::bench, palette::paper},
      {palette::brick, palette::paper},        {palette::brick, palette::band},
      {palette::good, palette::paper},         {palette::alarm, palette::paper},
      {palette::alarm, palette::alarm_ground}, {palette::caution, palette::paper},
      {palette::ink, palette::alarm_ground},   {palette::muted, palette::blank},
  };
  for (const auto& [text, ground] : pairs) {
    CAPTURE(text);
    CAPTURE(ground);
    CHECK(contrast(text, ground) >= 4.5);
  }
}

TEST_CASE("a plot with every kind of mark and its default colours uses palette colours only") {
  Plot p;
  p.title = "every mark";
  p.x = {Scale::log, "frequency (Hz)"};
  p.y = {Scale::linear, "gain (dB)"};
  std::vector<double> xs, lo, hi;
  std::vector<Point> pts;
  for (int i = 0; i <= 20; ++i) {
    const double f = std::pow(10.0, 1 + i / 5.0);
    xs.push_back(f);
    lo.push_back(-1);
    hi.push_back(1);
    pts.push_back({f, std::sin(i)});
  }
  p.envelopes.push_back({"envelope", xs, lo, hi});
  p.series.push_back({"series", pts});
  p.spans.push_back({"span", 100, 1000});
  p.regions.push_back({"region", {{100, 0}, {1000, 0}, {1000, 0.5}}});
  Cloud cloud;
  cloud.name = "cloud";
  cloud.points = {{100, 0.2}};
  p.clouds.push_back(cloud);
  p.notes.push_back("a note");
  const std::string svg = p.svg();
  CHECK(shelfstage::test::foreign_colours(svg).empty());
  CHECK_FALSE(shelfstage::test::colours_in(svg).empty());
  // An empty plot's "no data" is in a palette colour too.
  Plot none;
  none.x = {Scale::log, "x"};
  none.y = {Scale::linear, "y"};
  CHECK(shelfstage::test::foreign_colours(none.svg()).empty());
}
