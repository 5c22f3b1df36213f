#include "loopaudit/record/margins.hpp"

#include <array>

namespace loopaudit {

std::span<const SummaryField> summary_fields() {
  using S = MarginSummary;
  static constexpr std::array<SummaryField, 9> kFields{{
      {"gain_crossover_hz", &S::gain_crossover_hz, true},
      {"phase_margin_deg", &S::phase_margin_deg, true},
      {"phase_crossover_hz", &S::phase_crossover_hz, true},
      {"gain_margin_db", &S::gain_margin_db, true},
      {"gain_increase_margin_db", &S::gain_increase_margin_db, false},
      {"gain_reduction_margin_db", &S::gain_reduction_margin_db, false},
      {"delay_margin_s", &S::delay_margin_s, true},
      {"modulus_margin", &S::modulus_margin, true},
      {"peak_sensitivity_db", &S::peak_sensitivity_db, true},
  }};
  return kFields;
}

const char* direction_name(GainDirection direction) {
  return direction == GainDirection::kIncrease ? "increase" : "decrease";
}

const char* verdict_name(StabilityVerdict verdict) {
  switch (verdict) {
    case StabilityVerdict::kStable: return "stable";
    case StabilityVerdict::kUnstable: return "unstable";
    case StabilityVerdict::kUndecided: return "undecided";
  }
  return "undecided";
}

}  // namespace loopaudit
