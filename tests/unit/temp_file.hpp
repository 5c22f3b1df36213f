// A file in the system's temporary folder, removed when the test ends.
#pragma once

#include <filesystem>
#include <fstream>
#include <random>
#include <string>

namespace testing {

class TempFile {
 public:
  explicit TempFile(const std::string& content, const std::string& suffix = ".csv") {
    std::random_device device;
    path_ = (std::filesystem::temp_directory_path() / ("loopaudit_test_" + std::to_string(device()) + suffix)).string();
    std::ofstream(path_, std::ios::binary) << content;
  }
  ~TempFile() {
    std::error_code ignored;
    std::filesystem::remove(path_, ignored);
  }
  TempFile(const TempFile&) = delete;
  TempFile& operator=(const TempFile&) = delete;
  const std::string& path() const { return path_; }

 private:
  std::string path_;
};

}  // namespace testing
