// The human-readable summary printed on the terminal.
#pragma once

#include <cstddef>
#include <optional>
#include <ostream>
#include <string>
#include <utility>
#include <vector>

#include "loopaudit/pipeline/result.hpp"

namespace loopaudit {

// Long lists are shortened on the terminal: the first kListedCrossovers gain
// and phase crossovers (and those the summary takes), the first
// kListedFindings findings (errors first). A line says how many more there
// are and where the whole list is.
inline constexpr std::size_t kListedCrossovers = 8;
inline constexpr std::size_t kListedFindings = 10;

// Where the lists shortened on the terminal can be read whole.
struct FullLists {
  std::string json_path;  // the JSON written with the crossovers; "" when none (the text names --json FILE)
  bool findings = true;   // it lists the findings too (under "diagnostics"); else they are never shortened
};

// The margins table, the method line and the findings. With `truth`, a
// second column shows the truth of a synthetic recording. `value_heading`
// names the column of results ("measured", or "exact" for a model).
void write_text_report(std::ostream& out, const AnalysisResult& result,
                       const std::optional<MarginSummary>& truth = std::nullopt,
                       const std::string& value_heading = "measured", const FullLists& lists = {});

// How the result was obtained, as (label, text) lines: recording, excitation,
// estimate, loop. Shared by the terminal summary and the HTML report.
std::vector<std::pair<std::string, std::string>> describe_method(const AnalysisResult& result);

// What `inspect` prints: the recording, the excitation found, the findings.
void write_inspection(std::ostream& out, const Inspection& inspection);

}  // namespace loopaudit
