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
  // Margins from the band the injection excites (as the detector finds it)
  // unless margins.band_hz is given (--band).
  MarginOptions margins;
  // Below this many effective averages (Welch segments corrected for
  // overlap, or whole periods) the analysis refuses: the lines' uncertainty
  // comes from their scatter over the averages, and with few the coherence is
  // biased high and the intervals too narrow. Measured on the servo demo
  // over 20 seeds: at 4.8 averages the crossover's (value - truth)/sigma has
  // an rms of 1.7 and the gain margin a bias of -1 sigma; at 7.6 the rms is
  // 1.2 and at 17 0.5 (scripts/averages-scatter). Below 12 the spectral stage warns
  // (spectral.few-averages).
  double min_effective_averages = 6.0;
};

}  // namespace loopaudit
