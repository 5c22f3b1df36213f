#include "loopaudit/format.hpp"

#include <cmath>
#include <cstdio>
#include <utility>
#include <vector>

namespace loopaudit {
namespace {

std::string engineering(double value, const char* unit, const std::vector<std::pair<double, const char*>>& prefixes) {
  // The largest prefix that leaves at least 1 after rounding to 3 digits.
  std::size_t chosen = prefixes.size() - 1;
  for (std::size_t i = 0; i < prefixes.size(); ++i) {
    if (std::abs(value) >= prefixes[i].first * 0.9995) {
      chosen = i;
      break;
    }
  }
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.3g %s%s", value / prefixes[chosen].first, prefixes[chosen].second, unit);
  return buffer;
}

}  // namespace

std::string format_frequency(double frequency_hz) {
  return engineering(frequency_hz, "Hz", {{1e9, "G"}, {1e6, "M"}, {1e3, "k"}, {1.0, ""}, {1e-3, "m"}});
}

std::string format_time(double seconds) {
  return engineering(seconds, "s", {{1.0, ""}, {1e-3, "m"}, {1e-6, "u"}, {1e-9, "n"}});
}

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

}  // namespace loopaudit
