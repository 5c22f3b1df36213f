// The JSON fields that more than one file writes or reads: the margins and
// the summary (analysis results and truth files), a response's lines, and
// the tool's name. Keys are documented in README.md ("JSON results").
#pragma once

#include <nlohmann/json.hpp>
#include <optional>

#include "loopaudit/record/margins.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit::detail {

using Json = nlohmann::ordered_json;

Json optional_number(const std::optional<double>& value);
Json finite_or_null(double value);
// An interval as {"ci_low", "ci_high"} (an unbounded end as null), or null.
Json interval_json(const std::optional<Interval>& interval);
Json summary_json(const MarginSummary& summary);
// band, confidence, gain_crossovers, phase_crossovers, modulus, disk,
// stability and summary, into `out`.
void put_margins(Json& out, const Margins& margins);
// freq_hz, re, im and, where known, coherence and the sigmas.
Json response_json(const Response& response);
Json tool_json();

}  // namespace loopaudit::detail
