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

// The pieces of both, for the jackknife to repeat on replicates of the
// lines: the extreme line, and the value placed near it as the functions
// above place it.
std::size_t modulus_line(const LineTable& table);
std::size_t disk_line(const LineTable& table);
double modulus_at(const LineTable& table, std::size_t line, const MarginOptions& options);
double disk_alpha_at(const LineTable& table, std::size_t line, const MarginOptions& options);

// Peak sensitivity from the modulus margin and its interval.
void set_peak_sensitivity(ModulusPoint& point);
// The disk margin's interval from an interval of alpha, with the gain and
// phase ranges it guarantees; nothing when alpha's low end is not positive.
void set_disk_interval(DiskMargin& disk, Interval alpha);

}  // namespace loopaudit::detail
