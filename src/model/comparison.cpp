#include "loopaudit/model/comparison.hpp"

#include <algorithm>
#include <stdexcept>

namespace loopaudit {

std::vector<QuantityComparison> compare_summary(const MarginSummary& measured, const MarginSummary& reference) {
  std::vector<QuantityComparison> rows;
  for (const SummaryField& field : summary_fields()) {
    QuantityComparison row{field.key, measured.*field.member, std::nullopt, std::nullopt, std::nullopt};
    if (const auto& r = reference.*field.member) row.reference = r->value;
    if (row.measured && row.reference) {
      row.difference = row.measured->value - *row.reference;
      if (const auto& ci = row.measured->interval) row.inside = ci->low <= *row.reference && *row.reference <= ci->high;
    }
    rows.push_back(std::move(row));
  }
  return rows;
}

const QuantityComparison& comparison_of(const std::vector<QuantityComparison>& rows, const std::string& key) {
  const auto it = std::find_if(rows.begin(), rows.end(), [&](const auto& r) { return r.key == key; });
  if (it == rows.end()) throw std::out_of_range("no summary quantity named " + key);
  return *it;
}

}  // namespace loopaudit
