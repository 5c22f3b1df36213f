// Shared by the fuzz targets: each input is written to a file of this
// process's own (the readers take paths), then read through the library.
// Errors the library reports are the expected outcome; anything else (a
// crash, a sanitizer report, an unexpected exception) is a finding.
#pragma once

#include <unistd.h>

#include <cstdint>
#include <cstdio>
#include <string>

namespace fuzzing {

inline std::string input_file(const uint8_t* data, size_t size, const char* suffix) {
  const std::string path = "/tmp/loopaudit_fuzz_" + std::to_string(::getpid()) + suffix;
  std::FILE* f = std::fopen(path.c_str(), "wb");
  if (f == nullptr) return path;
  if (size > 0) std::fwrite(data, 1, size, f);
  std::fclose(f);
  return path;
}

}  // namespace fuzzing
