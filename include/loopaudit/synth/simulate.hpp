// Discrete-time simulation of a loop under series injection, and the exact
// response of the discrete system that was simulated.
//
// Each stage is discretised at the sample rate (zero-order hold or bilinear),
// the loop is L(z) = z^-delay prod H_i(z), and per sample
//   x = y + z,   y = -L x + d,
// with the injection z, the disturbance d, and sensor noise added to the
// recorded x and y only.
#pragma once

#include <complex>
#include <memory>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/record/record.hpp"
#include "loopaudit/synth/scenario.hpp"

namespace loopaudit {

// L(e^{j 2 pi f / fs}) of the simulated loop.
class DiscreteLoop {
 public:
  explicit DiscreteLoop(const Scenario& scenario);
  std::complex<double> operator()(double frequency_hz) const;
  double sample_rate_hz() const { return sample_rate_hz_; }

 private:
  struct Impl;
  std::shared_ptr<const Impl> impl_;
  double sample_rate_hz_;
};

struct Synthesis {
  Record record;         // channels z, x, y
  double truth_low_hz;   // band of the truth margins
  double truth_high_hz;
  Margins truth;         // exact margins of the discrete loop
};

Synthesis synthesize(const Scenario& scenario);

}  // namespace loopaudit
