// What every reader of an unlabelled format needs: channel names, and the
// per-channel scale and offset, checked against the channel count.
#pragma once

#include <string>
#include <vector>

#include "loopaudit/ingest/recording.hpp"

namespace loopaudit::detail {

struct ChannelSetup {
  std::vector<std::string> names;
  std::vector<double> scale;
  std::vector<double> offset;

  // Applies scale and offset to every sample of channel c.
  void calibrate(std::size_t c, std::vector<double>& samples) const;
};

// Throws ConfigError naming the file when the options name more channels
// than the file has, or give scale/offset lists of the wrong length.
ChannelSetup channel_setup(const RecordingOptions& options, std::size_t count, const std::string& path);

}  // namespace loopaudit::detail
