// Machine-readable results. Keys are documented in README.md ("JSON
// results"); `schema_version` changes whenever a key changes meaning.
#pragma once

#include <optional>
#include <string>

#include "loopaudit/pipeline/result.hpp"

namespace loopaudit {

inline constexpr int kSchemaVersion = 1;

std::string analysis_json(const AnalysisResult& result);

}  // namespace loopaudit
