// Test support: a scratch folder under the system's temporary folder, removed with everything
// in it when the object goes (the ngspice runs and the browser profiles use one each).
#pragma once
#include <filesystem>
#include <random>
#include <string>
#include <system_error>

namespace shelfstage::test {

struct Scratch {
  std::filesystem::path path;
  /// prefix names the folder: "shelfstage-ngspice-<random>-<random>".
  explicit Scratch(const std::string& prefix) {
    std::random_device rd;
    path = std::filesystem::temp_directory_path() / (prefix + std::to_string(rd()) + "-" + std::to_string(rd()));
    std::filesystem::create_directories(path);
  }
  Scratch(const Scratch&) = delete;
  Scratch& operator=(const Scratch&) = delete;
  ~Scratch() {
    std::error_code ec;
    std::filesystem::remove_all(path, ec);
  }
};

}  // namespace shelfstage::test
