// The whole analysis of one recording: ingest -> spectral -> loop -> analysis.
// A pure function of the source and the options; it never prints.
#pragma once

#include <functional>
#include <memory>
#include <optional>
#include <string>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/record/record.hpp"
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

// Facts about the recording and the averaging, for the outputs.
struct RecordFacts {
  double sample_rate_hz = 0.0;
  std::size_t sample_count = 0;
  std::vector<std::string> channel_names;
  ChannelRoles roles;
  std::size_t segments = 0;
  double effective_averages = 0.0;
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

// Called with the number of samples consumed so far.
using ProgressFunction = std::function<void(std::size_t samples)>;

// Throws InputError for missing channels or a record shorter than one
// segment, ConfigError for bad options, NumericalError when no line is usable.
AnalysisResult analyze_recording(SampleSource& source, const AnalysisOptions& options,
                                 const ProgressFunction& progress = {});

// A recording that can be read more than once (detection, then analysis).
using SourceOpener = std::function<std::unique_ptr<SampleSource>()>;

// The full analysis: finds the excitation from the injection (one pass),
// unless options.excitation says it, then runs its estimator (a second pass):
// broadband and chirp by Welch averaging, periodic by averaging whole
// periods, stepped by sine fits per dwell.
AnalysisResult analyze(const SourceOpener& open, const AnalysisOptions& options, const ProgressFunction& progress = {});

// What a recording holds, without the analysis: the excitation and the
// data-quality findings.
struct Inspection {
  std::string origin;
  double sample_rate_hz = 0.0;
  std::size_t sample_count = 0;
  std::vector<std::string> channel_names;
  ExcitationPlan excitation;
  Diagnostics findings;
};
Inspection inspect_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress = {});

// Margins of a response that is already in the frequency domain.
AnalysisResult analyze_response(const std::string& origin, const Response& measured, Convention convention,
                                const MarginOptions& options = {});

}  // namespace loopaudit
