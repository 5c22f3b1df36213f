// The loopaudit verbs. Each adds its subcommand to the app; the work runs in
// the subcommand's callback and throws loopaudit::Error subclasses, which
// main() turns into exit codes.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

namespace loopaudit::cli {

// Documented in README.md, "Exit codes".
enum ExitCode : int {
  kOk = 0,
  kInternal = 1,
  kUsage = 2,
  kInput = 3,
  kConfig = 4,
  kNoResult = 5,
  kOutput = 6,
};

// `command_line` is recorded in the report.
void add_analyze(CLI::App& app, const std::string& command_line);
void add_table(CLI::App& app, const std::string& command_line);
void add_inspect(CLI::App& app);
void add_synth(CLI::App& app);

}  // namespace loopaudit::cli
