// Benchmark: a stock CSV import (parse and validate, then one transaction) of a generated file
// of 50,000 rows by default; prints the time of each phase, the rows per second and peak memory.
//
//   bench_import [ROWS] [--write FILE]
//
// ROWS sets the file's size (run 12500, 25000 and 50000 to see how the time grows); --write
// also leaves the generated CSV in FILE, so the whole command can be timed:
//   /usr/bin/time -v shelfstage --db x.db stock import FILE
#include <sys/resource.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "shelfstage/store/csv.hpp"
#include "shelfstage/store/database.hpp"
#include "shelfstage/units/eseries.hpp"
#include "shelfstage/units/notation.hpp"

using namespace shelfstage;

namespace {

using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }

/// Peak resident memory of this process, in MB (ru_maxrss is in kB on Linux).
double peak_mb() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return static_cast<double>(u.ru_maxrss) / 1024.0;
}

devices::DeviceRecord device(const char* name, devices::DeviceKind kind) {
  devices::DeviceRecord d;
  d.name = name;
  d.kind = kind;
  if (devices::is_jfet(kind)) {
    d.jfet.idss_a = {1e-3, 5e-3, {}};
    d.jfet.vp_v = {-3.0, -0.5, {}};
  } else {
    d.bjt.hfe = {110, 450, {}};
  }
  return d;
}

/// A stock file of `rows` rows: resistors over five decades of E96 (most rows), capacitors
/// with ratings, transistors; each row in a bin of its own group, every 20th row repeating
/// an earlier one (so lines merge as they do in a real file).
std::string generated_csv(int rows) {
  const auto& e96 = units::eseries(96);
  const auto& e12 = units::eseries(12);
  std::string csv = "kind,value,qty,tol,power,volts,dielectric,bin,note\n";
  for (int i = 0; i < rows; ++i) {
    const int k = i % 20 == 19 ? i - 19 : i;  // every 20th row repeats the first of its twenty
    const std::string bin = "D" + std::to_string(k / 9);
    if (k % 10 < 8) {
      const double v = e96[static_cast<std::size_t>(k) % e96.size()] * std::pow(10.0, 1 + (k / 96) % 5);
      csv += "R," + units::format_value(v, units::Unit::none, 4) + "," + std::to_string(1 + k % 50) + ",1%,0.25,,," +
             bin + ",metal film Ø2.5\n";
    } else if (k % 10 == 8) {
      const double v = e12[static_cast<std::size_t>(k) % e12.size()] * std::pow(10.0, -9 + (k / 12) % 4);
      csv += "C," + units::format_value(v) + "," + std::to_string(1 + k % 30) + ",10%,,63,film," + bin + ",\n";
    } else {
      csv += std::string(k % 20 == 9 ? "NJFET,SJ-101," : "NPN,SQ-410,") + std::to_string(1 + k % 10) + ",,,,," + bin +
             ",\n";
    }
  }
  return csv;
}

}  // namespace

int main(int argc, char** argv) {
  int rows = 50000;
  std::string keep;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    if (a == "--write" && i + 1 < argc) {
      keep = argv[++i];
    } else {
      rows = std::atoi(a.c_str());
      if (rows <= 0) {
        std::fprintf(stderr, "usage: bench_import [ROWS] [--write FILE]\n");
        return 1;
      }
    }
  }
  const std::string csv = generated_csv(rows);
  if (!keep.empty()) std::ofstream(keep, std::ios::binary) << csv;

  const auto dir = std::filesystem::temp_directory_path() / ("shelfstage-bench-import-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const auto path = dir / "stock.db";
  double parse_s = 0, write_s = 0, peak = 0;
  std::size_t lines = 0;
  {
    auto db = store::Database::create(path);
    const std::vector<devices::DeviceRecord> devices = {device("SJ-101", devices::DeviceKind::njfet),
                                                        device("SQ-410", devices::DeviceKind::npn)};
    db.put_devices(devices);
    auto t0 = Clock::now();
    const auto parts = store::parse_stock_csv(csv, "bench.csv", devices);
    parse_s = seconds_since(t0);
    t0 = Clock::now();
    db.add_parts(parts, "bench import");
    write_s = seconds_since(t0);
    peak = peak_mb();  // before the listing below, which is not part of an import
    lines = db.parts().size();
  }
  std::error_code ec;
  std::filesystem::remove_all(dir, ec);

  std::printf("stock import of %d rows (%.1f MB of CSV) into %zu stock lines\n", rows,
              static_cast<double>(csv.size()) / 1e6, lines);
  std::printf("  parse and validate: %8.3f s  (no lock held)\n", parse_s);
  std::printf("  transaction:        %8.3f s  (write lock held)\n", write_s);
  std::printf("  total:              %8.3f s  (%.0f rows/s)\n", parse_s + write_s, rows / (parse_s + write_s));
  std::printf("  peak memory:        %8.1f MB  (the file %.1f MB, held as text, rows and parts)\n", peak,
              static_cast<double>(csv.size()) / 1e6);
  return 0;
}
