// Frequency responses as the stages hand them on: lines of a measured or
// tabulated ratio, and the loop L derived from it. Plain values; the
// estimators that fill them live in spectral/, the conversion in loop/.
#pragma once

#include <complex>
#include <cstddef>
#include <span>
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

// How a response's replicates (Response::replicates) were made.
enum class ReplicateKind {
  kNone,         // no replicates: intervals are propagated to first order
  kGroups,       // delete-one-group: the averages (segments, periods) in contiguous
                 // groups, each replicate the response without one group
  kNoiseBeside,  // stepped sine: each line's error drawn from the noise its
                 // dwell holds at frequencies beside its own, as a jackknife
                 // replicate of that line would be
};

struct ResponseMethod {
  ResponseMethodKind kind = ResponseMethodKind::kTable;
  // What was averaged: Welch segments, whole periods, or dwells fitted.
  std::size_t averages = 0;
  // Independent averages behind each line: Welch's overlap-corrected count,
  // the number of periods, 1 for a dwell.
  double effective_averages = 0.0;
  ReplicateKind replicate_kind = ReplicateKind::kNone;
  // kGroups: the averages in each group (the last group may hold up to half
  // as many more); kNoiseBeside: the frequencies beside each dwell's own.
  std::size_t per_replicate = 0;
  // What the replicates' jackknife variance is to be multiplied by: the
  // correlation of overlapping segments across groups (CrossSpectra::
  // group_variance_factor); 1 for independent groups.
  double replicate_variance_factor = 1.0;
  // Why there are no replicates, when an estimator that makes them could not
  // ("" otherwise): the reports say it beside the first-order intervals.
  const char* no_replicates_reason = "";
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
  // Replicates of the values for the jackknife ([replicate][line]; see
  // method.replicate_kind); empty when there are none. Every later stage
  // maps them as it maps the values, so that the margins can be found again
  // on each (record/jackknife.hpp).
  std::vector<std::vector<std::complex<double>>> replicates;

  std::size_t size() const { return frequency_hz.size(); }
};

// The lines `lines` of a response (ascending indices, or any order for a
// reordering), with every per-line vector and the replicates.
Response select_lines(const Response& response, std::span<const std::size_t> lines);

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
