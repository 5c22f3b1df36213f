// Response from a periodic injection (multisine, PRBS, periodic chirp): the
// spectra of whole periods averaged, line by line, with the variance of
// each line from the scatter across periods.
//
// With P periods of spectra Z_p, X_p, Y_p (rectangular window, one period a
// transform, so no leakage at the period's lines):
//   H = mean(Y) / mean(X) at the lines the injection excites,
//   var(mean(U)) = sum |U_p - mean(U)|^2 / (P (P - 1)),
//   var(H)/|H|^2 = var(mean Y)/|mean Y|^2 + var(mean X)/|mean X|^2
//                  - 2 Re(cov(mean Y, mean X) / (mean Y conj(mean X)))   (first order).
// Lines the injection does not excite hold noise and distortion: their level
// is reported beside the response.
#pragma once

#include <complex>
#include <memory>
#include <span>
#include <vector>

#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/spectral/response.hpp"

namespace loopaudit {

struct PeriodicOptions {
  std::size_t period_samples = 0;  // at least 16
  std::size_t skip_periods = 1;    // transient periods dropped at the start
  double injection_floor_db = 40.0;

  // Throws ConfigError naming the setting that is out of range (called by
  // the accumulator's constructor).
  void validate() const;
};

class PeriodicAccumulator {
 public:
  // Channels in the order of the spectral stage: injection, x, y.
  explicit PeriodicAccumulator(const PeriodicOptions& options);
  ~PeriodicAccumulator();
  PeriodicAccumulator(PeriodicAccumulator&&) noexcept;
  PeriodicAccumulator& operator=(PeriodicAccumulator&&) noexcept;

  void push(std::span<const std::span<const double>> channels);
  std::size_t periods_used() const;

  // Throws NumericalError with fewer than two periods after the skipped ones.
  Response finish(double sample_rate_hz, Diagnostics& findings);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace loopaudit
