#include "loopaudit/record/margins.hpp"

namespace loopaudit {

const char* direction_name(GainDirection direction) { return name_of(kDirectionNames, direction); }

const char* verdict_name(StabilityVerdict verdict) { return name_of(kVerdictNames, verdict); }

}  // namespace loopaudit
