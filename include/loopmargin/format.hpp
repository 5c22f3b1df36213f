// Numbers for people: engineering prefixes with three significant digits.
#pragma once

#include <string>

namespace loopmargin {

std::string format_frequency(double frequency_hz);  // "4.83 kHz"
std::string format_time(double seconds);            // "31.2 us"

}  // namespace loopmargin
