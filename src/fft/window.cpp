#include "loopaudit/fft/window.hpp"

#include <cmath>
#include <complex>
#include <numbers>
#include <numeric>

#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

std::vector<double> cosine_sum(std::vector<double> coefficients, std::size_t length) {
  std::vector<double> window(length);
  for (std::size_t n = 0; n < length; ++n) {
    const double phase = 2.0 * std::numbers::pi * static_cast<double>(n) / static_cast<double>(length);
    double value = 0.0;
    double sign = 1.0;
    for (std::size_t k = 0; k < coefficients.size(); ++k) {
      value += sign * coefficients[k] * std::cos(static_cast<double>(k) * phase);
      sign = -sign;
    }
    window[n] = value;
  }
  return window;
}

}  // namespace

WindowKind window_from_name(std::string_view name) { return value_of(kWindowNames, name, {"window"}); }

const char* window_name(WindowKind kind) { return name_of(kWindowNames, kind); }

std::vector<double> make_window(WindowKind kind, std::size_t length) {
  switch (kind) {
    case WindowKind::kRectangular: return std::vector<double>(length, 1.0);
    case WindowKind::kHann: return cosine_sum({0.5, 0.5}, length);
    case WindowKind::kHamming: return cosine_sum({0.54, 0.46}, length);
    case WindowKind::kBlackmanHarris: return cosine_sum({0.35875, 0.48829, 0.14128, 0.01168}, length);
  }
  return {};
}

WindowFigures window_figures(const std::vector<double>& window) {
  const double n = static_cast<double>(window.size());
  const double sum = std::accumulate(window.begin(), window.end(), 0.0);
  const double sum_squares = std::inner_product(window.begin(), window.end(), window.begin(), 0.0);
  std::complex<double> half_bin = 0.0;
  for (std::size_t i = 0; i < window.size(); ++i) {
    half_bin += window[i] * std::polar(1.0, -std::numbers::pi * static_cast<double>(i) / n);
  }
  return {sum / n, n * sum_squares / (sum * sum), -db_from_ratio(std::abs(half_bin) / sum)};
}

double overlap_correlation(const std::vector<double>& window, std::size_t shift) {
  double lagged = 0.0;
  double power = 0.0;
  for (std::size_t i = 0; i < window.size(); ++i) {
    power += window[i] * window[i];
    if (i + shift < window.size()) lagged += window[i] * window[i + shift];
  }
  return lagged / power;
}

}  // namespace loopaudit
