// A result's summary beside reference values: a simulated recording's truth
// today, a model's exact margins as the model stage grows. Per quantity, the
// difference and whether the measurement's interval holds the reference.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "loopaudit/record/margins.hpp"

namespace loopaudit {

struct QuantityComparison {
  std::string key;  // as in summary_fields(), e.g. "phase_margin_deg"
  std::optional<Estimate> measured;
  std::optional<double> reference;
  std::optional<double> difference;  // measured - reference, when both are known
  std::optional<bool> inside;        // the interval holds the reference; unset without both
};

// One entry per summary_fields() quantity, in that order.
std::vector<QuantityComparison> compare_summary(const MarginSummary& measured, const MarginSummary& reference);

// The entry for `key`; throws std::out_of_range for a key not in the table.
const QuantityComparison& comparison_of(const std::vector<QuantityComparison>& rows, const std::string& key);

}  // namespace loopaudit
