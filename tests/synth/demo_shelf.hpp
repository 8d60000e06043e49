// The demo shelf (data-demo/) as an inventory, for tests that design on it.
#pragma once
#include <doctest/doctest.h>

#include <cstdint>
#include <fstream>
#include <sstream>
#include <string>

#include "shelfstage/store/csv.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::test {

/// A file of the source tree, whole.
inline std::string source_file(const std::string& relative) {
  std::ifstream in(std::string(SHELFSTAGE_SOURCE_DIR) + "/" + relative, std::ios::binary);
  REQUIRE_MESSAGE(in.good(), "cannot read ", relative);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

/// The demo's devices and stock, stock lines numbered from 1 as a database would.
inline synth::Inventory demo_shelf() {
  synth::Inventory inv;
  inv.devices = store::parse_devices_csv(source_file("data-demo/devices.csv"), "devices.csv");
  inv.parts = store::parse_stock_csv(source_file("data-demo/stock.csv"), "stock.csv", inv.devices);
  std::int64_t id = 1;
  for (auto& p : inv.parts) p.id = id++;
  return inv;
}

}  // namespace shelfstage::test
