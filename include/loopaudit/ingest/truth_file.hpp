// Reading back the summary of a truth file (synth/truth_file.hpp), to show
// a simulated recording's truth beside its measurement.
#pragma once

#include <string>

#include "loopaudit/record/margins.hpp"

namespace loopaudit {

// Throws InputError when the file cannot be read or holds no summary.
MarginSummary read_truth_summary(const std::string& path);

}  // namespace loopaudit
