// The modulus and disk margins of measured or tabulated lines: the peak of
// a function of L, placed by local fits of Re L and Im L around the extreme
// line, with its interval.
#pragma once

#include "analysis/crossings.hpp"

namespace loopaudit::detail {

// min |1 + L| over the band.
ModulusPoint modulus_point(const LineTable& table, const MarginOptions& options);

// The largest |S - T| = |(1 - L)/(1 + L)| over the band.
DiskMargin disk_point(const LineTable& table, const MarginOptions& options);

}  // namespace loopaudit::detail
