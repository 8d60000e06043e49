// Test support: a text cut into its lines (the line ends dropped), for tests that read tables,
// plots and reports line by line.
#pragma once
#include <sstream>
#include <string>
#include <vector>

namespace shelfstage::test {

inline std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

}  // namespace shelfstage::test
