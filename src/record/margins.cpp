#include "loopaudit/record/margins.hpp"

namespace loopaudit {

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
