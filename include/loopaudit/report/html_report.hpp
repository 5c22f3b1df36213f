// One self-contained HTML file per analysis, to read at a glance and file
// with the test: the margins with their intervals, the stability verdict,
// the plots (inline SVG), the findings and the cautions. No external fonts,
// scripts or images: it opens offline in any browser and prints on A4.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "loopaudit/pipeline/result.hpp"
#include "loopaudit/report/plots.hpp"

namespace loopaudit {

// What the report says about where the result came from, beyond the result.
struct ReportContext {
  std::string recording_modified;  // the input file's modification time (UTC), "" when unknown
  std::string generated;           // when the report was written (UTC)
  std::string settings_path;       // the run settings file, "" when none was given
  std::string settings_text;       // its contents, hashed and shown in the report
  std::string command_line;        // the command that produced the result
  std::optional<MarginSummary> truth;  // of a simulated recording, shown beside the result
};

std::string html_report(const AnalysisResult& result, const std::vector<Plot>& plots, const ReportContext& context);

}  // namespace loopaudit
