// Numbers for people: engineering prefixes with three significant digits.
#pragma once

#include <string>

namespace loopaudit {

std::string format_frequency(double frequency_hz);  // "4.83 kHz"
std::string format_time(double seconds);            // "31.2 us"
std::string format_fixed(double value, int digits);   // "46.1" for (46.12, 1)
std::string format_signed(double value, int digits);  // "+10.7", "-3.0"

}  // namespace loopaudit
