// Numbers for people: engineering prefixes with three significant digits,
// and intervals printed so that their ends and a value beside them can be
// compared by eye.
#pragma once

#include <string>
#include <vector>

namespace loopaudit {

std::string format_frequency(double frequency_hz);    // "4.83 kHz"
// "4.83 kHz to 5.1 kHz", or "4.83 kHz" alone when both ends print the same.
std::string format_frequency_range(double low_hz, double high_hz);
std::string format_time(double seconds);              // "31.2 us"
std::string format_fixed(double value, int digits);   // "46.1" for (46.12, 1)
std::string format_signed(double value, int digits);  // "+10.7", "-3.0"

// The quantities the reports print, each with its usual look: frequency and
// time with an engineering prefix and three significant digits, angles in
// deg and gains in dB with one decimal (kSignedGain always with its sign),
// ratios with three decimals.
enum class Quantity { kFrequency, kTime, kAngle, kGain, kSignedGain, kRatio };

// One way to print several numbers of one quantity alike: one unit (with its
// prefix) and one count of decimals for all of them.
struct NumberStyle {
  double scale = 1.0;  // the printed number is value / scale
  std::string unit;    // "kHz", "ms", "deg", "dB" or "" (a ratio)
  int decimals = 1;
  bool sign = false;  // print "+" before positive numbers
  // "0.98 ms"; an infinite value is "unbounded", a NaN "n/a".
  std::string operator()(double value) const;
};

// The style of one value on its own, as its quantity usually looks.
NumberStyle value_style(Quantity quantity, double value);

// The style of an interval [low, high] and the values printed beside it
// (the estimate, a reference such as a simulation's truth):
// - one unit for all, its prefix chosen from the largest magnitude;
// - never fewer decimals than the quantity's usual look;
// - decimals enough that the width high - low shows two significant digits
//   when its leading digits are 100 to 354 and one otherwise (the rounding
//   rule of the Particle Data Group's Review of Particle Physics,
//   introduction, applied to the width), so that the ends differ when they do;
// - and more, up to kMaxExtraDecimals, until every value outside the interval
//   prints differently from the end nearest to it.
// Infinite ends take no part in the choice.
NumberStyle interval_style(Quantity quantity, double low, double high, const std::vector<double>& beside = {});
inline constexpr int kMaxExtraDecimals = 4;

// "0.98 ms to 1.10 ms": both ends in `style`.
std::string format_interval(const NumberStyle& style, double low, double high);

}  // namespace loopaudit
