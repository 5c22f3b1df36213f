// The pipeline's refusals: data or a stream that cannot give a result the
// tool would stand behind, each refused with what to change.
#pragma once

#include <cstddef>
#include <string>

#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/ingest/quality.hpp"
#include "loopaudit/pipeline/options.hpp"
#include "loopaudit/record/record.hpp"

namespace loopaudit::detail {

// A stream that cannot be opened again (a pipe): refused, before the pass
// that would open it again, with what it is and why it would be read twice.
void refuse_second_pass(const SampleSource& source, ExcitationKind kind);

// A sample rate the file gives (stated, or from its time column) outside
// kMinSampleRateHz to kMaxSampleRateHz: InputError. Call at the stream's end.
void refuse_implausible_rate(const SampleSource& source);

// A channel whose peak is outside 1e-100 to 1e100, where its spectra would
// leave double precision's range: NumericalError naming it and a --scale.
void refuse_out_of_scale(const QualityMonitor& quality, const ChannelRoles& roles, const std::string& origin);

// A response averaged too few times for its uncertainty to mean anything:
// NumericalError saying what to change.
void refuse_weak(const Response& measured, const AnalysisOptions& options, std::size_t sample_count,
                 const std::string& origin);

}  // namespace loopaudit::detail
