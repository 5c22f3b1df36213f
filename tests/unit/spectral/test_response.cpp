#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/response.hpp"
#include "loopaudit/units.hpp"
#include "reference_data.hpp"

using namespace loopaudit;

TEST_CASE("random error of a response estimate follows Bendat and Piersol", "[spectral][response]") {
  // Bendat and Piersol, "Random Data", 4th ed., 2010, sec. 9.2.3:
  // eps = sqrt(1 - gamma^2) / (|gamma| sqrt(2 n_d)); values from data/reference/random_error.csv.
  const reference::Table values("random_error.csv");
  REQUIRE(values.rows().size() == 3);
  for (const auto& row : values.rows()) {
    const double coherence = row.number("coherence");
    const double averages = row.number("averages");
    INFO("gamma^2 = " << coherence << ", n_d = " << averages);
    CHECK(bendat_piersol_random_error(coherence, averages) == Approx(row.number("random_error")).margin(1e-7));
    CHECK(deg_from_rad(bendat_piersol_random_error(coherence, averages)) ==
          Approx(row.number("phase_std_deg")).margin(1e-4));
  }
}

namespace {

// y = g * x delayed by nothing plus noise: H is the constant g.
CrossSpectra simple_spectra(double g, double noise_rms, bool reference_is_x, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  const std::size_t n = 1 << 16;
  std::vector<double> r(n), x(n), y(n);
  for (std::size_t i = 0; i < n; ++i) {
    r[i] = normal(rng);
    x[i] = reference_is_x ? r[i] : r[i] + noise_rms * normal(rng);
    y[i] = g * (reference_is_x ? x[i] : r[i]) + noise_rms * normal(rng);
  }
  WelchOptions options;
  options.segment_length = 256;
  WelchAccumulator acc(3, options);
  const std::vector<std::span<const double>> views = {r, x, y};
  acc.push(views);
  return acc.finish(1.0);
}

}  // namespace

TEST_CASE("the reference method's uncertainty reduces to Bendat and Piersol's when r = x", "[spectral][response]") {
  const CrossSpectra s = simple_spectra(-2.0, 0.8, true, 11);
  Diagnostics findings;
  ResponseOptions reference_options;
  const Response by_reference = estimate_response(s, reference_options, findings);
  ResponseOptions two_channel_options;
  two_channel_options.estimator = Estimator::kTwoChannel;
  const Response by_h1 = estimate_response(s, two_channel_options, findings);
  REQUIRE(by_reference.size() == by_h1.size());
  for (std::size_t k = 0; k < by_h1.size(); ++k) {
    // Identity of the formulas (exact up to rounding).
    CHECK(by_reference.relative_sigma[k] == Approx(by_h1.relative_sigma[k]).epsilon(1e-9));
    CHECK(by_reference.value[k].real() == Approx(by_h1.value[k].real()).epsilon(1e-12));
  }
}

TEST_CASE("the reference method is unbiased with noise on both x and y", "[spectral][response]") {
  // Analytic: x = r + n1, y = g r + n2 gives S_ry/S_rx -> g; H1 = S_xy/S_xx is
  // biased low by 1/(1 + noise power) (Bendat and Piersol sec. 9.2).
  const double g = 3.0;
  const double noise_rms = 0.7;
  const CrossSpectra s = simple_spectra(g, noise_rms, false, 12);
  Diagnostics findings;
  const Response by_reference = estimate_response(s, {}, findings);
  double mean_reference = 0.0;
  double inside = 0.0;
  for (std::size_t k = 0; k < by_reference.size(); ++k) {
    mean_reference += by_reference.value[k].real() / static_cast<double>(by_reference.size());
    const double z = std::abs(std::log(by_reference.value[k] / g)) / by_reference.relative_sigma[k];
    if (z < 1.96) inside += 1.0 / static_cast<double>(by_reference.size());
  }
  // 127 lines of ~480 averages: the mean is within 1 %.
  CHECK(mean_reference == Approx(g).epsilon(0.01));
  // The per-line standard deviation is honest: about 95 % of |error| within 1.96 sigma
  // of the complex error's magnitude (chi with 2 degrees of freedom: P = 1 - exp(-1.96^2/2) = 0.854).
  CHECK(inside == Approx(1.0 - std::exp(-1.96 * 1.96 / 2.0)).margin(0.08));

  ResponseOptions two_channel_options;
  two_channel_options.estimator = Estimator::kTwoChannel;
  const Response by_h1 = estimate_response(s, two_channel_options, findings);
  double mean_h1 = 0.0;
  for (const auto& v : by_h1.value) mean_h1 += v.real() / static_cast<double>(by_h1.size());
  CHECK(mean_h1 == Approx(g / (1.0 + noise_rms * noise_rms)).epsilon(0.02));
  CHECK(findings.back().code == "spectral.two-channel-bias");
}

TEST_CASE("a flat reference is refused", "[spectral][response]") {
  const std::size_t n = 4096;
  std::vector<double> r(n, 1.0), x(n), y(n);
  std::mt19937_64 rng(5);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (std::size_t i = 0; i < n; ++i) x[i] = y[i] = normal(rng);
  WelchOptions options;
  options.segment_length = 256;
  WelchAccumulator acc(3, options);
  const std::vector<std::span<const double>> views = {r, x, y};
  acc.push(views);
  Diagnostics findings;
  CHECK_THROWS_AS(estimate_response(acc.finish(1.0), {}, findings), NumericalError);
}
