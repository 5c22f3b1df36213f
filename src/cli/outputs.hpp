// The files an analysis writes: JSON, response lines, the HTML report and
// the SVG plots, each where the user asked, or all into an output folder.
#pragma once

#include <CLI/CLI.hpp>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/pipeline/result.hpp"

namespace loopaudit::cli {

struct OutputRequest {
  std::string json_path;
  std::string csv_path;
  std::string report_path;
  std::string plots_dir;
  std::string out_dir;  // every output not named above, as STEM.json, STEM.lines.csv, STEM.report.html, STEM-plots/
};

// The output path that means standard output.
inline constexpr const char* kStandardOutput = "-";

// Adds --json, --csv, --report, --plots and --out-dir.
void add_output_options(CLI::App* command, OutputRequest& request);

// `input` names the file analysed (for the stem and its date), `settings`
// the run settings file or "", `command_line` the command that ran, for the
// report's record of how it was made. Returns where each output went.
OutputRequest write_outputs(const AnalysisResult& result, const OutputRequest& request, const std::string& input,
                   const std::string& settings, const std::string& command_line,
                   const std::optional<MarginSummary>& truth = std::nullopt);

// True when one of --json, --csv, --report is "-" (standard output); the
// table then goes to standard error. Throws CLI::ValidationError for two
// outputs to "-", or "-" given to --plots or --out-dir.
bool check_standard_output(const OutputRequest& request);

// Throws CLI::ValidationError, before anything is read or written, when an
// output would land on an input (the same file by device and inode, or by
// spelling when it does not exist yet) or on another output; both are named.
// `inputs` holds the file analysed first, then any others the run reads.
void check_output_paths(const OutputRequest& request, const std::vector<std::string>& inputs);

// Writes the whole text or nothing (see write_atomically); "-": to standard output.
void write_text_file(const std::string& path, const std::string& text);

// The command line as one line of text, starting with the tool's name.
std::string command_line_text(int argc, char** argv);

}  // namespace loopaudit::cli
