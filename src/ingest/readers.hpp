// The readers behind open_recording, one file each.
#pragma once

#include <memory>
#include <string>

#include "loopaudit/ingest/recording.hpp"

namespace loopaudit::detail {

std::unique_ptr<SampleSource> open_raw(const std::string& path, const RecordingOptions& options);
std::unique_ptr<SampleSource> open_wav(const std::string& path, const RecordingOptions& options);
std::unique_ptr<SampleSource> open_hdf5(const std::string& path, const RecordingOptions& options);

}  // namespace loopaudit::detail
