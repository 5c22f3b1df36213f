#include "ingest/line_reader.hpp"

#include <cerrno>
#include <cstring>
#include <filesystem>

#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {
constexpr std::size_t kChunkBytes = 1 << 20;
// No line of a recording or table is this long; a file that has one is not
// text (or not ours), and memory must not grow with it.
constexpr std::size_t kMaxLineBytes = 16 << 20;
}

LineReader::LineReader(const std::string& path) : path_(path), buffer_(kChunkBytes) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) throw InputError(path + ": is a folder, not a file");
  file_.reset(std::fopen(path.c_str(), "rb"));
  if (!file_) throw InputError(path + ": cannot open: " + std::strerror(errno));
}

bool LineReader::refill() {
  if (at_eof_) return false;
  const std::size_t kept = end_ - begin_;
  if (kept > 0 && begin_ > 0) std::memmove(buffer_.data(), buffer_.data() + begin_, kept);
  begin_ = 0;
  end_ = kept;
  if (end_ == buffer_.size()) {  // a line longer than the buffer
    if (buffer_.size() >= kMaxLineBytes) {
      throw InputError(path_ + ": line " + std::to_string(line_number_ + 1) + " is longer than " +
                       std::to_string(kMaxLineBytes >> 20) + " MiB; this does not look like a text table");
    }
    buffer_.resize(buffer_.size() * 2);
  }
  const std::size_t got = std::fread(buffer_.data() + end_, 1, buffer_.size() - end_, file_.get());
  if (got == 0) at_eof_ = true;
  end_ += got;
  return got > 0;
}

bool LineReader::next(std::string_view& line) {
  if (!read_any_) {
    // A UTF-8 byte-order mark (spreadsheets write one) is not part of the first line.
    read_any_ = true;
    static constexpr std::string_view kByteOrderMark = "\xEF\xBB\xBF";
    while (end_ - begin_ < kByteOrderMark.size() && refill()) {
    }
    if (std::string_view(buffer_.data() + begin_, end_ - begin_).starts_with(kByteOrderMark)) {
      begin_ += kByteOrderMark.size();
    }
  }
  for (;;) {
    const char* start = buffer_.data() + begin_;
    const void* newline = std::memchr(start, '\n', end_ - begin_);
    if (newline != nullptr) {
      const std::size_t length = static_cast<const char*>(newline) - start;
      begin_ += length + 1;
      line = std::string_view(start, length);
      if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
      ++line_number_;
      return true;
    }
    if (!refill()) break;
  }
  if (begin_ == end_) return false;  // a last line without newline is still a line
  line = std::string_view(buffer_.data() + begin_, end_ - begin_);
  if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
  begin_ = end_;
  ++line_number_;
  return true;
}

}  // namespace loopaudit::detail
