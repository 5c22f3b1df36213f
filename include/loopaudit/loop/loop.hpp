// From a measured ratio H to the loop transfer function L, defined so that
// the closed loop's characteristic equation is 1 + L = 0.
#pragma once

#include <string_view>

#include "loopaudit/names.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

inline constexpr NameTable<Convention, 3> kConventionNames{{{Convention::kSeriesInjection, "series-injection"},
                                                            {Convention::kDirect, "direct"},
                                                            {Convention::kClosedLoop, "closed-loop"}}};
static_assert(one_to_one(kConventionNames));

// The names of kConventionNames; throws ConfigError for anything else.
Convention convention_from_name(std::string_view name);
const char* convention_name(Convention convention);
const char* convention_formula(Convention convention);  // e.g. "L = -Y/X"

// Converts and checks plausibility: a warning (code loop.sign-suspect) when
// the lowest reliable lines of high gain have a phase about 180 deg from what
// the slope of |L| there predicts for a minimum-phase loop (Bode's
// gain-phase relation), as an inverted sign gives and a negative-feedback
// loop does not.
LoopResponse to_loop(const Response& measured, Convention convention, Diagnostics& findings);

// The inverse of to_loop: the ratio as measured (Y/X, or T), for showing it
// beside L.
Response measured_ratio(const LoopResponse& loop);

}  // namespace loopaudit
