// Response from a stepped sine: one line per dwell, from IEEE 1057 sine fits.
//
// Each dwell drops its settling part (settle_cycles of its frequency, or
// settle_s, whichever is longer), refines the frequency with a four-parameter
// fit of the injection, then fits x and y with three parameters at that
// frequency: H = Y/X from the phasors. The residuals give each line's
// uncertainty, var(H)/|H|^2 = 4 s_x^2/(N |X|^2) + 4 s_y^2/(N |Y|^2) (a phasor
// fitted to N samples with white residual s has variance 4 s^2 / N), and the
// 2nd to 5th harmonics say whether the loop stayed linear.
#pragma once

#include <memory>
#include <span>
#include <vector>

#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/spectral/response.hpp"

namespace loopaudit {

struct SteppedOptions {
  std::vector<Dwell> dwells;  // ascending, not overlapping
  double sample_rate_hz = 0.0;
  double settle_cycles = 3.0;
  double settle_s = 0.0;
  double max_harmonic_ratio = 0.05;  // a harmonic above this share of the fundamental is reported

  // Throws ConfigError naming the setting that is out of range (called by
  // the estimator's constructor). The dwells are data, checked where they
  // are found (detector, schedule, marker).
  void validate() const;
};

class SteppedSineEstimator {
 public:
  explicit SteppedSineEstimator(SteppedOptions options);
  ~SteppedSineEstimator();
  SteppedSineEstimator(SteppedSineEstimator&&) noexcept;
  SteppedSineEstimator& operator=(SteppedSineEstimator&&) noexcept;

  // Channels injection, x, y; samples first_sample onwards, in order.
  void push(std::span<const std::span<const double>> channels, std::size_t first_sample);

  // Throws NumericalError when no dwell could be fitted.
  Response finish(Diagnostics& findings);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace loopaudit
