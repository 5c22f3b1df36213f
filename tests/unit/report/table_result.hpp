// An analysis result built from lines as `loopaudit table` builds it (L given
// directly), for the report's tests.
#pragma once

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/pipeline/result.hpp"

namespace loopaudit::table_result {

inline AnalysisResult result_of(const Response& lines) {
  AnalysisResult r;
  r.origin = "table.csv";
  r.options.convention = Convention::kDirect;
  r.loop = {lines, Convention::kDirect};
  r.margins = find_margins(lines);
  r.findings = r.margins.findings;
  return r;
}

}  // namespace loopaudit::table_result
