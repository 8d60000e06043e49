// What `show` and `analyze` share: writing the SPICE file and printing warning lists.
#pragma once
#include <iosfwd>
#include <string>
#include <vector>

#include "shelfstage/report/analysis.hpp"

namespace shelfstage::cli {

/// Writes report::stage_spice(stage) to path. InputError naming `--spice` and the path
/// when the file cannot be written.
void write_spice(const std::string& path, const report::StageUnderTest& stage);

/// "\nTITLE:\n  - line\n..." on out, nothing when lines is empty.
void print_list(std::ostream& out, const std::string& title, const std::vector<std::string>& lines);

}  // namespace shelfstage::cli
