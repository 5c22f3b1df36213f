// What one analysis found, as the report stage renders it: the recording's
// facts, the excitation, the loop response, the margins and every finding.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/pipeline/options.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

// Facts about the recording and the averaging, for the outputs.
struct RecordFacts {
  double sample_rate_hz = 0.0;
  std::size_t sample_count = 0;
  std::vector<std::string> channel_names;
  ChannelRoles roles;
  std::string layout;  // SourceSummary::layout
};

struct AnalysisResult {
  std::string origin;                 // the file analysed
  std::optional<RecordFacts> record;  // absent for a frequency-response table
  std::optional<ExcitationKind> excitation_kind;  // the estimator used, for recordings
  std::optional<ExcitationPlan> excitation;       // what detection found, when it ran
  AnalysisOptions options;
  LoopResponse loop;
  Margins margins;
  Diagnostics findings;  // from every stage, in stage order
};

// What a recording holds, without the analysis: the excitation and the
// data-quality findings.
struct Inspection {
  std::string origin;
  double sample_rate_hz = 0.0;
  std::size_t sample_count = 0;
  std::vector<std::string> channel_names;
  std::string layout;  // SourceSummary::layout
  // False when the roles name channels the file lacks: then neither the
  // excitation nor the screening ran, and a finding says how to name them.
  bool roles_found = true;
  ExcitationPlan excitation;
  Diagnostics findings;
};

}  // namespace loopaudit
