// Data-quality screening of a recording as it streams past: findings that
// warn of a wrong margin before it is computed.
//
//   ingest.clipping      samples pile up at a channel's extreme values (or
//                        within one quantisation step of them): over 10
//                        times as many per value as at the values just
//                        inside (ADC saturation, a flat top, a clipped
//                        broadband signal whose excursions last a sample or two)
//   ingest.drift         the channel's least-squares linear trend moves it,
//                        over the record, by more than the injection's RMS
//                        (it leaks into the lowest lines)
//   ingest.dc-offset     the channel's mean is over 100 times the injection's
//                        RMS (the injection uses little of the ADC's range)
// NaN or infinite samples stop the run (InputError naming channel and sample).
#pragma once

#include <array>
#include <cmath>
#include <cstddef>
#include <optional>
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
  // The largest distinct values seen and how often each occurred, from its
  // first appearance: the histogram next to one extreme. A value among the
  // final kKept is never dropped (fewer than kKept values exceed it), so
  // their counts are exact.
  class TopValues {
   public:
    static constexpr std::size_t kKept = 8;
    // The samples times `sign` (-1 tallies the smallest values); `block_top`
    // is the largest of them, to skip a block with nothing to add.
    void push(std::span<const double> samples, double sign, double block_top, std::size_t first_sample);
    std::size_t size() const { return size_; }
    double value(std::size_t i) const { return values_[i]; }  // descending
    std::size_t count(std::size_t i) const { return counts_[i]; }
    std::size_t first_sample(std::size_t i) const { return first_[i]; }

   private:
    void add(double x, std::size_t sample);
    std::array<double, kKept> values_{};
    std::array<std::size_t, kKept> counts_{};
    std::array<std::size_t, kKept> first_{};
    std::size_t size_ = 0;
  };
  struct Channel {
    double max = -INFINITY;
    double min = INFINITY;
    TopValues top;     // values next to the maximum
    TopValues bottom;  // next to the minimum, negated
    double sum = 0.0;
    double sum_squares = 0.0;
    double sum_index_weighted = 0.0;  // sum of n x[n]: with the sums, the least-squares trend
  };
  void scan(Channel& c, std::span<const double> samples, std::size_t first_sample, const std::string& name) const;
  Diagnostics channel_findings(std::size_t index, double injection_rms) const;
  std::optional<Diagnostic> clipping_finding(std::size_t index) const;

  std::vector<std::string> names_;
  std::size_t injection_;
  std::string origin_;
  std::vector<Channel> channels_;
  std::size_t samples_ = 0;
  mutable std::vector<double> ramp_;  // 0, 1, 2, ... for the index-weighted sums
};

}  // namespace loopaudit
