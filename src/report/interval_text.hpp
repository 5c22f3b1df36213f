// An interval as text: "44.0 to 48.2"; "" when there is none. Either each end
// in the caller's own format, or both ends of a Quantity in one unit with the
// digits that tell them (and the values beside them) apart (interval_style in
// format.hpp). Shared by the terminal table and the HTML report.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "loopaudit/format.hpp"
#include "loopaudit/record/margins.hpp"

namespace loopaudit::detail {

template <typename Format>
std::string interval_text(const std::optional<Interval>& i, Format format) {
  if (!i) return "";
  return format(i->low) + " to " + format(i->high);
}

template <typename Format>
std::string interval_text(const Estimate& e, Format format) {
  return interval_text(e.interval, format);
}

// The style an estimate and the values printed beside it (a truth) share:
// from its interval when it has one, else the quantity's usual look.
inline NumberStyle estimate_style(Quantity quantity, const Estimate& e, std::vector<double> beside = {}) {
  if (!e.interval) return value_style(quantity, e.value);
  beside.push_back(e.value);
  return interval_style(quantity, e.interval->low, e.interval->high, beside);
}

// Both ends in one style chosen from the interval (no value beside it).
inline std::string interval_text(const Estimate& e, Quantity quantity) {
  if (!e.interval) return "";
  return format_interval(estimate_style(quantity, e), e.interval->low, e.interval->high);
}

// The summary quantities the terminal table and the report's truth table
// show, in their order, by summary key, with how each is written.
struct SummaryRow {
  const char* label;
  const char* key;
  Quantity quantity;
};
inline constexpr SummaryRow kSummaryRows[] = {
    {"gain crossover", "gain_crossover_hz", Quantity::kFrequency},
    {"phase margin", "phase_margin_deg", Quantity::kAngle},
    {"delay margin", "delay_margin_s", Quantity::kTime},
    {"phase crossover", "phase_crossover_hz", Quantity::kFrequency},
    {"gain margin", "gain_margin_db", Quantity::kSignedGain},
    {"modulus margin", "modulus_margin", Quantity::kRatio},
    {"peak sensitivity", "peak_sensitivity_db", Quantity::kGain},  // an interval end may be unbounded
};

}  // namespace loopaudit::detail
