// Frequency response of y against x from averaged spectra.
//
// Reference method: Y/X = S_ry / S_rx with r a channel correlated with the
// injection. Noise inside the loop, uncorrelated with r, does not bias it.
// Two-channel method: H1 = S_xy / S_xx, biased in a closed loop because the
// loop feeds noise back into x; offered for open-loop elements.
//
// Per-line uncertainty (first order, complex-Gaussian errors): with
// e = y - H x the part of y not explained through r,
//   var(H)/|H|^2 = S_rr S_ee / (n_d |S_rx|^2 |H|^2),
// split equally between ln|H| and arg H. With r = x it reduces to
// J. S. Bendat, A. G. Piersol, "Random Data", 4th ed., Wiley 2010, sec. 9.2.3:
// eps = sqrt(1 - gamma^2) / (|gamma| sqrt(2 n_d)).
#pragma once

#include <complex>
#include <string>
#include <utility>
#include <vector>

#include "loopaudit/names.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/response.hpp"
#include "loopaudit/spectral/welch.hpp"

namespace loopaudit {

enum class Estimator { kReference, kTwoChannel };
inline constexpr NameTable<Estimator, 2> kEstimatorNames{
    {{Estimator::kReference, "reference"}, {Estimator::kTwoChannel, "two-channel"}}};
static_assert(one_to_one(kEstimatorNames));
const char* estimator_name(Estimator estimator);
Estimator estimator_from_name(const std::string& name);  // throws ConfigError

// Roles of the channels of the CrossSpectra handed to estimate_response.
inline constexpr std::size_t kReferenceChannel = 0;
inline constexpr std::size_t kInputChannel = 1;   // x
inline constexpr std::size_t kOutputChannel = 2;  // y

struct ResponseOptions {
  Estimator estimator = Estimator::kReference;
  // Lines whose reference power lies more than this far below its peak carry
  // no injection and are not reported.
  double injection_floor_db = 40.0;

  // Throws ConfigError naming the setting that is out of range (called by
  // estimate_response).
  void validate() const;
};


// The pairs of channels whose cross-spectra make the ratio, denominator then
// numerator: (r, x) and (r, y) for the reference method, (x, x) and (x, y)
// for the two-channel one. The Welch accumulator keeps these per group of
// segments (WelchOptions::grouped_pairs), so that estimate_response can give
// each line its jackknife replicates (Response::replicates).
std::vector<std::pair<std::size_t, std::size_t>> ratio_pairs(Estimator estimator);

// Throws NumericalError when no line carries injection power.
Response estimate_response(const CrossSpectra& spectra, const ResponseOptions& options, Diagnostics& findings);

// Bendat and Piersol's normalised random error of |H| (also the standard
// deviation of the phase in radians) for coherence gamma^2 and n_d averages.
double bendat_piersol_random_error(double coherence, double averages);

}  // namespace loopaudit
