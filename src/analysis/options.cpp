// The checks of the analysis stage's options, each called once where the
// stage starts: find_margins and assess_stability.
#include <cmath>
#include <string>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/analysis/nyquist.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"

namespace loopaudit {

void MarginOptions::validate() const {
  if (fit_half_width < 1) throw setting_out_of_range("fit_half_width", fit_half_width, "at least 1 line on each side");
  if (peak_half_width < 1) {
    throw setting_out_of_range("peak_half_width", peak_half_width, "at least 1 line on each side");
  }
  if (slope_half_width < 1) {
    throw setting_out_of_range("slope_half_width", slope_half_width, "at least 1 line on each side");
  }
  if (!(merge_sigmas >= 0.0 && std::isfinite(merge_sigmas))) {
    throw setting_out_of_range("merge_sigmas", merge_sigmas, "0 or more standard deviations");
  }
  if (!(max_line_sigma > 0.0 && std::isfinite(max_line_sigma))) {
    throw setting_out_of_range("max_line_sigma", max_line_sigma, "a positive relative standard deviation");
  }
  if (!(confidence > 0.5 && confidence < 1.0)) {
    throw setting_out_of_range("confidence", confidence, "a level between 0.5 and 1 (both excluded)");
  }
  if (open_loop_rhp_poles < 0) {
    throw setting_out_of_range("open_loop_rhp_poles", open_loop_rhp_poles, "0 or more poles");
  }
  if (band_hz && !(band_hz->low > 0.0 && band_hz->high > band_hz->low && std::isfinite(band_hz->high))) {
    throw ConfigError("the margin band " + format_frequency(band_hz->low) + " to " + format_frequency(band_hz->high) +
                      " is empty or not finite: give 'band' (--band LOW:HIGH) in Hz with 0 < LOW < HIGH");
  }
}

void StabilityOptions::validate() const {
  if (open_loop_rhp_poles < 0) {
    throw setting_out_of_range("open_loop_rhp_poles", open_loop_rhp_poles, "0 or more poles");
  }
  if (!(clear_sigmas >= 0.0 && std::isfinite(clear_sigmas))) {
    throw setting_out_of_range("clear_sigmas", clear_sigmas, "0 or more standard deviations");
  }
  if (!(max_relative_sigma > 0.0 && std::isfinite(max_relative_sigma))) {
    throw setting_out_of_range("max_relative_sigma", max_relative_sigma, "a positive relative standard deviation");
  }
}

}  // namespace loopaudit
