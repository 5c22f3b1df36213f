// Segment-averaged (Welch) auto- and cross-spectra, computed as samples stream
// in: memory stays at a few segment lengths per channel whatever the length
// of the recording.
//
// P. D. Welch, "The use of fast Fourier transform for the estimation of power
// spectra", IEEE Trans. Audio Electroacoust. AU-15(2), 1967. Scaling and
// conventions match scipy.signal.csd/welch with detrend='constant' and
// scaling='density': S_ij = 2 mean(conj(X_i) X_j) / (fs sum w^2) for the
// lines between DC and Nyquist.
#pragma once

#include <complex>
#include <cstddef>
#include <memory>
#include <span>
#include <string>
#include <utility>
#include <vector>

#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/fft/window.hpp"

namespace loopaudit {

struct WelchOptions {
  WindowKind window = WindowKind::kHann;
  std::size_t segment_length = 4096;  // samples per segment (FFT length)
  double overlap = 0.5;               // fraction of a segment shared with the next, 0 <= overlap <= 0.9
  bool remove_segment_mean = true;    // subtract each segment's mean before windowing
  // Channel pairs (i <= j) whose sums are also kept for contiguous groups of
  // segments, for the delete-one-group jackknife (CrossSpectra::groups);
  // empty for none.
  std::vector<std::pair<std::size_t, std::size_t>> grouped_pairs;

  // Throws ConfigError naming the setting that is out of range (called by
  // the accumulator's constructor).
  void validate() const;
  std::size_t step() const;  // samples between segment starts
};

using ComplexLines = std::vector<std::complex<double>>;

// One-sided cross-spectral densities of every channel pair, at the lines
// k * sample_rate_hz / segment_length for k = 0 .. segment_length / 2.
struct CrossSpectra {
  std::size_t channel_count = 0;
  std::size_t segment_length = 0;
  std::size_t segments = 0;
  std::size_t step = 0;  // samples between segment starts
  // Number of independent averages with the same variance as the overlapped
  // ones (Welch 1967, variance of the overlapped estimate).
  double effective_averages = 0.0;
  double sample_rate_hz = 0.0;
  std::vector<ComplexLines> pairs;  // pair (i, j), i <= j, in row order
  // The grouped pairs (WelchOptions::grouped_pairs) summed over contiguous
  // groups of segments, [group][grouped pair], scaled as `pairs` is: `pairs`
  // minus one group is the spectrum without that group's segments (up to a
  // common factor, which cancels in a ratio). Empty when no pair was grouped
  // or the groups did not fit their memory budget (`no_groups_reason` says).
  std::vector<std::vector<ComplexLines>> groups;
  std::vector<std::pair<std::size_t, std::size_t>> grouped_pairs;
  std::size_t segments_per_group = 0;  // the last group may hold up to half as many more
  // Overlapping segments correlate neighbouring groups, which the
  // delete-one-group jackknife takes for independent: the variance of the
  // whole average over that of independent groups, (K / n_eff(K)) / (m /
  // n_eff(m)) for K segments in groups of m (Welch 1967), by which the
  // jackknife's variance is multiplied (1.054 for Hann at 50 % in groups of one).
  double group_variance_factor = 1.0;
  const char* no_groups_reason = "";

  // S_ij = E[conj(X_i) X_j]; requires i <= j.
  const ComplexLines& at(std::size_t i, std::size_t j) const;
  // Group g's sum of pair (i, j), i <= j; null when that pair was not grouped.
  const ComplexLines* group_at(std::size_t g, std::size_t i, std::size_t j) const;
  double frequency_hz(std::size_t line) const;
  std::size_t line_count() const { return segment_length / 2 + 1; }
};

class WelchAccumulator {
 public:
  WelchAccumulator(std::size_t channel_count, const WelchOptions& options);
  ~WelchAccumulator();
  WelchAccumulator(WelchAccumulator&&) noexcept;
  WelchAccumulator& operator=(WelchAccumulator&&) noexcept;
  WelchAccumulator(const WelchAccumulator&) = delete;
  WelchAccumulator& operator=(const WelchAccumulator&) = delete;

  // Appends the next samples of every channel (equal lengths) and starts the
  // transforms of every segment that is now complete, on worker threads (one
  // per core, at most two); it returns without waiting for them.
  void push(std::span<const std::span<const double>> channels);

  std::size_t samples_seen() const;
  std::size_t segments_done();  // waits for the segments in progress

  // The averaged spectra, scaled to densities at the given sample rate.
  // Throws NumericalError when not one whole segment was seen.
  CrossSpectra finish(double sample_rate_hz);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Findings about the averaged spectra, channels named by `names`:
//   spectral.few-averages  fewer than 8 effective averages: the resolution
//                          asked for costs the estimates their reliability
//   spectral.near-nyquist  a loop channel (1, 2, ...) holds over 1 % of its
//                          power in the top tenth of the band, incoherent
//                          with channel 0 (the injection): a hint of aliasing
Diagnostics spectral_findings(const CrossSpectra& spectra, const std::vector<std::string>& names);

// The longest power-of-two segment, at most `longest` and at least 64, that
// cuts `samples` into at least `segments` segments at this overlap: what the
// messages about too few averages suggest (kSuggestedSegments).
inline constexpr double kSuggestedSegments = 16.0;
std::size_t suggested_segment(std::size_t samples, double overlap, std::size_t longest,
                              double segments = kSuggestedSegments);
// How many whole segments of `length` fit `samples` at this overlap.
double segments_of(std::size_t samples, double overlap, std::size_t length);

// Effective number of independent averages for `segments` segments of
// `window` started `step` samples apart (Welch 1967).
double effective_averages(const std::vector<double>& window, std::size_t step, std::size_t segments);

}  // namespace loopaudit
