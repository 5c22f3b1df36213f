// Crossings judged on their own evidence, and intervals that mean something.
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <numbers>

#include "analysis/groups.hpp"
#include "loopaudit/analysis/margins.hpp"

namespace {

using loopaudit::Estimate;
using loopaudit::Interval;

// A conditionally stable loop (invented values): an integrator, a damped
// pole pair at 200 Hz (q 0.5), zeros at 1 and 2.5 kHz, poles at 60 and 120
// kHz and a 5 us delay. Its phase dips about 11 deg below -180 deg between
// about 300 Hz and 1.16 kHz while |L| is far above 1. Its crossings of
// -180 deg, from this formula on a 400000-point grid in numpy: 299.5 Hz
// (GM -53.0 dB), 1.162 kHz (-24.8 dB) and 26.26 kHz (+12.9 dB).
std::complex<double> conditional_loop(double f) {
  const std::complex<double> s(0.0, 2.0 * std::numbers::pi * f);
  const auto w = [](double hz) { return 2.0 * std::numbers::pi * hz; };
  std::complex<double> l = 2.6e6 / s;
  l /= 1.0 + s / (w(200.0) * 0.5) + (s / w(200.0)) * (s / w(200.0));
  l *= (1.0 + s / w(1000.0)) * (1.0 + s / w(2500.0));
  l /= (1.0 + s / w(60e3)) * (1.0 + s / w(120e3));
  return l * std::exp(-s * 5e-6);
}

}  // namespace

TEST_CASE("a shallow phase dip below -180 deg gives two crossovers each on its own evidence", "[analysis][margins]") {
  // Exact values, each line stated to 2 deg (0.035 relative): the dip's
  // floor lies 3 to 5 sigma below -180 deg. Noisy lines of this loop, where
  // noise crossings of the two merge, are in tests/e2e/test_evidence.py.
  loopaudit::Response r;
  for (int k = 0; k <= 180; ++k) {
    const double f = 100.0 * std::pow(10.0, k / 60.0);
    r.frequency_hz.push_back(f);
    r.value.push_back(conditional_loop(f));
    r.relative_sigma.push_back(2.0 * std::numbers::pi / 180.0);
  }
  const auto m = loopaudit::find_margins(r);
  REQUIRE(m.phase_crossovers.size() == 3);
  CHECK(m.phase_crossovers[0].frequency_hz.value == Approx(299.5).epsilon(0.03));
  CHECK(m.phase_crossovers[1].frequency_hz.value == Approx(1162.0).epsilon(0.03));
  CHECK(m.phase_crossovers[0].limits == loopaudit::GainDirection::kDecrease);
  CHECK(m.phase_crossovers[1].limits == loopaudit::GainDirection::kDecrease);
  CHECK(m.phase_crossovers[2].limits == loopaudit::GainDirection::kIncrease);
  REQUIRE(m.summary.gain_reduction_margin_db);
  CHECK(m.summary.gain_reduction_margin_db->value < -20.0);
}

TEST_CASE("intervals wider than a decade or than their margin's limit mean nothing", "[analysis][margins]") {
  using loopaudit::detail::too_wide;
  const Estimate frequency{1000.0, Interval{900.0, 1100.0}};
  const Estimate narrow_phase{45.0, Interval{40.0, 50.0}};
  CHECK_FALSE(too_wide(frequency, narrow_phase, loopaudit::detail::kMaxPhaseIntervalDeg, 3.0));
  // The weak recording's kind of interval: phase -55 to 168 deg.
  CHECK(too_wide(frequency, {56.0, Interval{-54.9, 167.8}}, loopaudit::detail::kMaxPhaseIntervalDeg, 3.0));
  // -577 dB to +600 dB of gain.
  CHECK(too_wide(frequency, {10.0, Interval{-577.0, 600.0}}, loopaudit::detail::kMaxGainIntervalDb, 3.0));
  // A frequency interval over a decade, or wider than a band of half a decade.
  CHECK(too_wide({1000.0, Interval{300.0, 3100.0}}, narrow_phase, loopaudit::detail::kMaxPhaseIntervalDeg, 3.0));
  CHECK(too_wide({1000.0, Interval{700.0, 2300.0}}, narrow_phase, loopaudit::detail::kMaxPhaseIntervalDeg, 0.5));
  // Exact values (no interval) always mean something.
  CHECK_FALSE(too_wide({1000.0, std::nullopt}, {1.0, std::nullopt}, loopaudit::detail::kMaxGainIntervalDb, 3.0));
}
