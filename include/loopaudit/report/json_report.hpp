// Machine-readable results. Keys are documented in README.md ("JSON
// results"); `schema_version` changes whenever a key changes meaning.
#pragma once

#include <optional>
#include <string>

#include "loopaudit/pipeline.hpp"
#include "loopaudit/synth/simulate.hpp"

namespace loopaudit {

inline constexpr int kSchemaVersion = 1;

std::string analysis_json(const AnalysisResult& result);

// The truth of a synthetic recording: its exact margins and its response on a
// logarithmic grid of `grid_lines` lines.
std::string truth_json(const Scenario& scenario, const Synthesis& synthesis, std::size_t grid_lines = 400);

// The summary of a truth file written by truth_json. Throws InputError.
MarginSummary read_truth_summary(const std::string& path);

}  // namespace loopaudit
