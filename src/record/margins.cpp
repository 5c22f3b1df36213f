#include "loopaudit/record/margins.hpp"

#include <array>
#include <string_view>

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

const char* direction_name(GainDirection direction) { return name_of(kDirectionNames, direction); }

const char* verdict_name(StabilityVerdict verdict) { return name_of(kVerdictNames, verdict); }

const char* level_name(CrossingLevel level) { return name_of(kLevelNames, level); }

bool PossibleMargin::is_phase() const { return std::string_view(key) == "phase_margin_deg"; }

const char* PossibleMargin::what() const {
  if (is_phase()) return "a phase margin";
  return std::string_view(key) == "gain_reduction_margin_db" ? "a gain reduction margin" : "a gain increase margin";
}

}  // namespace loopaudit
