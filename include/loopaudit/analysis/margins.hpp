// Crossover frequencies and stability margins of a loop L (1 + L = 0 is the
// closed loop's characteristic equation).
//
//   gain crossover   |L| = 1;           phase margin PM = 180 deg + angle(L), in (-180, 180]
//   phase crossover  angle(L) = -180 deg (mod 360);  gain margin GM = -20 log10 |L| dB
//   delay margin     PM (rad) / omega at each gain crossover; the summary takes the smallest
//   modulus margin   s_m = min |1 + L|;  peak sensitivity M_s = 1 / s_m
//
// A positive GM says how far the gain may rise before the curve passes through
// -1, a negative GM how far it may fall (conditionally stable loops). Every
// crossing inside the measured band is reported; nothing is extrapolated past
// it: "none in band" is an empty list or an empty optional plus a finding.
#pragma once

#include <complex>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/analysis/nyquist.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/spectral/response.hpp"

namespace loopaudit {

enum class GainDirection { kIncrease, kDecrease };

// Reasons to trust a crossing less than its interval says, as stable names:
//   "low-coherence"  a line of its local fit has coherence at or below 0.5
//   "band-edge"      it lies within two lines of the end of the band
//   "sparse-lines"   its neighbouring lines are more than 10 % apart in frequency
inline constexpr const char* kTrustLowCoherence = "low-coherence";
inline constexpr const char* kTrustBandEdge = "band-edge";
inline constexpr const char* kTrustSparseLines = "sparse-lines";

// A two-sided interval at MarginOptions::confidence, from the lines'
// uncertainty propagated through the local fits (first order). Absent for
// lines without uncertainty (an exact table).
struct Interval {
  double low = 0.0;
  double high = 0.0;
};
const char* direction_name(GainDirection direction);  // "increase" / "decrease"

struct GainCrossover {
  double frequency_hz = 0.0;
  double phase_margin_deg = 0.0;
  double delay_margin_s = 0.0;  // negative when PM is negative
  std::size_t merged_crossings = 1;  // noise crossings merged into this one
  std::optional<Interval> frequency_ci_hz;
  std::optional<Interval> phase_margin_ci_deg;
  std::optional<Interval> delay_margin_ci_s;
  std::vector<std::string> trust_flags;  // see TrustFlag below; empty when nothing calls it into question
};

struct PhaseCrossover {
  double frequency_hz = 0.0;
  double gain_margin_db = 0.0;
  GainDirection limits = GainDirection::kIncrease;  // the gain change this crossing limits
  std::size_t merged_crossings = 1;
  std::optional<Interval> frequency_ci_hz;
  std::optional<Interval> gain_margin_ci_db;
  std::vector<std::string> trust_flags;
};

struct ModulusPoint {
  double frequency_hz = 0.0;
  double modulus_margin = 0.0;        // min |1 + L|
  double peak_sensitivity_db = 0.0;   // 20 log10 (1 / min |1 + L|)
  bool at_band_edge = false;          // the minimum may lie outside the band
  std::optional<Interval> modulus_margin_ci;
  std::optional<Interval> peak_sensitivity_ci_db;
};

// Balanced disk margin (skew 0): alpha = 2 / max |S - T| over the band, with
// S = 1/(1+L), T = L/(1+L), so S - T = (1-L)/(1+L). The loop tolerates any
// simultaneous gain change within [(2-alpha)/(2+alpha), (2+alpha)/(2-alpha)]
// and phase change within +-2 atan(alpha/2) (P. Seiler, A. Packard,
// P. Gahinet, "An introduction to disk margins", IEEE Control Systems
// Magazine, 2020). Over the measured band only.
struct DiskMargin {
  double alpha = 0.0;
  double frequency_hz = 0.0;             // where |S - T| peaks
  double gain_low_db = 0.0;              // 20 log10 (2-alpha)/(2+alpha); -inf when alpha >= 2
  std::optional<double> gain_high_db;    // 20 log10 (2+alpha)/(2-alpha); unset (unbounded) when alpha >= 2
  double phase_deg = 0.0;                // 2 atan(alpha/2)
  bool at_band_edge = false;
  std::optional<Interval> alpha_ci;
  std::optional<Interval> phase_ci_deg;
  std::optional<Interval> gain_high_ci_db;  // high end +inf when the interval reaches alpha = 2; gain_low is its negative
};

// The disk margin of a given peak of |S - T| at a frequency.
DiskMargin disk_margin_from_peak(double peak, double frequency_hz, bool at_band_edge);

struct MarginSummary {
  std::optional<double> gain_crossover_hz;   // the crossover with the smallest phase margin
  std::optional<double> phase_margin_deg;    // the smallest over gain crossovers
  std::optional<double> phase_crossover_hz;  // the crossing with the smallest |GM|
  std::optional<double> gain_margin_db;      // the smallest in magnitude, sign kept
  std::optional<double> gain_increase_margin_db;   // smallest positive GM
  std::optional<double> gain_reduction_margin_db;  // negative GM closest to 0
  std::optional<double> delay_margin_s;      // smallest over gain crossovers
  std::optional<double> modulus_margin;
  std::optional<double> peak_sensitivity_db;
  std::optional<double> modulus_frequency_hz;
  // Intervals of the values above, from the crossing each value came from.
  std::optional<Interval> gain_crossover_ci_hz;
  std::optional<Interval> phase_margin_ci_deg;
  std::optional<Interval> phase_crossover_ci_hz;
  std::optional<Interval> gain_margin_ci_db;
  std::optional<Interval> delay_margin_ci_s;
  std::optional<Interval> modulus_margin_ci;
  std::optional<Interval> peak_sensitivity_ci_db;
};

struct Margins {
  std::vector<GainCrossover> gain_crossovers;    // ascending frequency
  std::vector<PhaseCrossover> phase_crossovers;  // ascending frequency
  std::optional<ModulusPoint> modulus;
  std::optional<DiskMargin> disk;
  MarginSummary summary;
  StabilityAssessment stability;
  double band_low_hz = 0.0;
  double band_high_hz = 0.0;
  std::size_t line_count = 0;
  double confidence = 0.95;  // of the intervals
  Diagnostics findings;
};

// The standard normal quantile z with P(|Z| < z) = confidence.
double two_sided_z(double confidence);

struct MarginOptions {
  // Lines on each side of a crossing used by its local least-squares fit.
  std::size_t fit_half_width = 2;
  // Lines on each side of a peak (modulus and disk margins) in the local fit
  // of measured lines: wider than a crossing's, so that the fit does not
  // follow the noise of the line that happens to lie lowest.
  std::size_t peak_half_width = 4;
  // Lines on each side used to estimate the curve's slope when judging how
  // far line noise can move a crossing (wider than the fit: noise must not
  // set the slope).
  std::size_t slope_half_width = 8;
  // Crossings closer than this many standard deviations (summed) merge.
  double merge_sigmas = 2.0;
  // A crossing between lines whose relative standard deviation (of |L| in
  // nepers, of angle L in rad) exceeds this cannot be placed: it is left out
  // of the lists and reported as a finding. 0.25 is 2.2 dB and 14 deg.
  double max_line_sigma = 0.25;
  // Level of the intervals (two-sided).
  double confidence = 0.95;
  // Open-loop poles in the right half plane, for the Nyquist count.
  int open_loop_rhp_poles = 0;
};

// Margins from measured or tabulated lines (ascending frequency). Crossings
// are bracketed between lines in log frequency (log magnitude, unwrapped
// phase) and placed by a local least-squares quadratic weighted by each
// line's uncertainty. Throws NumericalError for fewer than two lines.
Margins find_margins(const Response& loop, const MarginOptions& options = {});

// Margins of a loop known as a function of frequency, to root-finding
// precision (about 1e-12 relative), over [low_hz, high_hz]: used for the
// truth of synthetic recordings and as an oracle in tests.
using LoopFunction = std::function<std::complex<double>(double frequency_hz)>;
Margins exact_margins(const LoopFunction& loop, double low_hz, double high_hz, std::size_t grid_lines = 20000);

}  // namespace loopaudit
