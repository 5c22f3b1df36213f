#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/sine_fit.hpp"
#include "reference_data.hpp"

using namespace loopaudit;

namespace {

std::vector<double> sine(std::size_t n, double f, double fs, double amplitude, double phase, double offset,
                         double noise = 0.0, unsigned seed = 1) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, noise > 0.0 ? noise : 1.0);
  std::vector<double> x(n);
  for (std::size_t i = 0; i < n; ++i) {
    x[i] = amplitude * std::cos(2.0 * std::numbers::pi * f * static_cast<double>(i) / fs + phase) + offset +
           (noise > 0.0 ? normal(rng) : 0.0);
  }
  return x;
}

double spread(const std::vector<double>& v) {
  double mean = 0.0;
  for (double x : v) mean += x / static_cast<double>(v.size());
  double sum = 0.0;
  for (double x : v) sum += (x - mean) * (x - mean);
  return std::sqrt(sum / static_cast<double>(v.size() - 1));
}

}  // namespace

TEST_CASE("a noise-free sine is recovered to rounding by both fits", "[spectral][sine]") {
  // IEEE Std 1057 fits on an exact sinusoid (data/reference/sine_fit.csv: about 1e-10).
  const auto x = sine(1000, 123.4, 10000.0, 1.7, 0.6, -0.3);
  const SineFit three = fit_sine_three(x, 123.4, 10000.0);
  CHECK(three.amplitude() == Approx(1.7).margin(1e-10));
  CHECK(std::arg(three.phasor()) == Approx(0.6).margin(1e-10));
  CHECK(three.offset == Approx(-0.3).margin(1e-10));
  CHECK(three.residual_rms < 1e-10);
  const SineFit four = fit_sine_four(x, 123.0, 10000.0);  // 0.3 % off to start
  CHECK(four.frequency_hz == Approx(123.4).epsilon(1e-10));
  CHECK(four.amplitude() == Approx(1.7).margin(1e-9));
  CHECK(std::arg(four.phasor()) == Approx(0.6).margin(1e-9));
}

TEST_CASE("with coherent sampling the three-parameter fit is the DFT bin", "[spectral][sine]") {
  // M whole cycles in N samples: A = (2/N) Re X[M], B = -(2/N) Im X[M], C = mean
  // (data/reference/sine_fit.csv, exact). The DFT bin is summed here directly.
  const std::size_t n = 512;
  const std::size_t m = 37;
  const auto x = sine(n, static_cast<double>(m), static_cast<double>(n), 0.8, -1.1, 0.25, 0.05, 9);
  std::complex<double> bin = 0.0;
  double mean = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    bin += x[i] * std::polar(1.0, -2.0 * std::numbers::pi * static_cast<double>(m * i) / static_cast<double>(n));
    mean += x[i] / static_cast<double>(n);
  }
  const SineFit fit = fit_sine_three(x, static_cast<double>(m), static_cast<double>(n));
  CHECK(fit.a == Approx(2.0 / n * bin.real()).margin(1e-12));
  CHECK(fit.b == Approx(-2.0 / n * bin.imag()).margin(1e-12));
  CHECK(fit.offset == Approx(mean).margin(1e-12));
}

TEST_CASE("the fits' spread is close to the Cramer-Rao bound", "[spectral][sine]") {
  // Kay, "Fundamentals of Statistical Signal Processing" vol. I, 1993, example 3.14
  // (from memory; values in data/reference/sine_fit.csv): N = 1000, A = 1, sigma = 0.1:
  // std(A) = 4.4721e-3 and std(phase) = 4.4721e-3 rad for the three-parameter fit,
  // 8.9376e-3 rad for the four-parameter fit (phase at n = 0). The spread is held
  // within 15 % of these; 400 trials estimate a standard deviation to about 3.5 %.
  const auto bound = reference::Table("sine_fit.csv").row("1000");
  const auto samples = static_cast<std::size_t>(bound.number("samples"));
  const double amplitude = bound.number("amplitude");
  const double sigma = bound.number("noise_sigma");
  const int trials = 400;
  std::vector<double> amplitude3, phase3, phase4, residual;
  for (int t = 0; t < trials; ++t) {
    const auto x = sine(samples, 50.3, 1000.0, amplitude, 0.4, 0.0, sigma, 100 + t);
    const SineFit three = fit_sine_three(x, 50.3, 1000.0);
    const SineFit four = fit_sine_four(x, 50.3, 1000.0);
    amplitude3.push_back(three.amplitude());
    phase3.push_back(std::arg(three.phasor()));
    phase4.push_back(std::arg(four.phasor()));
    residual.push_back(three.residual_rms);
  }
  CHECK(spread(amplitude3) == Approx(bound.number("std_amplitude")).epsilon(0.15));
  CHECK(spread(phase3) == Approx(bound.number("std_phase_three_param_rad")).epsilon(0.15));
  CHECK(spread(phase4) == Approx(bound.number("std_phase_four_param_rad")).epsilon(0.15));
  // The residual is the added noise's RMS: sigma times sqrt((N - 3)/N), within its sampling error (~2 %).
  double mean_residual = 0.0;
  for (double r : residual) mean_residual += r / trials;
  const double n = static_cast<double>(samples);
  CHECK(mean_residual == Approx(sigma * std::sqrt((n - 3.0) / n)).epsilon(0.01));
}

TEST_CASE("harmonics of a distorted sine are measured", "[spectral][sine]") {
  // Analytic: x = cos(w t) + 0.1 cos(2 w t) + 0.03 cos(3 w t).
  std::vector<double> x(4000);
  for (std::size_t n = 0; n < x.size(); ++n) {
    const double phase = 2.0 * std::numbers::pi * 100.0 * static_cast<double>(n) / 8000.0;
    x[n] = std::cos(phase) + 0.1 * std::cos(2 * phase) + 0.03 * std::cos(3 * phase + 1.0);
  }
  const auto h = harmonic_amplitudes(x, 100.0, 8000.0);
  REQUIRE(h.size() == 4);
  CHECK(h[0] == Approx(0.1).margin(1e-9));
  CHECK(h[1] == Approx(0.03).margin(1e-9));
  CHECK(h[2] == Approx(0.0).margin(1e-9));
}

TEST_CASE("sine fits refuse what they cannot fit", "[spectral][sine]") {
  const std::vector<double> x(100, 1.0);
  CHECK_THROWS_AS(fit_sine_three(std::span(x).first(3), 10.0, 1000.0), NumericalError);
  CHECK_THROWS_AS(fit_sine_three(x, 0.0, 1000.0), NumericalError);
  CHECK_THROWS_AS(fit_sine_three(x, 500.0, 1000.0), NumericalError);
}

TEST_CASE("a sine on a drifting baseline is recovered exactly by the fit with drift", "[spectral][sine]") {
  // x = A cos(w n + phi) + c0 + c1 u + c2 u^2: the quadratic drift lies in the
  // fit's column space, so the fit is exact to rounding; the plain
  // three-parameter fit takes part of the drift into the sine.
  const double fs = 10000.0, f = 87.3;
  auto x = sine(2000, f, fs, 0.8, -1.1, 0.0);
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double u = static_cast<double>(i) / static_cast<double>(x.size());
    x[i] += 0.3 + 2.0 * u - 1.5 * u * u;
  }
  std::vector<double> residual;
  const SineFit drift = fit_sine_with_drift(x, f, fs, 2, &residual);
  CHECK(drift.amplitude() == Approx(0.8).margin(1e-10));
  CHECK(std::arg(drift.phasor()) == Approx(-1.1).margin(1e-10));
  REQUIRE(residual.size() == x.size());
  double largest = 0.0;
  for (double r : residual) largest = std::max(largest, std::abs(r));
  CHECK(largest < 1e-10);
  // Without the drift columns the same record misleads the fit (proves the
  // check above can fail).
  const SineFit plain = fit_sine_three(x, f, fs);
  CHECK(std::abs(plain.amplitude() - 0.8) > 1e-3);
  CHECK_THROWS(fit_sine_with_drift(std::vector<double>(50, 0.0), f, fs, 2));
}
