// Naming one stock line on the command line: by its id, or by kind, value and bin.
#include "selector.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>

#include "args.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/units/text.hpp"
#include "stock_view.hpp"

namespace shelfstage::cli {

namespace detail {
namespace {

bool iequal(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) == std::tolower(static_cast<unsigned char>(y));
         });
}

bool matches(const PartSelector& s, const store::Part& p) {
  if (p.kind != s.kind) return false;
  if (store::is_passive(p.kind)) {
    if (std::abs(p.value - s.value) > 1e-9 * std::abs(s.value)) return false;
  } else if (!iequal(p.device, s.device)) {
    return false;
  }
  return !s.bin || iequal(p.bin, *s.bin);
}

}  // namespace
}  // namespace detail

PartSelector parse_selector(std::string_view text) {
  PartSelector s;
  s.text = std::string(text);
  const std::string shown = units::clip(text);
  if (text.empty()) throw InputError("stock line '' is empty: give a line id or KIND:VALUE[@BIN]");
  if (std::all_of(text.begin(), text.end(), [](char c) { return c >= '0' && c <= '9'; })) {
    std::int64_t id = 0;
    const auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), id);
    if (ec != std::errc() || ptr != text.data() + text.size() || id <= 0) {
      throw InputError(fmt::format("stock line '{}' is not a line id", shown));
    }
    s.id = id;
    return s;
  }
  const auto colon = text.find(':');
  if (colon == std::string_view::npos) {
    throw InputError(fmt::format(
        "stock line '{}' is neither a line id nor KIND:VALUE[@BIN] (for example 23, R:4k7 or R:4k7@A6)", shown));
  }
  const auto kind_text = text.substr(0, colon);
  if (!store::parse_kind_code(kind_text, s.kind)) {
    throw InputError(fmt::format("stock line '{}': kind '{}' is not one of {}", shown, units::clip(kind_text),
                                 store::kind_codes_text()));
  }
  std::string_view rest = text.substr(colon + 1);
  const auto at = rest.find('@');
  if (at != std::string_view::npos) {
    s.bin = std::string(rest.substr(at + 1));
    if (s.bin->empty()) throw InputError(fmt::format("stock line '{}': the bin after '@' is empty", shown));
    rest = rest.substr(0, at);
  }
  if (rest.empty()) throw InputError(fmt::format("stock line '{}': the value after ':' is empty", shown));
  if (s.kind == store::PartKind::resistor) {
    s.value = parse_quantity("stock line value", rest, units::Unit::ohm);
  } else if (s.kind == store::PartKind::capacitor) {
    s.value = parse_capacitance("stock line value", rest);
  } else {
    s.device = std::string(rest);
  }
  return s;
}

const store::Part& select_part(const PartSelector& selector, const std::vector<store::Part>& parts) {
  if (selector.id) {
    for (const auto& p : parts) {
      if (p.id == *selector.id) return p;
    }
    throw InputError(fmt::format("stock line {} does not exist (see `shelfstage stock list`)", *selector.id));
  }
  std::vector<const store::Part*> found;
  for (const auto& p : parts) {
    if (detail::matches(selector, p)) found.push_back(&p);
  }
  if (found.empty()) {
    throw InputError(fmt::format("stock line '{}' matches nothing on the shelf (see `shelfstage stock list`)",
                                 units::clip(selector.text)));
  }
  if (found.size() > 1) {
    std::string which;
    for (const auto* p : found) {
      if (!which.empty()) which += ", ";
      which += fmt::format("{} ({})", p->id, describe_part(*p));
    }
    // @BIN helps only when it was not given and the lines sit in different bins.
    bool bins_differ = false;
    for (const auto* p : found) bins_differ = bins_differ || !detail::iequal(p->bin, found.front()->bin);
    throw InputError(fmt::format("stock line '{}' matches {} lines: {}; give the line id{}", units::clip(selector.text),
                                 found.size(), which, !selector.bin && bins_differ ? " or add @BIN" : ""));
  }
  return *found.front();
}

}  // namespace shelfstage::cli
