// Data-quality screening of a recording as it streams past: findings that
// warn of a wrong margin before it is computed.
//
//   ingest.clipping      runs of three or more equal samples at a channel's
//                        extreme value (ADC saturation, a flat top)
//   ingest.drift         the channel's least-squares linear trend moves it,
//                        over the record, by more than the injection's RMS
//                        (it leaks into the lowest lines)
//   ingest.dc-offset     the channel's mean is over 100 times the injection's
//                        RMS (the injection uses little of the ADC's range)
// NaN or infinite samples stop the run (InputError naming channel and sample).
#pragma once

#include <cmath>
#include <cstddef>
#include <span>
#include <string>
#include <vector>

#include "loopaudit/record/diagnostic.hpp"

namespace loopaudit {

class QualityMonitor {
 public:
  // `names` label the channels pushed, in order; `injection` is the index of
  // the injection among them.
  QualityMonitor(std::vector<std::string> names, std::size_t injection, std::string origin);

  // The next samples of every channel (equal lengths), starting at `first_sample`.
  void push(std::span<const std::span<const double>> channels, std::size_t first_sample);

  Diagnostics findings() const;

  // The largest magnitude channel `index` has reached (0 before any sample).
  double peak_magnitude(std::size_t index) const;

 private:
  struct Channel {
    double max = -INFINITY;
    double min = INFINITY;
    std::size_t at_max_in_runs = 0;  // samples in runs of >= 3 at the current max
    std::size_t at_min_in_runs = 0;
    std::size_t first_run_sample = 0;
    double run_value = NAN;  // the run of equal samples that ends the last block
    std::size_t run_length = 0;
    double sum = 0.0;
    double sum_squares = 0.0;
    double sum_index_weighted = 0.0;  // sum of n x[n]: with the sums, the least-squares trend
  };
  void scan(Channel& c, std::span<const double> samples, std::size_t first_sample, const std::string& name) const;
  Diagnostics channel_findings(std::size_t index, double injection_rms) const;

  std::vector<std::string> names_;
  std::size_t injection_;
  std::string origin_;
  std::vector<Channel> channels_;
  std::size_t samples_ = 0;
  mutable std::vector<double> ramp_;  // 0, 1, 2, ... for the index-weighted sums
};

}  // namespace loopaudit
