// What one analysis is asked to do: which channel is which, what the
// injection is, and the options of every stage it runs.
#pragma once

#include <cstddef>
#include <optional>
#include <string>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/record/response.hpp"
#include "loopaudit/spectral/response.hpp"
#include "loopaudit/spectral/welch.hpp"

namespace loopaudit {

// Which channels play which part. The injection may be computed from the two
// loop signals as z = x - y by naming it kInjectionFromDifference.
struct ChannelRoles {
  std::string injection = "z";
  std::string x = "x";
  std::string y = "y";
};
inline constexpr const char* kInjectionFromDifference = "x-y";

struct AnalysisOptions {
  ChannelRoles roles;
  std::optional<ExcitationKind> excitation;  // unset: found from the injection
  std::size_t period_samples = 0;            // periodic: 0 to find it
  std::size_t skip_periods = 1;              // periodic: transient periods dropped
  double settle_cycles = 3.0;                // stepped: settling dropped at each dwell
  double settle_s = 0.0;
  std::string schedule_path;                 // stepped: dwells from a schedule file ...
  std::string marker_channel;                // ... or from a frequency-marker channel
  WelchOptions welch;
  ResponseOptions response;
  Convention convention = Convention::kSeriesInjection;
  MarginOptions margins;
};

}  // namespace loopaudit
