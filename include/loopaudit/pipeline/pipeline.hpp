// The whole analysis of one recording: ingest -> spectral -> loop -> analysis.
// A pure function of the source and the options; it never prints.
#pragma once

#include <functional>
#include <memory>
#include <optional>
#include <string>

#include "loopaudit/pipeline/options.hpp"
#include "loopaudit/pipeline/result.hpp"
#include "loopaudit/record/record.hpp"

namespace loopaudit {

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
// periods, stepped by sine fits per dwell. Noise and periodic injections are
// analysed in the pass that finds them (from their first 65536 samples on),
// and so is any record of at most 262144 samples (kept in memory); only a
// longer stepped sine or chirp is opened and read again, and when the source
// cannot be (one_pass_kind(): a pipe) that is an InputError saying so.
AnalysisResult analyze(const SourceOpener& open, const AnalysisOptions& options, const ProgressFunction& progress = {});

// What a recording holds, without the analysis: the excitation and the
// data-quality findings.
Inspection inspect_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress = {});

// Margins of a response that is already in the frequency domain.
AnalysisResult analyze_response(const std::string& origin, const Response& measured, Convention convention,
                                const MarginOptions& options = {});

}  // namespace loopaudit
