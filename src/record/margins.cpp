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

namespace {

// The possible margins (PossibleMargin::key) that stand for a summary key
// when it is unset: a crossover frequency and the delay margin come with the
// phase margin read there, the smallest gain margin and its crossover with
// either directed one.
bool named_by_possible(std::string_view key, std::string_view possible) {
  if (key == "gain_crossover_hz" || key == "delay_margin_s") return possible == "phase_margin_deg";
  if (key == "gain_margin_db" || key == "phase_crossover_hz") {
    return possible == "gain_increase_margin_db" || possible == "gain_reduction_margin_db";
  }
  return key == possible;
}

}  // namespace

SummaryStatus MarginSummary::status(std::string_view key) const {
  for (const SummaryField& field : summary_fields()) {
    if (key != field.key) continue;
    if (this->*field.member) return SummaryStatus::kMeasured;
    for (const PossibleMargin& p : possible) {
      if (named_by_possible(key, p.key)) return SummaryStatus::kUnresolved;
    }
    return SummaryStatus::kNoneInBand;
  }
  return SummaryStatus::kNoneInBand;
}

const char* status_name(SummaryStatus status) { return name_of(kSummaryStatusNames, status); }

const char* direction_name(GainDirection direction) { return name_of(kDirectionNames, direction); }
const char* interval_method_name(IntervalMethod method) { return name_of(kIntervalMethodNames, method); }

const char* verdict_name(StabilityVerdict verdict) { return name_of(kVerdictNames, verdict); }

const char* level_name(CrossingLevel level) { return name_of(kLevelNames, level); }

bool PossibleMargin::is_phase() const { return std::string_view(key) == "phase_margin_deg"; }

const char* PossibleMargin::what() const {
  if (is_phase()) return "a phase margin";
  return std::string_view(key) == "gain_reduction_margin_db" ? "a gain reduction margin" : "a gain increase margin";
}

}  // namespace loopaudit
