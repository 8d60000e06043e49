// Test helpers for the store layer: a temporary folder per test and raw SQLite access that
// bypasses the library (to tamper with a file or hold its lock).
#pragma once
#include <sqlite3.h>
#include <unistd.h>

#include <atomic>
#include <chrono>
#include <filesystem>
#include <stdexcept>
#include <string>

namespace shelfstage::store::testing {

/// A fresh folder under the system temp folder, removed with everything in it at the end.
class TempDir {
 public:
  TempDir() {
    static std::atomic<int> counter{0};
    const auto stamp = std::chrono::steady_clock::now().time_since_epoch().count();
    dir_ = std::filesystem::temp_directory_path() / ("shelfstage-store-test-" + std::to_string(::getpid()) + "-" +
                                                     std::to_string(stamp) + "-" + std::to_string(counter++));
    std::filesystem::create_directories(dir_);
  }
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(dir_, ec);
  }
  const std::filesystem::path& path() const { return dir_; }
  std::filesystem::path file(const std::string& name) const { return dir_ / name; }

 private:
  std::filesystem::path dir_;
};

/// A raw connection that does not go through the library.
class RawDb {
 public:
  explicit RawDb(const std::filesystem::path& path) {
    if (sqlite3_open(path.c_str(), &db_) != SQLITE_OK) throw std::runtime_error("raw open failed");
  }
  RawDb(const RawDb&) = delete;
  RawDb& operator=(const RawDb&) = delete;
  ~RawDb() { sqlite3_close_v2(db_); }
  /// Runs SQL; returns the SQLite result code (SQLITE_OK on success).
  int exec(const std::string& sql) { return sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, nullptr); }
  /// The first column of the first row as text ("" when there is no row).
  std::string text(const std::string& sql) {
    sqlite3_stmt* st = nullptr;
    std::string out;
    if (sqlite3_prepare_v2(db_, sql.c_str(), -1, &st, nullptr) == SQLITE_OK && sqlite3_step(st) == SQLITE_ROW) {
      const auto* p = sqlite3_column_text(st, 0);
      if (p != nullptr) out = reinterpret_cast<const char*>(p);
    }
    sqlite3_finalize(st);
    return out;
  }
  long long integer(const std::string& sql) { return std::stoll(text(sql)); }
  sqlite3* handle() { return db_; }

 private:
  sqlite3* db_ = nullptr;
};

}  // namespace shelfstage::store::testing
