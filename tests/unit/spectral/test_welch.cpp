#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/welch.hpp"

using namespace loopaudit;

namespace {

CrossSpectra spectra_of(const std::vector<std::vector<double>>& channels, const WelchOptions& options,
                        std::size_t chunk, double sample_rate_hz) {
  WelchAccumulator acc(channels.size(), options);
  const std::size_t total = channels.front().size();
  for (std::size_t start = 0; start < total; start += chunk) {
    const std::size_t count = std::min(chunk, total - start);
    std::vector<std::span<const double>> views;
    for (const auto& c : channels) views.emplace_back(c.data() + start, count);
    acc.push(views);
  }
  return acc.finish(sample_rate_hz);
}

std::vector<double> noise(std::size_t n, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> v(n);
  for (double& x : v) x = normal(rng);
  return v;
}

}  // namespace

TEST_CASE("streaming in any chunk size gives the same spectra as one push", "[spectral][welch]") {
  // Oracle: one push of the whole record.
  const std::vector<std::vector<double>> channels = {noise(20000, 1), noise(20000, 2)};
  WelchOptions options;
  options.segment_length = 512;
  const CrossSpectra whole = spectra_of(channels, options, 20000, 1000.0);
  for (std::size_t chunk : {1, 7, 511, 512, 513, 4096}) {
    const CrossSpectra parts = spectra_of(channels, options, chunk, 1000.0);
    REQUIRE(parts.segments == whole.segments);
    for (std::size_t p = 0; p < whole.pairs.size(); ++p) {
      for (std::size_t k = 0; k < whole.line_count(); ++k) {
        CHECK(std::abs(parts.pairs[p][k] - whole.pairs[p][k]) <= 1e-12 * std::abs(whole.pairs[p][k]) + 1e-300);
      }
    }
  }
}

TEST_CASE("segment count follows the step", "[spectral][welch]") {
  WelchOptions options;
  options.segment_length = 100;
  options.overlap = 0.5;
  const auto s = spectra_of({noise(1000, 3)}, options, 333, 1.0);
  CHECK(s.segments == (1000 - 100) / 50 + 1);
}

TEST_CASE("a bin-centred tone's density times the noise bandwidth is its power", "[spectral][welch]") {
  // Analytic: S(k0) = (A^2/2) / (ENBW_bins fs / N) for a tone on bin k0
  // (density scaling; ENBW as defined in data/reference/windows.csv).
  const double fs = 1000.0;
  const std::size_t n = 256;
  const std::size_t k0 = 32;
  const double amplitude = 1.7;
  std::vector<double> tone(n * 20);
  for (std::size_t i = 0; i < tone.size(); ++i) {
    tone[i] = amplitude * std::cos(2.0 * std::numbers::pi * static_cast<double>(k0 * i) / static_cast<double>(n) + 0.3);
  }
  for (WindowKind kind : {WindowKind::kHann, WindowKind::kHamming, WindowKind::kBlackmanHarris, WindowKind::kRectangular}) {
    WelchOptions options;
    options.window = kind;
    options.segment_length = n;
    const CrossSpectra s = spectra_of({tone}, options, tone.size(), fs);
    const double enbw_hz = window_figures(make_window(kind, n)).enbw_bins * fs / static_cast<double>(n);
    CHECK(s.at(0, 0)[k0].real() * enbw_hz == Approx(amplitude * amplitude / 2.0).epsilon(1e-9));
    CHECK(s.frequency_hz(k0) == Approx(fs * k0 / n));
  }
}

TEST_CASE("white noise density averages to 2 sigma^2 / fs", "[spectral][welch]") {
  // Analytic one-sided density of white noise with variance sigma^2.
  const double fs = 2000.0;
  const auto x = noise(1 << 18, 4);
  WelchOptions options;
  options.segment_length = 1024;
  const CrossSpectra s = spectra_of({x}, options, 65536, fs);
  double mean = 0.0;
  for (std::size_t k = 1; k + 1 < s.line_count(); ++k) mean += s.at(0, 0)[k].real();
  mean /= static_cast<double>(s.line_count() - 2);
  // 511 lines of ~480 effective averages each: the mean is within 0.5 % (about 3.5 standard errors).
  CHECK(mean == Approx(2.0 / fs).epsilon(0.005));
}

TEST_CASE("bad Welch settings are refused", "[spectral][welch]") {
  WelchOptions options;
  options.segment_length = 4;
  CHECK_THROWS_AS(options.validate(), ConfigError);
  options.segment_length = 64;
  options.overlap = 0.95;
  CHECK_THROWS_AS(options.validate(), ConfigError);
  options.overlap = 0.5;
  WelchAccumulator acc(1, options);
  CHECK_THROWS_AS(acc.finish(1.0), NumericalError);
}
