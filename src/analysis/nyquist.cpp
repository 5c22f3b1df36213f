#include "loopmargin/analysis/nyquist.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "analysis/crossings.hpp"
#include "loopmargin/format.hpp"
#include "loopmargin/units.hpp"

namespace loopmargin {
namespace {

// Odd multiples of 180 deg are where ray_index(angle) is a whole number.
double ray_index(double angle_deg) { return (angle_deg + 180.0) / 360.0; }

// Whole numbers at or below x, counting x itself as one half when whole.
double half_floor(double x) {
  const double nearest = std::round(x);
  if (std::abs(x - nearest) < 1e-9) return nearest - 0.5;
  return std::floor(x);
}

// Signed crossings of the negative real axis as the angle of L moves from a
// to b (deg, unwrapped): clockwise (decreasing) counts +1, and an end lying
// on the axis counts one half.
double axis_crossings(double from_deg, double to_deg) {
  return half_floor(ray_index(from_deg)) - half_floor(ray_index(to_deg));
}

// Integrators at the bottom of the band, from the gain slope over the lowest
// lines spanning up to a third of a decade (least squares).
int integrators_at_bottom(const detail::LineTable& t) {
  std::size_t last = 1;
  while (last + 1 < t.size() && t.log_f[last + 1] - t.log_f[0] <= 1.0 / 3.0) ++last;
  double mean_u = 0.0, mean_g = 0.0;
  for (std::size_t i = 0; i <= last; ++i) {
    mean_u += t.log_f[i];
    mean_g += t.gain_db[i];
  }
  mean_u /= static_cast<double>(last + 1);
  mean_g /= static_cast<double>(last + 1);
  double suu = 0.0, sug = 0.0;
  for (std::size_t i = 0; i <= last; ++i) {
    suu += (t.log_f[i] - mean_u) * (t.log_f[i] - mean_u);
    sug += (t.log_f[i] - mean_u) * (t.gain_db[i] - mean_g);
  }
  const double slope_db_per_decade = suu > 0.0 ? sug / suu : 0.0;
  return static_cast<int>(std::clamp(std::lround(-slope_db_per_decade / 20.0), 0L, 4L));
}

bool clearly_above_unity(double gain_db, double sigma_db, double clear_sigmas) {
  return gain_db > clear_sigmas * sigma_db && gain_db > 0.0;
}

std::string gain_text(double gain_db) {
  char text[32];
  std::snprintf(text, sizeof text, "%+.1f dB", gain_db);
  return text;
}

std::string counted(long count, const char* noun) {
  return std::to_string(count) + " " + noun + (count == 1 || count == -1 ? "" : "s");
}

StabilityAssessment undecided(StabilityAssessment a, std::string reason) {
  a.verdict = StabilityVerdict::kUndecided;
  a.reason = std::move(reason);
  return a;
}

}  // namespace

const char* verdict_name(StabilityVerdict verdict) {
  switch (verdict) {
    case StabilityVerdict::kStable: return "stable";
    case StabilityVerdict::kUnstable: return "unstable";
    case StabilityVerdict::kUndecided: return "undecided";
  }
  return "undecided";
}

StabilityAssessment assess_stability(const Response& loop, const StabilityOptions& options) {
  StabilityAssessment a;
  a.open_loop_rhp_poles = options.open_loop_rhp_poles;
  if (loop.size() < 2) return undecided(a, "fewer than two lines: nothing to count");
  const auto table = detail::make_line_table(loop.frequency_hz, loop.value, loop.relative_sigma, loop.coherence);
  const std::size_t top = table.size() - 1;
  const double f_low = loop.frequency_hz.front();
  const double f_high = loop.frequency_hz.back();
  a.low_frequency_integrators = integrators_at_bottom(table);
  const int n = a.low_frequency_integrators;
  a.assumptions = {
      std::to_string(a.open_loop_rhp_poles) + " open-loop poles in the right half plane (from the settings)",
      "1 + L = 0 is the closed loop's characteristic equation (the sign convention is right)",
      "above " + format_frequency(f_high) + " |L| stays below 1",
      "below " + format_frequency(f_low) + " L runs to " +
          (n == 0 ? std::string("a constant") : counted(n, "integrator") + " times a constant") +
          " without crossing the negative real axis beyond -1"};
  if (clearly_above_unity(-table.gain_db[top], table.gain_sigma_db[top], options.clear_sigmas) == false) {
    return undecided(a, "|L| is " + gain_text(table.gain_db[top]) + " at the top of the band (" +
                            format_frequency(f_high) + "), not clearly below 0 dB: encirclements above the band "
                            "cannot be ruled out; extend the band upward");
  }
  // Below the band L must stay on one side of the unit circle: outside it
  // (the usual loop with integrators), or inside it when L levels off.
  const bool bottom_outside = clearly_above_unity(table.gain_db[0], table.gain_sigma_db[0], options.clear_sigmas);
  const bool bottom_inside = n == 0 && clearly_above_unity(-table.gain_db[0], table.gain_sigma_db[0], options.clear_sigmas);
  if (!bottom_outside && !bottom_inside) {
    return undecided(a, "|L| is " + gain_text(table.gain_db[0]) + " at the bottom of the band (" +
                            format_frequency(f_low) + ")" + (n > 0 ? " and still rising below it" : "") +
                            ": whether L crosses the negative real axis beyond -1 below the band cannot be "
                            "inferred; extend the band downward");
  }
  // The low-frequency asymptote K / (j w)^n: angle -90 n with K > 0, or 180 deg
  // more with K < 0, whichever the bottom line lies nearer.
  const double positive_k = -90.0 * n;
  const double negative_k = positive_k - 180.0;
  const double bottom = table.phase_deg[0];
  const bool k_negative = std::abs(wrap_deg(bottom - negative_k)) < std::abs(wrap_deg(bottom - positive_k));
  const double asymptote = k_negative ? negative_k : positive_k;
  const double shift = asymptote + wrap_deg(bottom - asymptote) - bottom;  // a multiple of 360
  // The arc at s = 0 turns clockwise through n * 180 deg from the mirror of the
  // asymptote's angle to the asymptote's angle.
  double count = bottom_outside ? axis_crossings(asymptote + 180.0 * n, asymptote) : 0.0;
  double branch = bottom_outside ? axis_crossings(asymptote, bottom + shift) : 0.0;
  for (std::size_t i = 0; i < top; ++i) {
    const double from = table.phase_deg[i] + shift;
    const double to = table.phase_deg[i + 1] + shift;
    const double c = axis_crossings(from, to);
    if (c == 0.0) continue;
    // |L| where the angle meets the axis, interpolated in phase.
    const double k = to > from ? std::ceil(ray_index(from)) : std::floor(ray_index(from));
    const double axis = 360.0 * k - 180.0;
    const double w = to != from ? std::clamp((axis - from) / (to - from), 0.0, 1.0) : 0.0;
    const double gain_db = table.gain_db[i] + w * (table.gain_db[i + 1] - table.gain_db[i]);
    const double sigma_db = std::max(table.gain_sigma_db[i], table.gain_sigma_db[i + 1]);
    if (std::abs(gain_db) <= options.clear_sigmas * sigma_db) {
      return undecided(a, "L meets the negative real axis near " + format_frequency(std::pow(10.0, table.log_f[i])) +
                              " at " + gain_text(gain_db) + ", too close to -1 to tell on which side it passes");
    }
    if (gain_db > 0.0) branch += c;
  }
  const double total = count + 2.0 * branch;
  const long encirclements = std::lround(total);
  a.encirclements = static_cast<int>(encirclements);
  const int z = a.open_loop_rhp_poles + static_cast<int>(encirclements);
  const std::string found = counted(encirclements, "clockwise encirclement") + " of -1 with P = " +
                            std::to_string(a.open_loop_rhp_poles);
  if (z < 0) {
    return undecided(a, found + " would leave " + std::to_string(z) +
                            " closed-loop poles in the right half plane, which cannot be: check P, the sign "
                            "convention and the band");
  }
  a.closed_loop_rhp_poles = z;
  a.verdict = z == 0 ? StabilityVerdict::kStable : StabilityVerdict::kUnstable;
  a.reason = z == 0 ? found + ": no closed-loop poles in the right half plane"
                    : found + ": " + counted(z, "closed-loop pole") + " in the right half plane. A loop that ran "
                      "stably while it was measured points to a wrong P, a wrong sign convention or behaviour "
                      "outside the band";
  return a;
}

}  // namespace loopmargin
