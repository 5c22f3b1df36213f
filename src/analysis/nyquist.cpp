#include "loopaudit/analysis/nyquist.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <optional>
#include <vector>

#include "analysis/crossings.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
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

// L at the bottom of the band, read from the lowest lines (a third of a
// decade, or eight lines if that is more), so that one noisy line cannot decide:
// a straight line in log frequency through their gains (its slope gives the
// integrators), and the mean of their unwrapped phases.
struct Bottom {
  int integrators = 0;
  double gain_db = 0.0;         // the fitted gain at the lowest line
  double relative_sigma = 0.0;  // of that fitted gain, about sigma * 2 / sqrt(lines)
  double phase_deg = 0.0;
};

Bottom bottom_of_band(const detail::LineTable& t) {
  std::size_t last = std::min<std::size_t>(7, t.size() - 1);
  while (last + 1 < t.size() && t.log_f[last + 1] - t.log_f[0] <= 1.0 / 3.0) ++last;
  const double count = static_cast<double>(last + 1);
  double mean_u = 0.0, mean_g = 0.0, mean_p = 0.0;
  std::vector<double> sigmas;
  for (std::size_t i = 0; i <= last; ++i) {
    mean_u += t.log_f[i] / count;
    mean_g += t.gain_db[i] / count;
    mean_p += t.phase_deg[i] / count;
    sigmas.push_back(t.relative_sigma[i]);
  }
  double suu = 0.0, sug = 0.0;
  for (std::size_t i = 0; i <= last; ++i) {
    suu += (t.log_f[i] - mean_u) * (t.log_f[i] - mean_u);
    sug += (t.log_f[i] - mean_u) * (t.gain_db[i] - mean_g);
  }
  const double slope = suu > 0.0 ? sug / suu : 0.0;
  std::nth_element(sigmas.begin(), sigmas.begin() + sigmas.size() / 2, sigmas.end());
  Bottom b;
  b.integrators = static_cast<int>(std::clamp(std::lround(-slope / 20.0), 0L, 4L));
  b.gain_db = mean_g + slope * (t.log_f[0] - mean_u);
  b.relative_sigma = sigmas[sigmas.size() / 2] * 2.0 / std::sqrt(count);
  b.phase_deg = mean_p;
  return b;
}

// Where |L| lies against 1, given its relative standard deviation: the
// test is on |L| itself, so that a tiny, very noisy value stays inside.
enum class Side { kInside, kOutside, kUnclear };
Side side_of_unity(double gain_db, double relative_sigma, double clear_sigmas) {
  // relative_sigma is the standard deviation of ln |L|: the clear band is
  // |L| e^(+-clear_sigmas sigma), which a first-order 1 +- spread would make
  // empty on the low side for sigma of 0.5 whatever |L|.
  // Exact lines still leave rounding: within it, |L| is on the unit circle.
  const double log_magnitude = std::log(ratio_from_db(gain_db));
  const double spread = std::max(clear_sigmas * relative_sigma, kOnMarginRelative);
  if (log_magnitude + spread < 0.0) return Side::kInside;
  if (log_magnitude - spread > 0.0) return Side::kOutside;
  return Side::kUnclear;
}

std::string gain_text(double gain_db) { return format_signed(gain_db, 1) + " dB"; }

// L passes -1 itself, as far as rounding can tell.
std::string on_margin_text(double frequency_hz, double gain_db) {
  char deviation[32];
  std::snprintf(deviation, sizeof deviation, "%.1e", ratio_from_db(gain_db) - 1.0);
  char tolerance[32];
  std::snprintf(tolerance, sizeof tolerance, "%.0e", kOnMarginRelative);
  return "L meets the negative real axis near " + format_frequency(frequency_hz) + " with |L| = 1 " +
         (deviation[0] == '-' ? "- " + std::string(deviation + 1) : "+ " + std::string(deviation)) +
         ", within rounding (" + tolerance +
         " relative) of -1: the loop sits on the stability margin, and whether "
         "the closed loop is stable cannot be told";
}

std::string counted(long count, const char* noun) {
  return std::to_string(count) + " " + noun + (count == 1 || count == -1 ? "" : "s");
}

StabilityAssessment undecided(StabilityAssessment a, std::string reason) {
  a.verdict = StabilityVerdict::kUndecided;
  a.reason = std::move(reason);
  return a;
}

// The lines whose relative uncertainty is at most `limit` (all of an exact table).
Response informative_lines(const Response& loop, double limit) {
  Response kept;
  for (std::size_t k = 0; k < loop.size(); ++k) {
    const double sigma = loop.relative_sigma.empty() ? 0.0 : loop.relative_sigma[k];
    if (!(sigma <= limit) || !std::isfinite(std::abs(loop.value[k]))) continue;
    kept.frequency_hz.push_back(loop.frequency_hz[k]);
    kept.value.push_back(loop.value[k]);
    kept.relative_sigma.push_back(sigma);
  }
  return kept;
}

std::string relative_text(double sigma) {
  char text[32];
  std::snprintf(text, sizeof text, "%.2g", sigma);
  return text;
}

// Signed crossings of the negative real axis beyond -1 between the lines
// (phases shifted into the asymptote's branch), or why one cannot be told.
struct BandCrossings {
  double count = 0.0;
  std::optional<std::string> unclear;
};

BandCrossings band_crossings(const detail::LineTable& table, double shift, double clear_sigmas) {
  BandCrossings result;
  for (std::size_t i = 0; i + 1 < table.size(); ++i) {
    const double from = table.phase_deg[i] + shift;
    const double to = table.phase_deg[i + 1] + shift;
    const double c = axis_crossings(from, to);
    if (c == 0.0) continue;
    // |L| where the angle meets the axis, interpolated in phase.
    const double k = to > from ? std::ceil(ray_index(from)) : std::floor(ray_index(from));
    const double w = std::clamp((360.0 * k - 180.0 - from) / (to - from), 0.0, 1.0);
    const double gain_db = table.gain_db[i] + w * (table.gain_db[i + 1] - table.gain_db[i]);
    const double frequency_hz = std::pow(10.0, table.log_f[i] + w * (table.log_f[i + 1] - table.log_f[i]));
    const double sigma = std::max(table.relative_sigma[i], table.relative_sigma[i + 1]);
    const Side side = side_of_unity(gain_db, sigma, clear_sigmas);
    if (side == Side::kUnclear) {
      result.unclear = clear_sigmas * sigma > kOnMarginRelative
                           ? "L meets the negative real axis near " + format_frequency(frequency_hz) +
                                 " at " + gain_text(gain_db) +
                                 ", within the lines' noise of -1 (relative uncertainty " + format_fixed(sigma, 2) +
                                 "): which side of -1 it passes cannot be told"
                           : on_margin_text(frequency_hz, gain_db);
      return result;
    }
    if (side == Side::kOutside) result.count += c;
  }
  return result;
}

// What the count assumes of the band's ends and the lines left out.
std::vector<std::string> assumptions(int rhp_poles, int integrators, double f_low, double f_high,
                                     std::size_t left_out, const StabilityOptions& options) {
  const double max_relative_sigma = options.max_relative_sigma;
  std::vector<std::string> out = {
      std::to_string(rhp_poles) + " open-loop poles in the right half plane (from the settings)",
      options.sign_doubted ? "1 + L = 0 is the closed loop's characteristic equation, which the sign check doubts "
                             "(loop.sign-suspect)"
                           : "1 + L = 0 is the closed loop's characteristic equation (the sign convention is right)",
      "above " + format_frequency(f_high) + " |L| stays below 1",
      "below " + format_frequency(f_low) + " L runs to " +
          (integrators == 0 ? std::string("a constant") : counted(integrators, "integrator") + " times a constant") +
          " without crossing the negative real axis beyond -1"};
  if (left_out > 0) {
    out.push_back(std::to_string(left_out) + " lines with a relative uncertainty above " +
                  relative_text(max_relative_sigma) + " were left out, and L does not circle -1 between the lines kept");
  }
  return out;
}

// The clockwise encirclements of -1 along the whole contour: the arc at s = 0
// (when L is outside the unit circle below the band), the branch from the
// asymptote to the bottom line, and the crossings along the band, the
// positive-frequency branch counted twice. Unset, with the reason in
// `unclear`, when a crossing lies within the lines' noise of -1.
std::optional<long> encirclements(const detail::LineTable& table, const Bottom& low_end, bool bottom_outside,
                                  double clear_sigmas, std::string& unclear) {
  const int n = low_end.integrators;
  // The low-frequency asymptote K / (j w)^n: angle -90 n with K > 0, or 180 deg
  // more with K < 0, whichever the bottom lines lie nearer.
  const double positive_k = -90.0 * n;
  const double negative_k = positive_k - 180.0;
  const double near = low_end.phase_deg;
  const bool k_negative = std::abs(wrap_deg(near - negative_k)) < std::abs(wrap_deg(near - positive_k));
  const double asymptote = k_negative ? negative_k : positive_k;
  const double shift = asymptote + wrap_deg(near - asymptote) - near;  // a multiple of 360
  // The arc at s = 0 turns clockwise through n * 180 deg from the mirror of the
  // asymptote's angle to the asymptote's angle.
  const double arc = bottom_outside ? axis_crossings(asymptote + 180.0 * n, asymptote) : 0.0;
  double branch = bottom_outside ? axis_crossings(asymptote, table.phase_deg[0] + shift) : 0.0;
  const BandCrossings band = band_crossings(table, shift, clear_sigmas);
  if (band.unclear) {
    unclear = *band.unclear;
    return std::nullopt;
  }
  branch += band.count;
  return std::lround(arc + 2.0 * branch);
}

// The verdict from N and P: Z = N + P closed-loop poles in the right half plane.
StabilityAssessment verdict_from_count(StabilityAssessment a, long encirclements) {
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

StabilityAssessment count_encirclements(const Response& loop, const StabilityOptions& options) {
  options.validate();
  StabilityAssessment a;
  a.open_loop_rhp_poles = options.open_loop_rhp_poles;
  if (loop.size() < 2) return undecided(a, "fewer than two lines: nothing to count");
  const Response lines = informative_lines(loop, options.max_relative_sigma);
  if (lines.size() < 2) {
    return undecided(a, std::to_string(lines.size()) + " of " + std::to_string(loop.size()) +
                            " lines have a relative uncertainty at or below " + relative_text(options.max_relative_sigma) +
                            ": too few to count encirclements");
  }
  const std::size_t left_out = loop.size() - lines.size();
  if (2 * left_out > loop.size()) {
    return undecided(a, std::to_string(left_out) + " of the " + std::to_string(loop.size()) +
                            " lines have a relative uncertainty above " + relative_text(options.max_relative_sigma) +
                            ": a count from the few lines left cannot show that L stays clear of -1 between them. "
                            "Raise the injection or average longer");
  }
  const auto table = detail::make_line_table(lines.frequency_hz, lines.value, lines.relative_sigma);
  const std::size_t top = table.size() - 1;
  const double f_low = lines.frequency_hz.front();
  const double f_high = lines.frequency_hz.back();
  const Bottom low_end = bottom_of_band(table);
  a.low_frequency_integrators = low_end.integrators;
  const int n = a.low_frequency_integrators;
  a.assumptions = assumptions(a.open_loop_rhp_poles, n, f_low, f_high, left_out, options);
  if (side_of_unity(table.gain_db[top], table.relative_sigma[top], options.clear_sigmas) != Side::kInside) {
    return undecided(a, "|L| is " + gain_text(table.gain_db[top]) + " at the top of the band (" +
                            format_frequency(f_high) + "), not clearly below 0 dB: encirclements above the band "
                            "cannot be ruled out; extend the band upward");
  }
  // Below the band L must stay on one side of the unit circle: outside it
  // (the usual loop with integrators), or inside it when L levels off.
  const Side bottom_side = side_of_unity(low_end.gain_db, low_end.relative_sigma, options.clear_sigmas);
  const bool bottom_outside = bottom_side == Side::kOutside;
  const bool bottom_inside = n == 0 && bottom_side == Side::kInside;
  if (!bottom_outside && !bottom_inside) {
    return undecided(a, "|L| is " + gain_text(low_end.gain_db) + " at the bottom of the band (" +
                            format_frequency(f_low) + ")" + (n > 0 ? " and still rising below it" : "") +
                            ": whether L crosses the negative real axis beyond -1 below the band cannot be "
                            "inferred; extend the band downward");
  }
  std::string unclear;
  const auto count = encirclements(table, low_end, bottom_outside, options.clear_sigmas, unclear);
  if (!count) return undecided(a, unclear);
  return verdict_from_count(std::move(a), *count);
}

}  // namespace

StabilityAssessment assess_stability(const Response& loop, const StabilityOptions& options) {
  StabilityAssessment a = count_encirclements(loop, options);
  if (options.sign_doubted && a.verdict == StabilityVerdict::kUnstable) {
    a.reason += ". The sign check found the low-frequency phase of an inverted loop (loop.sign-suspect): an inverted "
                "probe or swapped x and y is the likely cause of this verdict; correct the sign and analyse again";
  }
  return a;
}

}  // namespace loopaudit
