// The demo shelf (data-demo/*.csv), compiled into the program by CMake.
#pragma once

namespace shelfstage::cli {
extern const char* const kDemoStockCsv;
extern const char* const kDemoDevicesCsv;
extern const char* const kDemoPiecesCsv;
}  // namespace shelfstage::cli
