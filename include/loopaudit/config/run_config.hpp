// Run settings from a TOML file: how to read the recording and how to
// analyse it. Keys are documented in README.md ("Run settings").
#pragma once

#include <string>

#include "loopaudit/ingest/recording.hpp"
#include "loopaudit/pipeline/options.hpp"

namespace loopaudit {

struct RunSettings {
  RecordingOptions recording;
  AnalysisOptions analysis;
};

// Reads `path` over `defaults`: keys present replace the defaults. Throws
// InputError for an unreadable file or a syntax error (with line and column),
// ConfigError for an unknown key or a bad value (naming table and key).
RunSettings load_run_settings(const std::string& path, RunSettings defaults = {});

}  // namespace loopaudit
