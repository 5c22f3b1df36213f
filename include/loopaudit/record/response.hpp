// Frequency responses as the stages hand them on: lines of a measured or
// tabulated ratio, and the loop L derived from it. Plain values; the
// estimators that fill them live in spectral/, the conversion in loop/.
#pragma once

#include <complex>
#include <cstddef>
#include <vector>

namespace loopaudit {

struct Response {
  std::vector<double> frequency_hz;
  std::vector<std::complex<double>> value;
  // Magnitude-squared coherence; for the reference method the smaller of
  // gamma^2(r, x) and gamma^2(r, y). Empty when unknown (a table).
  std::vector<double> coherence;
  // Standard deviation of ln|H| (nepers) and of arg H (rad), equal to first
  // order; 0 where unknown (a table without uncertainty).
  std::vector<double> relative_sigma;
  double effective_averages = 0.0;

  std::size_t size() const { return frequency_hz.size(); }
};

// How L follows from the measured ratio H; L is defined so that the closed
// loop's characteristic equation is 1 + L = 0.
enum class Convention {
  kSeriesInjection,  // H = Y/X across a series injection point, x = y + z: L = -H
  kDirect,           // H already is L (an open loop measured or modelled as a whole)
  kClosedLoop,       // H = T, reference to output with unity feedback: L = T / (1 - T)
};

struct LoopResponse {
  Response lines;  // values are L; relative_sigma carried through the conversion
  Convention convention = Convention::kSeriesInjection;
};

// A stretch of a stepped sine at one frequency, in samples from the start.
struct Dwell {
  std::size_t first_sample = 0;
  std::size_t end_sample = 0;  // one past the last
  double frequency_hz = 0.0;   // from the zero crossings; refined by the fits later
};

}  // namespace loopaudit
