// Recordings as the stages see them: channels of samples at one sample rate.
//
// Large recordings are never held whole: a reader is a SampleSource that hands
// out blocks in order, and the spectral stage consumes them as they come. The
// sample rate of a time-stamped file is known only once its last stamp has been
// read, so it is part of the SourceSummary returned at the end of the stream.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "loopaudit/record/diagnostic.hpp"

namespace loopaudit {

// A run of consecutive samples, channel-major: channels[c][i] is sample
// first_sample + i of channel c. All channels have the same length.
struct SampleBlock {
  std::size_t first_sample = 0;
  std::vector<std::vector<double>> channels;

  std::size_t size() const { return channels.empty() ? 0 : channels.front().size(); }
};

// What is known once the whole stream has been read.
struct SourceSummary {
  double sample_rate_hz = 0.0;
  std::size_t sample_count = 0;
  Diagnostics findings;
  // How a file that does not describe itself was read, for the report
  // ("int16, little-endian, 3 channels interleaved"); empty otherwise.
  std::string layout;
};

class SampleSource {
 public:
  virtual ~SampleSource() = default;
  virtual const std::vector<std::string>& channel_names() const = 0;
  // Units in the order of channel_names, "" where unknown; empty when the
  // format states none.
  virtual std::vector<std::string> channel_units() const { return {}; }
  // Fills `block` with the next samples (up to the reader's block size) and
  // returns true, or returns false at the end of the data.
  virtual bool next(SampleBlock& block) = 0;
  // Valid after next() has returned false.
  virtual SourceSummary summary() const = 0;
  // The file or stream the samples come from, for messages.
  virtual const std::string& origin() const = 0;
  // Empty when the source can be opened again and read from its start (a
  // file); otherwise what it is ("a pipe"), for the message of an analysis
  // that would have to read it twice.
  virtual std::string one_pass_kind() const { return {}; }
};

// A whole recording in memory (synthesis, tests, small files).
struct Record {
  std::vector<std::string> channel_names;
  std::vector<std::vector<double>> channels;  // channel-major
  double sample_rate_hz = 0.0;
  Diagnostics findings;

  std::size_t sample_count() const { return channels.empty() ? 0 : channels.front().size(); }
};

// Reads a source to its end into memory.
Record read_all(SampleSource& source);

// Serves an in-memory Record as a SampleSource, in blocks of `block_size`.
class RecordSource final : public SampleSource {
 public:
  RecordSource(const Record& record, std::string origin, std::size_t block_size = 65536);
  const std::vector<std::string>& channel_names() const override { return record_.channel_names; }
  bool next(SampleBlock& block) override;
  SourceSummary summary() const override;
  const std::string& origin() const override { return origin_; }

 private:
  const Record& record_;
  std::string origin_;
  std::size_t block_size_;
  std::size_t position_ = 0;
};

}  // namespace loopaudit
