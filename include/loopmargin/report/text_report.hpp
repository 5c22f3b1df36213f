// The human-readable summary printed on the terminal.
#pragma once

#include <optional>
#include <ostream>
#include <string>

#include "loopmargin/pipeline.hpp"

namespace loopmargin {

// Frequencies in engineering units with three significant digits: "4.83 kHz".
std::string format_frequency(double frequency_hz);
// Times in engineering units: "31.2 us".
std::string format_time(double seconds);

// The margins table, the method line and the findings. With `truth`, a
// second column shows the truth of a synthetic recording.
void write_text_report(std::ostream& out, const AnalysisResult& result,
                       const std::optional<MarginSummary>& truth = std::nullopt);

}  // namespace loopmargin
