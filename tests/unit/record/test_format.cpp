#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <string>

#include "loopaudit/format.hpp"

using namespace loopaudit;

namespace {

std::string interval(Quantity q, double low, double high, const std::vector<double>& beside = {}) {
  return format_interval(interval_style(q, low, high, beside), low, high);
}

}  // namespace

TEST_CASE("lone values keep their usual look", "[record][format]") {
  CHECK(format_frequency(37100.0) == "37.1 kHz");
  CHECK(format_time(3.45e-6) == "3.45 us");
  CHECK(format_frequency(0.0) == "0 Hz");
  CHECK(value_style(Quantity::kFrequency, 37120.0)(37120.0) == "37.1 kHz");
  CHECK(value_style(Quantity::kTime, 1.1e-3)(1.1e-3) == "1.10 ms");
  CHECK(value_style(Quantity::kFrequency, 999.97)(999.97) == "1.00 kHz");
  CHECK(value_style(Quantity::kSignedGain, 10.7)(10.7) == "+10.7 dB");
  CHECK(value_style(Quantity::kAngle, -0.04)(-0.04) == "0.0 deg");
  CHECK(value_style(Quantity::kRatio, 0.5971)(0.5971) == "0.597");
  CHECK(value_style(Quantity::kGain, 1.0)(std::numeric_limits<double>::infinity()) == "unbounded");
}

TEST_CASE("an interval has one unit for both ends from the larger one", "[record][format]") {
  // The case of the issue: 981 us and 1.1 ms printed in two units.
  CHECK(interval(Quantity::kTime, 981e-6, 1.1e-3) == "0.98 ms to 1.10 ms");
  CHECK(interval(Quantity::kFrequency, 980.0, 1040.0) == "0.98 kHz to 1.04 kHz");
  CHECK(interval(Quantity::kFrequency, 36.5e3, 37.8e3) == "36.5 kHz to 37.8 kHz");
}

TEST_CASE("interval digits follow its width by the two-digit rule", "[record][format]") {
  // Width 1.6 Hz (leading digits 160: two significant digits) at 150 Hz.
  CHECK(interval(Quantity::kFrequency, 149.13, 150.77) == "149.1 Hz to 150.8 Hz");
  // Width 12 Hz: three significant digits already show it.
  CHECK(interval(Quantity::kFrequency, 144.2, 156.3) == "144 Hz to 156 Hz");
  // Width 0.5 dB (leading digits 500: one significant digit): the usual look.
  CHECK(interval(Quantity::kSignedGain, 10.52, 11.02) == "+10.5 dB to +11.0 dB");
  // Width 0.13 dB: two significant digits need a second decimal.
  CHECK(interval(Quantity::kGain, 3.391, 3.521) == "3.39 dB to 3.52 dB");
  // Ends that differ print differently, up to the limit of extra decimals.
  CHECK(interval(Quantity::kAngle, 46.1001, 46.1009) == "46.1001 deg to 46.1009 deg");
  // Ends that are equal stay equal; an unbounded end takes no part.
  CHECK(interval(Quantity::kAngle, 46.1, 46.1) == "46.1 deg to 46.1 deg");
  CHECK(interval(Quantity::kGain, 16.13, std::numeric_limits<double>::infinity()) == "16.1 dB to unbounded");
}

TEST_CASE("a value outside an interval never prints as the end next to it", "[record][format]") {
  // Width 5 Hz gives 149 Hz to 154 Hz; the truth at 148.7 Hz would print as 149 Hz.
  const NumberStyle style = interval_style(Quantity::kFrequency, 149.2, 154.2, {148.7});
  CHECK(format_interval(style, 149.2, 154.2) == "149.2 Hz to 154.2 Hz");
  CHECK(style(148.7) == "148.7 Hz");
  // Inside the interval no digit is added for it.
  CHECK(interval(Quantity::kFrequency, 149.2, 154.2, {149.21}) == "149 Hz to 154 Hz");
  // A value that differs only past the extra decimals leaves the style at its limit.
  const NumberStyle limit = interval_style(Quantity::kAngle, 10.0, 12.0, {12.0 + 1e-9});
  CHECK(limit.decimals == 1 + kMaxExtraDecimals);
}

TEST_CASE("a frequency range whose ends print alike is one frequency", "[format]") {
  CHECK(format_frequency_range(2130.0, 2131.0) == "2.13 kHz");
  CHECK(format_frequency_range(2130.0, 2500.0) == "2.13 kHz to 2.5 kHz");
}
