// Names of the device kinds, as the stock and device CSV files write them, and how a type's stock
// is counted (pieces of a transistor, packages of an op-amp).
#include <algorithm>
#include "shelfstage/devices/record.hpp"

#include <array>
#include <limits>

namespace shelfstage::devices {

namespace {

struct KindName {
  DeviceKind kind;
  std::string_view name;
};
constexpr std::array<KindName, 5> kind_names{{
    {DeviceKind::njfet, "NJFET"},
    {DeviceKind::pjfet, "PJFET"},
    {DeviceKind::npn, "NPN"},
    {DeviceKind::pnp, "PNP"},
    {DeviceKind::opamp, "OPAMP"},
}};

bool equal_ci(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    char c = a[i];
    if (c >= 'a' && c <= 'z') c = static_cast<char>(c - 'a' + 'A');
    if (c != b[i]) return false;  // b is one of the upper-case names above
  }
  return true;
}

}  // namespace

std::string_view kind_name(DeviceKind kind) {
  for (const KindName& k : kind_names) {
    if (k.kind == kind) return k.name;
  }
  return "?";
}

bool parse_kind(std::string_view text, DeviceKind& out) {
  for (const KindName& k : kind_names) {
    if (equal_ci(text, k.name)) {
      out = k.kind;
      return true;
    }
  }
  return false;
}

std::string with_article(DeviceKind kind) {
  if (kind == DeviceKind::opamp) return "an op-amp";
  // The article as the first letter is spoken: "an NPN" (en), "a PNP" (pee).
  const std::string_view name = kind_name(kind);
  return std::string(name.starts_with('N') ? "an " : "a ") + std::string(name);
}

int channel_units(const DeviceRecord& device, int packages) {
  if (packages <= 0) return 0;
  // A record holds 1, 2 or 4 (the store refuses anything else); a record made by hand with
  // less than one counts as a single.
  const long long per = is_opamp(device.kind) ? std::max(1, device.opamp.channels) : 1;
  return static_cast<int>(std::min<long long>(std::numeric_limits<int>::max(), per * packages));
}

int packages_for(const DeviceRecord& device, int channels_used) {
  if (channels_used <= 0) return 0;
  const int per = is_opamp(device.kind) ? std::max(1, device.opamp.channels) : 1;
  return channels_used / per + (channels_used % per != 0 ? 1 : 0);
}

std::string_view device_designator(DeviceKind kind) { return is_opamp(kind) ? "U1" : "Q1"; }

double Ratings::p_max_at(double celsius) const {
  if (!p_max_w) return 0.0;
  const double slope = derate_w_per_k ? *derate_w_per_k : *p_max_w / 125.0;
  return std::max(0.0, *p_max_w - slope * std::max(0.0, celsius - 25.0));
}

}  // namespace shelfstage::devices
