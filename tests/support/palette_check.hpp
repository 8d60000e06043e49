// Test support: the colour codes a drawing or a page writes, and those of them that are not
// in the project's palette (include/shelfstage/draw/palette.hpp).
#pragma once
#include <algorithm>
#include <cctype>
#include <regex>
#include <set>
#include <string>

#include "shelfstage/draw/palette.hpp"

namespace shelfstage::test {

/// Every "#rgb" or "#rrggbb" colour code in a text, lower-cased ("#t1-area" and other ids
/// are not codes: a code ends where the hex digits end).
inline std::set<std::string> colours_in(const std::string& text) {
  static const std::regex code("#([0-9a-fA-F]{6}|[0-9a-fA-F]{3})(?![0-9A-Za-z_-])");
  std::set<std::string> out;
  for (auto it = std::sregex_iterator(text.begin(), text.end(), code); it != std::sregex_iterator(); ++it) {
    std::string s = it->str();
    std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    out.insert(s);
  }
  return out;
}

/// The codes of colours_in(text) that the palette does not hold.
inline std::set<std::string> foreign_colours(const std::string& text) {
  std::set<std::string> out;
  for (const auto& c : colours_in(text))
    if (std::none_of(draw::palette::all.begin(), draw::palette::all.end(), [&](const auto& p) { return p.hex == c; }))
      out.insert(c);
  return out;
}

}  // namespace shelfstage::test
