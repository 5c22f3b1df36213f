#include "loopaudit/record/record.hpp"

#include <algorithm>
#include <utility>

namespace loopaudit {

Record read_all(SampleSource& source) {
  Record record;
  record.channel_names = source.channel_names();
  record.channels.resize(record.channel_names.size());
  SampleBlock block;
  while (source.next(block)) {
    for (std::size_t c = 0; c < block.channels.size(); ++c) {
      auto& out = record.channels[c];
      out.insert(out.end(), block.channels[c].begin(), block.channels[c].end());
    }
  }
  SourceSummary summary = source.summary();
  record.sample_rate_hz = summary.sample_rate_hz;
  record.findings = std::move(summary.findings);
  return record;
}

RecordSource::RecordSource(const Record& record, std::string origin, std::size_t block_size)
    : record_(record), origin_(std::move(origin)), block_size_(std::max<std::size_t>(block_size, 1)) {}

bool RecordSource::next(SampleBlock& block) {
  const std::size_t total = record_.sample_count();
  if (position_ >= total) return false;
  const std::size_t count = std::min(block_size_, total - position_);
  block.first_sample = position_;
  block.channels.resize(record_.channels.size());
  for (std::size_t c = 0; c < record_.channels.size(); ++c) {
    const auto first = record_.channels[c].begin() + static_cast<std::ptrdiff_t>(position_);
    block.channels[c].assign(first, first + static_cast<std::ptrdiff_t>(count));
  }
  position_ += count;
  return true;
}

SourceSummary RecordSource::summary() const {
  return {record_.sample_rate_hz, record_.sample_count(), record_.findings};
}

}  // namespace loopaudit
