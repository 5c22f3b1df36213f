// What every reader of an unlabelled format needs: channel names, and the
// per-channel scale and offset, checked against the channel count.
#pragma once

#include <algorithm>
#include <string>
#include <vector>

#include "loopaudit/ingest/recording.hpp"

namespace loopaudit::detail {

// The samples of all channels together that one block holds at most (8 MiB
// of doubles): a file of many channels is handed out in blocks of fewer rows
// (at least kMaxBlockSize / 64 with kMaxChannels channels, so that the
// pipeline's detection prefix of 64 blocks still spans kMaxBlockSize rows).
inline constexpr std::size_t kBlockSamples = std::size_t{1} << 20;

inline std::size_t rows_per_block(std::size_t block_size, std::size_t channels) {
  const std::size_t fit = kBlockSamples / (channels == 0 ? 1 : channels);
  return std::max<std::size_t>(1, std::min(block_size, fit));
}

struct ChannelSetup {
  std::vector<std::string> names;
  std::vector<double> scale;
  std::vector<double> offset;

  // Applies scale and offset to every sample of channel c.
  void calibrate(std::size_t c, std::vector<double>& samples) const;
};

// Throws ConfigError naming the file when the options name more or fewer
// channels than the file has, or give scale/offset lists of the wrong
// length; InputError when the file has more than kMaxChannels.
ChannelSetup channel_setup(const RecordingOptions& options, std::size_t count, const std::string& path);

}  // namespace loopaudit::detail
