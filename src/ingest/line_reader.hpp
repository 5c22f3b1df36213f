// Reads a text file line by line in large chunks, without copying lines.
#pragma once

#include <cstdio>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

namespace loopaudit::detail {

class LineReader {
 public:
  explicit LineReader(const std::string& path);  // throws InputError
  // next() throws InputError for a line over 16 MiB.
  // The next line without its end-of-line characters; false at end of file.
  // The view is valid until the next call.
  bool next(std::string_view& line);
  std::size_t line_number() const { return line_number_; }

 private:
  bool refill();

  struct FileCloser {
    void operator()(std::FILE* file) const { std::fclose(file); }
  };
  std::string path_;
  std::unique_ptr<std::FILE, FileCloser> file_;
  std::vector<char> buffer_;
  std::size_t begin_ = 0;
  std::size_t end_ = 0;
  bool at_eof_ = false;
  std::size_t line_number_ = 0;
  bool read_any_ = false;  // the byte-order mark is looked for once, before the first line
};

}  // namespace loopaudit::detail
