// The truth file of a synthetic recording: its exact margins and its
// response, in the JSON layout of an analysis (README.md, "JSON results"),
// with "kind": "truth". ingest/truth_file.hpp reads it back.
#pragma once

#include <cstddef>
#include <string>

#include "loopaudit/synth/simulate.hpp"

namespace loopaudit {

inline constexpr int kTruthSchemaVersion = 1;

// The exact margins and the response on a logarithmic grid of `grid_lines`
// lines.
std::string truth_json(const Scenario& scenario, const Synthesis& synthesis, std::size_t grid_lines = 400);

}  // namespace loopaudit
