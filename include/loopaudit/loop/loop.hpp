// From a measured ratio H to the loop transfer function L, defined so that
// the closed loop's characteristic equation is 1 + L = 0.
#pragma once

#include <string_view>

#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/spectral/response.hpp"

namespace loopaudit {

enum class Convention {
  kSeriesInjection,  // H = Y/X across a series injection point, x = y + z: L = -H
  kDirect,           // H already is L (an open loop measured or modelled as a whole)
  kClosedLoop,       // H = T, reference to output with unity feedback: L = T / (1 - T)
};

// Accepted names: "series-injection", "direct", "closed-loop".
Convention convention_from_name(std::string_view name);
const char* convention_name(Convention convention);
const char* convention_formula(Convention convention);  // e.g. "L = -Y/X"

struct LoopResponse {
  Response lines;  // values are L; relative_sigma carried through the conversion
  Convention convention = Convention::kSeriesInjection;
};

// Converts and checks plausibility: a warning (code loop.sign-suspect) when
// the low end of the band has high gain with phase in (+30, +179) deg, which
// a negative-feedback loop does not show and an inverted sign does.
LoopResponse to_loop(const Response& measured, Convention convention, Diagnostics& findings);

// The inverse of to_loop: the ratio as measured (Y/X, or T), for showing it
// beside L.
Response measured_ratio(const LoopResponse& loop);

}  // namespace loopaudit
