#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/stepped.hpp"

using namespace loopaudit;

namespace {

constexpr double kFs = 10000.0;

// Two dwells of invented signals: y = g x with x = the injection, plus a
// second harmonic in y of `harmonic` times its fundamental, and noise.
Response run(double harmonic, std::size_t dwell_samples, Diagnostics& findings) {
  const double g = 0.5;
  const double frequencies[] = {100.0, 400.0};
  std::mt19937_64 rng(8);
  std::normal_distribution<double> noise(0.0, 0.001);
  std::vector<double> z, x, y;
  std::vector<Dwell> dwells;
  for (double f : frequencies) {
    dwells.push_back({z.size(), z.size() + dwell_samples, f * 1.001});  // detection is never exact
    for (std::size_t n = 0; n < dwell_samples; ++n) {
      const double phase = 2.0 * std::numbers::pi * f * static_cast<double>(n) / kFs;
      z.push_back(std::cos(phase) + noise(rng));
      x.push_back(std::cos(phase) + noise(rng));
      y.push_back(g * std::cos(phase - 0.3) + harmonic * g * std::cos(2.0 * phase) + noise(rng));
    }
  }
  SteppedSineEstimator estimator({dwells, kFs, 3.0, 0.0, 0.05});
  const std::vector<std::span<const double>> views = {z, x, y};
  estimator.push(views, 0);
  return estimator.finish(findings);
}

bool has(const Diagnostics& findings, const std::string& code) {
  for (const auto& d : findings) {
    if (d.code == code) return true;
  }
  return false;
}

}  // namespace

TEST_CASE("one line per dwell with the ratio of the fitted phasors", "[spectral][stepped]") {
  Diagnostics findings;
  const Response r = run(0.0, 5000, findings);
  REQUIRE(r.size() == 2);
  // Analytic: Y/X = 0.5 e^{-0.3 j} at both frequencies, refined to 100 and 400 Hz.
  for (std::size_t k = 0; k < 2; ++k) {
    CHECK(std::abs(r.value[k]) == Approx(0.5).epsilon(1e-3));
    CHECK(std::arg(r.value[k]) == Approx(-0.3).margin(1e-3));
  }
  CHECK(r.frequency_hz[0] == Approx(100.0).epsilon(1e-6));
  CHECK(findings.empty());
}

TEST_CASE("harmonics above 5 % are reported as distortion and below it are not", "[spectral][stepped]") {
  Diagnostics clean, distorted;
  run(0.02, 5000, clean);
  run(0.10, 5000, distorted);
  CHECK_FALSE(has(clean, "excitation.distortion"));
  CHECK(has(distorted, "excitation.distortion"));
}

TEST_CASE("dwells too short for settling plus one cycle are left out and reported", "[spectral][stepped]") {
  // 100 Hz at 10 kHz: 3 settling cycles take 300 samples, one more cycle 100.
  Diagnostics findings;
  const Response r = run(0.0, 350, findings);
  CHECK(r.size() == 1);  // the 400 Hz dwell still fits
  CHECK(has(findings, "excitation.dwell-too-short"));
}
