#include "loopaudit/format.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <span>

namespace loopaudit {
namespace {

struct Prefix {
  double factor;
  const char* name;
};
constexpr Prefix kFrequencyPrefixes[] = {{1e9, "G"}, {1e6, "M"}, {1e3, "k"}, {1.0, ""}, {1e-3, "m"}};
constexpr Prefix kTimePrefixes[] = {{1.0, ""}, {1e-3, "m"}, {1e-6, "u"}, {1e-9, "n"}};

// The largest prefix that leaves at least 1 after rounding to 3 digits; none
// for zero.
const Prefix& prefix_for(double magnitude, std::span<const Prefix> prefixes) {
  for (const Prefix& p : prefixes) {
    if (magnitude == 0.0 && p.factor == 1.0) return p;
    if (std::abs(magnitude) >= p.factor * 0.9995) return p;
  }
  return prefixes.back();
}

std::string engineering(double value, const char* unit, std::span<const Prefix> prefixes) {
  const Prefix& chosen = prefix_for(value, prefixes);
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.3g %s%s", value / chosen.factor, chosen.name, unit);
  return buffer;
}

// Decimals that give three significant digits to `scaled` (0 at 100 and above).
int three_digit_decimals(double scaled) {
  const double magnitude = std::abs(scaled);
  if (!(magnitude > 0.0) || !std::isfinite(magnitude)) return 2;
  char text[32];
  std::snprintf(text, sizeof text, "%.2e", magnitude);  // 99.96 becomes 100
  const double rounded = std::strtod(text, nullptr);
  return std::max(0, 2 - static_cast<int>(std::floor(std::log10(rounded))));
}

// Decimals of `style`'s scaled numbers that show `width` with the digits the
// rounding rule in format.hpp gives it.
int width_decimals(double width, double scale) {
  const double scaled = width / scale;
  if (!(scaled > 0.0) || !std::isfinite(scaled)) return 0;
  const int exponent = static_cast<int>(std::floor(std::log10(scaled)));
  const double leading = std::floor(scaled / std::pow(10.0, exponent - 2) + 1e-9);  // 100 to 999
  const int step_exponent = leading <= 354.0 ? exponent - 1 : exponent;
  return std::max(0, -step_exponent);
}

}  // namespace

std::string format_frequency(double frequency_hz) { return engineering(frequency_hz, "Hz", kFrequencyPrefixes); }

std::string format_frequency_range(double low_hz, double high_hz) {
  const std::string low = format_frequency(low_hz), high = format_frequency(high_hz);
  return low == high ? low : low + " to " + high;
}

std::string format_time(double seconds) { return engineering(seconds, "s", kTimePrefixes); }

std::string format_fixed(double value, int digits) {
  char text[48];
  std::snprintf(text, sizeof text, "%.*f", digits, value);
  return text;
}

std::string format_signed(double value, int digits) {
  char text[48];
  std::snprintf(text, sizeof text, "%+.*f", digits, value);
  return text;
}

std::string NumberStyle::operator()(double value) const {
  if (std::isnan(value)) return "n/a";
  if (std::isinf(value)) return "unbounded";
  const double scaled = value / scale;
  std::string text = sign ? format_signed(scaled, decimals) : format_fixed(scaled, decimals);
  // A negative number that rounds to zero prints as zero.
  if (text[0] == '-' && text.find_first_not_of("0.", 1) == std::string::npos) text[0] = sign ? '+' : ' ';
  if (text[0] == ' ') text.erase(0, 1);
  return unit.empty() ? text : text + " " + unit;
}

NumberStyle value_style(Quantity quantity, double value) {
  switch (quantity) {
    case Quantity::kFrequency:
    case Quantity::kTime: {
      const bool frequency = quantity == Quantity::kFrequency;
      const Prefix& p = prefix_for(std::isfinite(value) ? value : 0.0,
                                   frequency ? std::span<const Prefix>(kFrequencyPrefixes) : kTimePrefixes);
      return {p.factor, std::string(p.name) + (frequency ? "Hz" : "s"), three_digit_decimals(value / p.factor), false};
    }
    case Quantity::kAngle:
      return {1.0, "deg", 1, false};
    case Quantity::kGain:
      return {1.0, "dB", 1, false};
    case Quantity::kSignedGain:
      return {1.0, "dB", 1, true};
    case Quantity::kRatio:
      return {1.0, "", 3, false};
  }
  return {};
}

NumberStyle interval_style(Quantity quantity, double low, double high, const std::vector<double>& beside) {
  double largest = 0.0;
  for (double v : {low, high}) {
    if (std::isfinite(v)) largest = std::max(largest, std::abs(v));
  }
  for (double v : beside) {
    if (std::isfinite(v)) largest = std::max(largest, std::abs(v));
  }
  NumberStyle style = value_style(quantity, largest);
  const int most = style.decimals + kMaxExtraDecimals;
  if (std::isfinite(low) && std::isfinite(high)) {
    style.decimals = std::clamp(width_decimals(high - low, style.scale), style.decimals, most);
  }
  // A value outside the interval must not print as its nearest end.
  const auto misleading = [&] {
    for (double v : beside) {
      if (!std::isfinite(v) || (low <= v && v <= high)) continue;
      const double end = v < low ? low : high;
      if (std::isfinite(end) && style(v) == style(end)) return true;
    }
    return false;
  };
  while (misleading() && style.decimals < most) ++style.decimals;
  return style;
}

std::string format_interval(const NumberStyle& style, double low, double high) {
  return style(low) + " to " + style(high);
}

}  // namespace loopaudit
