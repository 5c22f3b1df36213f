// Closed-loop stability from the Nyquist criterion, over the measured band.
//
// With P open-loop poles in the right half plane and N clockwise
// encirclements of -1 by L along the whole Nyquist contour, the closed loop
// has Z = N + P poles in the right half plane. N is counted as the signed
// crossings of the ray (-inf, -1) by L: angle L decreasing through an odd
// multiple of 180 deg while |L| > 1 counts +1. The positive-frequency branch
// counts twice (its mirror image at negative frequency crosses the same way);
// the arc that joins the branches at s = 0 counts once.
//
// What the band cannot show is assumed, and the assumptions are listed with
// the verdict:
//   * above the band |L| stays below 1 (no crossing there), so the top line
//     must have |L| clearly below 1;
//   * below the band L follows n integrators (n from the slope of the lowest
//     lines) and does not cross the negative real axis again, so the bottom
//     line must have |L| clearly above 1.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "loopaudit/record/margins.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

// |L| within this relative distance of 1 where L meets the negative real
// axis is on the margin: the curve passes through -1 as far as the numbers
// can tell, and the verdict is undecided even for exact lines. Double
// arithmetic from a table's columns to |L| and angle L (dB or a ratio and
// degrees to re and im, 20 log10, the unwrapped phase) loses about 1e-15;
// a table printed with 10 significant digits, as frequency-response exports
// with full resolution are, is rounded by up to 5e-10. 1e-9 covers both with
// room and lies far below any margin an engineer would accept. A table
// printed with fewer digits is uncertain to its last digit, which this does
// not see.
inline constexpr double kOnMarginRelative = 1e-9;

struct StabilityOptions {
  int open_loop_rhp_poles = 0;
  // A crossing or band end this many standard deviations from |L| = 1 is
  // clear of it.
  double clear_sigmas = 2.0;
  // Lines whose relative standard deviation (of |L| in nepers, of angle L in
  // rad) exceeds this carry no usable phase and are left out of the count.
  double max_relative_sigma = 0.5;
  // The sign check doubts the convention (loop.sign-suspect): the verdict
  // and its assumptions say so.
  bool sign_doubted = false;

  // Throws ConfigError naming the setting that is out of range (called by
  // assess_stability).
  void validate() const;
};

StabilityAssessment assess_stability(const Response& loop, const StabilityOptions& options = {});

}  // namespace loopaudit
