// The project's colours, in one table: every drawing (schematic, plots) and the HTML
// report's style take theirs from here, by name. Muted engineering-paper tones: blue-grey ink
// on warm paper, a brick accent for values and targets, and a few quiet signal colours.
// Every colour that text is written in keeps a contrast of at least 4.5 : 1 against the
// grounds it is written on (tests/draw/palette_test.cpp checks it).
#pragma once
#include <array>
#include <string_view>

namespace shelfstage::draw::palette {

// Ink and paper.
inline constexpr const char* ink = "#1d2b3a";         ///< text, the stage's wiring, corner points
inline constexpr const char* muted = "#56606c";       ///< secondary text, notes, ideal curves
inline constexpr const char* bench = "#6a7380";       ///< the test bench around a stage (lines and labels)
inline constexpr const char* paper = "#fffdf8";       ///< page, schematic and plot ground
inline constexpr const char* surround = "#ebe8e0";    ///< around the page on screen
inline constexpr const char* band = "#f3efe4";        ///< cards, table heads, identifiers
inline constexpr const char* rule = "#d8d4ca";        ///< table rules and section lines
inline constexpr const char* grid_major = "#cdc9bf";  ///< plot grid at labelled ticks
inline constexpr const char* grid_minor = "#e7e3da";  ///< plot grid between them
inline constexpr const char* blank = "#ffffff";       ///< pin and terminal fills, the printed page

// Fills of schematic symbols.
inline constexpr const char* resistor_fill = "#f6efdd";
inline constexpr const char* device_fill = "#e6eef7";
inline constexpr const char* bench_fill = "#f1f0ea";

// Accents and signals.
inline constexpr const char* brick = "#8f3b1f";            ///< part values, headings, the requested figure
inline constexpr const char* trace = "#2c5474";            ///< a curve's default colour
inline constexpr const char* region = "#3d7f74";           ///< a safe operating region
inline constexpr const char* span = "#d6b25e";             ///< the requested band
inline constexpr const char* marks = "#5a5a5a";            ///< markers' default colour
inline constexpr const char* inside = "#2e6a80";           ///< builds inside the safe region
inline constexpr const char* good = "#2e5e38";             ///< "holds" in tables
inline constexpr const char* alarm = "#a1282b";            ///< warnings, builds outside the safe region
inline constexpr const char* alarm_ground = "#fbefeb";     ///< behind a hazard notice
inline constexpr const char* caution = "#7b4613";          ///< notes
inline constexpr const char* overdrive = "#a65a1c";        ///< a curve beyond the rated level
inline constexpr const char* overdrive_light = "#d3a873";  ///< its ideal counterpart

/// One named colour of the table.
struct Named {
  std::string_view name;
  std::string_view hex;
};

/// Every colour above, by name (the HTML report's style declares each as a CSS variable
/// "--name", underscores turned into hyphens).
inline constexpr std::array<Named, 25> all = {{
    {"ink", ink},
    {"muted", muted},
    {"bench", bench},
    {"paper", paper},
    {"surround", surround},
    {"band", band},
    {"rule", rule},
    {"grid_major", grid_major},
    {"grid_minor", grid_minor},
    {"blank", blank},
    {"resistor_fill", resistor_fill},
    {"device_fill", device_fill},
    {"bench_fill", bench_fill},
    {"brick", brick},
    {"trace", trace},
    {"region", region},
    {"span", span},
    {"marks", marks},
    {"inside", inside},
    {"good", good},
    {"alarm", alarm},
    {"alarm_ground", alarm_ground},
    {"caution", caution},
    {"overdrive", overdrive},
    {"overdrive_light", overdrive_light},
}};

}  // namespace shelfstage::draw::palette
