// Delimited text recordings (CSV, TSV, semicolon-separated).
//
// A header line names the columns: the first line of names followed by
// rows of numbers of the same width (metadata lines above it are skipped), or
// the first line after `lines_before_header` lines. One column may hold the time in
// seconds; the sample rate then comes from the whole span of that column and
// every step is checked against it (see src/ingest/stamp_check.hpp). Without a
// time column the sample rate must be stated. Every other column is a channel.
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/record/record.hpp"

namespace loopaudit {

// The most samples a reader hands out in one block (the analysis keeps up to
// 64 blocks of the start of a recording for replay).
inline constexpr std::size_t kMaxBlockSize = 65536;

struct DelimitedOptions {
  std::optional<char> delimiter;         // unset: the most frequent of , ; and tab in the header
  std::string time_column;               // empty: a column named t, time or time_s, if any
  // Lines above the header (metadata an instrument writes). Unset: the
  // header is the first line of names over rows of numbers of its width.
  std::optional<std::size_t> lines_before_header;
  std::optional<double> sample_rate_hz;  // overrides the time column; required without one
  std::size_t block_size = kMaxBlockSize;  // samples per block handed out, 1 to kMaxBlockSize
  // Names given for formats without names (--channels, `channels`): the
  // header names the channels instead, and a warning (ingest.channels-unused) says so.
  std::vector<std::string> unused_channel_names;

  // Throws ConfigError naming the setting that is out of range (called by
  // open_delimited).
  void validate() const;
};

// Opens the file and reads its header. Throws InputError for a missing file
// or an unusable header, ConfigError for a named time column that is absent.
// Rows are parsed as next() is called; a bad cell throws InputError naming
// the file, line and column.
std::unique_ptr<SampleSource> open_delimited(const std::string& path, const DelimitedOptions& options);

}  // namespace loopaudit
