// qualify tests: a fresh temporary directory for tests that write files.
// SPDX-License-Identifier: MIT
#pragma once

#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <system_error>

namespace qualify_test {

/// A fresh directory under the system's temporary directory, removed at the end of the test.
struct temp_dir {
  std::filesystem::path path;
  explicit temp_dir(const std::string& prefix) {
    std::random_device seed;
    path = std::filesystem::temp_directory_path() /
           (prefix + std::to_string(seed()) + "_" + std::to_string(seed()));
    std::filesystem::create_directories(path);
  }
  ~temp_dir() {
    std::error_code ec;
    std::filesystem::remove_all(path, ec);
  }
  temp_dir(const temp_dir&) = delete;
  temp_dir& operator=(const temp_dir&) = delete;
  std::filesystem::path write(const std::string& name, const std::string& text) const {
    std::filesystem::path file = path / name;
    std::ofstream(file, std::ios::binary) << text;
    return file;
  }
};

}  // namespace qualify_test
