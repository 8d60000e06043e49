// Shared output of `show` and `analyze`: the SPICE file and warning lists.
#include "stage_view.hpp"

#include <fmt/format.h>

#include <ostream>

#include "output.hpp"
#include "shelfstage/error.hpp"

namespace shelfstage::cli {

void write_text_file(const std::string& option, const std::string& path, const std::string& text) {
  write_file(option, path, text);
}

void write_spice(const std::string& path, const report::StageUnderTest& stage) {
  write_text_file("--spice", path, report::stage_spice(stage));
}

void print_list(std::ostream& out, const std::string& title, const std::vector<std::string>& lines) {
  if (lines.empty()) return;
  out << "\n" << title << ":\n";
  for (const auto& l : lines) out << "  - " << l << "\n";
}

}  // namespace shelfstage::cli
