// An interval as text, each end in the caller's own format: "44.0 to 48.2";
// "" when there is none. Shared by the terminal table and the HTML report.
#pragma once

#include <optional>
#include <string>

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

}  // namespace loopaudit::detail
