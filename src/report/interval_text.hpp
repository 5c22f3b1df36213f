// An interval as text: "44.0 to 48.2"; "" when there is none. Either each end
// in the caller's own format, or both ends of a Quantity in one unit with the
// digits that tell them (and the values beside them) apart (interval_style in
// format.hpp). Shared by the terminal table and the HTML report.
#pragma once

#include <algorithm>
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

// What stands in for an unset summary value: "none in band", or
// "unresolved" when an unresolved stretch may hold it.
inline const char* absence_text(SummaryStatus status) {
  return status == SummaryStatus::kUnresolved ? "unresolved" : "none in band";
}

// What stands in for an empty list of crossovers of one level: "none in
// band", or where its crossings are unresolved.
inline std::string empty_list_text(const Margins& m, CrossingLevel level) {
  double low_hz = 0.0, high_hz = 0.0;
  bool any = false;
  for (const UnresolvedStretch& u : m.unresolved) {
    if (u.level != level) continue;
    low_hz = any ? std::min(low_hz, u.low_hz) : u.low_hz;
    high_hz = any ? std::max(high_hz, u.high_hz) : u.high_hz;
    any = true;
  }
  if (!any) return "none in band";
  const std::string range = format_frequency_range(low_hz, high_hz);
  return "none resolved: crossings unresolved " +
         std::string(range.find(" to ") != std::string::npos ? "from " : "at ") + range + " (see the findings)";
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
