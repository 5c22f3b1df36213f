// The Nyquist count against closed loops whose poles are known in closed form.
#include <catch2/catch.hpp>

#include "known_loops.hpp"
#include "loopaudit/analysis/nyquist.hpp"

using namespace loopaudit;

namespace {

StabilityAssessment assess(const LoopFunction& loop, double low_hz, double high_hz, int rhp_poles = 0) {
  return assess_stability(known::sample(loop, low_hz, high_hz, 200), {rhp_poles});
}

LoopFunction cubic(double gain) {
  return [gain](double f) {
    const auto s = known::s_of(f);
    return gain / (s * (s + 1.0) * (s + 2.0));
  };
}

LoopFunction first_order_unstable(double gain) {
  return [gain](double f) { return gain / (known::s_of(f) - 1.0); };
}

}  // namespace

TEST_CASE("every known loop is found stable", "[analysis][nyquist]") {
  // data/reference/known_loops.csv: each closed loop was checked stable by its poles.
  for (const auto& k : known::table()) {
    INFO(k.name);
    const auto a = assess(k.loop, k.low_hz, k.high_hz);
    CHECK(a.verdict == StabilityVerdict::kStable);
    CHECK(a.encirclements == 0);
    CHECK(a.closed_loop_rhp_poles == 0);
  }
}

TEST_CASE("K/(s(s+1)(s+2)) is stable below K = 6 and has two unstable poles above", "[analysis][nyquist]") {
  // Routh-Hurwitz on s^3 + 3 s^2 + 2 s + K: stable for 0 < K < 6; above 6 the
  // first column changes sign twice (two right-half-plane poles).
  const double low = known::hz(0.01), high = known::hz(100.0);
  CHECK(assess(cubic(5.5), low, high).verdict == StabilityVerdict::kStable);
  const auto unstable = assess(cubic(10.0), low, high);
  CHECK(unstable.verdict == StabilityVerdict::kUnstable);
  CHECK(unstable.encirclements == 2);
  CHECK(unstable.closed_loop_rhp_poles == 2);
  CHECK(unstable.low_frequency_integrators == 1);
}

TEST_CASE("an open-loop unstable pole is counted with P from the settings", "[analysis][nyquist]") {
  // L = K/(s - 1): the closed loop s - 1 + K is stable exactly when K > 1.
  const double low = known::hz(0.001), high = known::hz(100.0);
  const auto stabilised = assess(first_order_unstable(2.0), low, high, 1);
  CHECK(stabilised.verdict == StabilityVerdict::kStable);
  CHECK(stabilised.encirclements == -1);  // one counter-clockwise encirclement
  const auto weak = assess(first_order_unstable(0.5), low, high, 1);
  CHECK(weak.verdict == StabilityVerdict::kUnstable);
  CHECK(weak.closed_loop_rhp_poles == 1);
  // With P = 0 the count contradicts itself, and the verdict says so.
  const auto contradiction = assess(first_order_unstable(2.0), low, high, 0);
  CHECK(contradiction.verdict == StabilityVerdict::kUndecided);
  CHECK_THAT(contradiction.reason, Catch::Contains("cannot be"));
}

TEST_CASE("the discrete hold loop K T/(z(z-1)) is stable below K T = 1", "[analysis][nyquist]") {
  // z^2 - z + K T has both roots of modulus sqrt(K T): inside the unit circle
  // exactly when K T < 1. The band runs to half the 1 Hz sample rate.
  const auto loop = [](double kt) {
    return [kt](double f) { return kt / 0.5 * known::discrete_hold_loop(f); };
  };
  CHECK(assess(loop(0.5), 0.001, 0.5).verdict == StabilityVerdict::kStable);
  const auto unstable = assess(loop(1.5), 0.001, 0.5);
  CHECK(unstable.verdict == StabilityVerdict::kUnstable);
  CHECK(unstable.closed_loop_rhp_poles == 2);
}

TEST_CASE("a band too narrow to decide says so", "[analysis][nyquist]") {
  const auto short_top = assess(cubic(1.0), known::hz(0.01), known::hz(0.3));  // |L| > 1 at the top
  CHECK(short_top.verdict == StabilityVerdict::kUndecided);
  CHECK_THAT(short_top.reason, Catch::Contains("top of the band"));
  CHECK_FALSE(short_top.encirclements.has_value());
  const auto short_bottom = assess(cubic(1.0), known::hz(1.0), known::hz(100.0));  // |L| < 1 at the bottom, rising
  CHECK(short_bottom.verdict == StabilityVerdict::kUndecided);
  CHECK_THAT(short_bottom.reason, Catch::Contains("bottom of the band"));
}

TEST_CASE("a real-axis crossing within the line uncertainty of -1 is undecided", "[analysis][nyquist]") {
  // K = 5.7 puts the crossing at -0.95 (GM 0.45 dB); lines with 0.1 relative
  // sigma (0.87 dB) cannot tell on which side of -1 it passes.
  auto lines = known::sample(cubic(5.7), known::hz(0.01), known::hz(100.0), 200);
  for (double& s : lines.relative_sigma) s = 0.1;
  const auto a = assess_stability(lines);
  CHECK(a.verdict == StabilityVerdict::kUndecided);
  CHECK_THAT(a.reason, Catch::Contains("within the lines' noise of -1"));
}

TEST_CASE("a real-axis crossing far outside -1 is clear even with noisy lines", "[analysis][nyquist]") {
  // K = 30 puts the crossing at -5 (|L| 14 dB; closed form K/6 for this
  // cubic). Lines with 0.45 relative sigma (of ln |L|): two sigma span a
  // factor e^0.9 = 2.5, so -5 is clearly outside -1. A first-order bound
  // |L| (1 - 0.9) = 0.5 would have called it unclear.
  auto lines = known::sample(cubic(30.0), known::hz(0.01), known::hz(100.0), 200);
  for (double& s : lines.relative_sigma) s = 0.45;
  const auto a = assess_stability(lines);
  CHECK(a.verdict == StabilityVerdict::kUnstable);
  REQUIRE(a.closed_loop_rhp_poles);
  CHECK(*a.closed_loop_rhp_poles == 2);
}
