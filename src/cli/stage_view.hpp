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
/// Writes text to path as write_file (output.hpp) does: replaced whole, links followed,
/// special files refused; InputError naming the option and the path when it cannot.
void write_text_file(const std::string& option, const std::string& path, const std::string& text);

/// "\nTITLE:\n  - line\n..." on out, nothing when lines is empty.
void print_list(std::ostream& out, const std::string& title, const std::vector<std::string>& lines);

}  // namespace shelfstage::cli
