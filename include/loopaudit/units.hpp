// Named unit conversions. Angles are radians unless a name says degrees.
#pragma once

#include <cmath>
#include <cstddef>
#include <numbers>

namespace loopaudit {

inline double db_from_ratio(double ratio) { return 20.0 * std::log10(ratio); }
inline double ratio_from_db(double gain_db) { return std::pow(10.0, gain_db / 20.0); }
inline double db_from_power(double power_ratio) { return 10.0 * std::log10(power_ratio); }
inline double deg_from_rad(double angle_rad) { return angle_rad * 180.0 / std::numbers::pi; }
inline double rad_from_deg(double angle_deg) { return angle_deg * std::numbers::pi / 180.0; }
inline double rad_per_s_from_hz(double frequency_hz) { return 2.0 * std::numbers::pi * frequency_hz; }
inline double hz_from_rad_per_s(double omega) { return omega / (2.0 * std::numbers::pi); }

// Standard deviation of 20 log10|H| (dB) from that of ln|H| (nepers).
inline double db_from_nepers(double nepers) { return 20.0 / std::numbers::ln10 * nepers; }

// Wraps an angle into (-180, 180] degrees.
inline double wrap_deg(double angle_deg) {
  double wrapped = std::fmod(angle_deg, 360.0);
  if (wrapped <= -180.0) wrapped += 360.0;
  if (wrapped > 180.0) wrapped -= 360.0;
  return wrapped;
}

// The sample rates the tool takes, stated or found: from one sample in
// about eleven days to 10^12 samples a second (a terahertz sampler). Outside
// these a rate is a typing or unit error, and its frequencies and their
// squares would leave the range where double arithmetic keeps its digits.
inline constexpr double kMinSampleRateHz = 1e-6;
inline constexpr double kMaxSampleRateHz = 1e12;
inline constexpr const char* kSampleRateRangeText = "1e-06 Hz to 1e+12 Hz";
inline bool plausible_sample_rate(double rate_hz) { return rate_hz >= kMinSampleRateHz && rate_hz <= kMaxSampleRateHz; }

// A sample index or count from a non-negative real, rounded to nearest and
// clamped to [0, limit] so that no input can overflow the conversion.
inline std::size_t clamped_samples(double samples, std::size_t limit) {
  if (!(samples > 0.0)) return 0;
  if (samples >= static_cast<double>(limit)) return limit;
  return static_cast<std::size_t>(std::llround(samples));
}

}  // namespace loopaudit
