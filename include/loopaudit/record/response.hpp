// Frequency responses as the stages hand them on: lines of a measured or
// tabulated ratio, and the loop L derived from it. Plain values; the
// estimators that fill them live in spectral/, the conversion in loop/.
#pragma once

#include <complex>
#include <cstddef>
#include <vector>

namespace loopaudit {

// How a response was estimated, carried with its lines so that every later
// stage and the report can say it without working it out again.
enum class ResponseMethodKind {
  kTable,        // read from a frequency-response table (or a model)
  kWelch,        // averaged cross-spectra of windowed segments
  kPeriodic,     // spectra of whole periods averaged
  kSteppedSine,  // a sine fit per dwell, one line each
};

struct ResponseMethod {
  ResponseMethodKind kind = ResponseMethodKind::kTable;
  // What was averaged: Welch segments, whole periods, or dwells fitted.
  std::size_t averages = 0;
  // Independent averages behind each line: Welch's overlap-corrected count,
  // the number of periods, 1 for a dwell.
  double effective_averages = 0.0;
};

struct Response {
  std::vector<double> frequency_hz;
  std::vector<std::complex<double>> value;
  // Magnitude-squared coherence; for the reference method the smaller of
  // gamma^2(r, x) and gamma^2(r, y). Empty when unknown (a table).
  // A stepped sine's coherence is the one its fit's SNR implies,
  // 1 / (1 + 1/SNR).
  std::vector<double> coherence;
  // Standard deviation of ln|H| (nepers) and of arg H (rad), equal to first
  // order; 0 where unknown (a table without uncertainty).
  std::vector<double> relative_sigma;
  // Stepped sine: each dwell's fitted signal over its residual, the worse of
  // x and y, in dB. Empty for the other methods.
  std::vector<double> snr_db;
  ResponseMethod method;

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
