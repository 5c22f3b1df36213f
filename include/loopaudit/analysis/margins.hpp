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
#include "loopaudit/record/margins.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

// The disk margin of a given peak of |S - T| at a frequency.
DiskMargin disk_margin_from_peak(double peak, double frequency_hz, bool at_band_edge);

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
  // Only the lines from band_hz->low to band_hz->high count (all when unset);
  // band_source says where the band came from ("the band the injection
  // excites", "--band"), for the note that reports the lines left out.
  std::optional<Interval> band_hz;
  std::string band_source;
  // The sign check doubts the convention; passed on to the stability verdict.
  bool sign_doubted = false;

  // Throws ConfigError naming the setting that is out of range (called by
  // find_margins).
  void validate() const;
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
