#include "loopaudit/record/jackknife.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

namespace loopaudit {
namespace {

// The continued fraction of the regularised incomplete beta I_x(a, b)
// (DLMF 8.17.22), evaluated by the modified Lentz method; converges fast
// for x < (a + 1)/(a + b + 2).
double beta_fraction(double a, double b, double x) {
  constexpr double kTiny = 1e-300;
  constexpr double kTolerance = 1e-15;
  double c = 1.0;
  double d = 1.0 - (a + b) * x / (a + 1.0);
  if (std::abs(d) < kTiny) d = kTiny;
  d = 1.0 / d;
  double result = d;
  for (int m = 1; m <= 1000; ++m) {
    const double m2 = 2.0 * m;
    for (int part = 0; part < 2; ++part) {
      const double numerator = part == 0 ? m * (b - m) * x / ((a + m2 - 1.0) * (a + m2))
                                         : -(a + m) * (a + b + m) * x / ((a + m2) * (a + m2 + 1.0));
      d = 1.0 + numerator * d;
      if (std::abs(d) < kTiny) d = kTiny;
      c = 1.0 + numerator / c;
      if (std::abs(c) < kTiny) c = kTiny;
      d = 1.0 / d;
      const double step = d * c;
      result *= step;
      if (part == 1 && std::abs(step - 1.0) < kTolerance) return result;
    }
  }
  return result;
}

// ln Gamma(z) minus its Stirling terms without the series:
// (z - 1/2) ln z - z + ln(2 pi)/2; the series to z^-5 is within 1e-16 for
// z >= 10 (DLMF 5.11.1).
double stirling_series(double z) {
  const double w = 1.0 / (z * z);
  return (1.0 / 12.0 - w * (1.0 / 360.0 - w / 1260.0)) / z;
}

// ln B(a, b) = ln Gamma(a) + ln Gamma(b) - ln Gamma(a + b). With one
// argument large, lgamma(a + b) - lgamma(a) cancels to a few digits (at a =
// 5e5, 1e-10 relative lost), so the difference is taken from Stirling's
// series instead: ln Gamma(a + b) - ln Gamma(a) = (a - 1/2) ln(1 + b/a) +
// b ln(a + b) - b + series(a + b) - series(a).
double log_beta(double a, double b) {
  const double big = std::max(a, b), small = std::min(a, b);
  if (big < 10.0) return std::lgamma(a) + std::lgamma(b) - std::lgamma(a + b);
  const double rise = (big - 0.5) * std::log1p(small / big) + small * std::log(big + small) - small +
                      stirling_series(big + small) - stirling_series(big);
  return std::lgamma(small) - rise;
}

// I_x(a, b), with y = 1 - x given separately so that x near 1 keeps its digits.
double regularized_beta(double a, double b, double x, double y) {
  if (x <= 0.0) return 0.0;
  if (y <= 0.0) return 1.0;
  const double front = std::exp(a * std::log(x) + b * std::log(y) - log_beta(a, b));
  if (x < (a + 1.0) / (a + b + 2.0)) return front * beta_fraction(a, b, x) / a;
  return 1.0 - front * beta_fraction(b, a, y) / b;
}

// P(T <= t) for Student's t with nu degrees of freedom.
double student_t_cdf(double t, double nu) {
  const double tail = 0.5 * regularized_beta(0.5 * nu, 0.5, nu / (nu + t * t), t * t / (nu + t * t));
  return t >= 0.0 ? 1.0 - tail : tail;
}

double normal_cdf(double z) { return 0.5 * std::erfc(-z / std::numbers::sqrt2); }

}  // namespace

JackknifeEstimate jackknife(double full_estimate, std::span<const double> replicates) {
  const std::size_t n = replicates.size();
  if (n < 2) throw std::invalid_argument("jackknife: needs at least two replicates");
  double mean = 0.0;
  for (double r : replicates) mean += r;
  mean /= static_cast<double>(n);
  double squares = 0.0;
  for (double r : replicates) squares += (r - mean) * (r - mean);
  const double groups = static_cast<double>(n);
  return {(groups - 1.0) / groups * squares, (groups - 1.0) * (mean - full_estimate), groups - 1.0};
}

double student_t_quantile(double probability, double degrees_of_freedom) {
  if (!(probability > 0.0 && probability < 1.0)) {
    throw std::invalid_argument("student_t_quantile: the probability must lie between 0 and 1");
  }
  if (!(degrees_of_freedom > 0.0)) throw std::invalid_argument("student_t_quantile: degrees of freedom must be positive");
  const bool normal = std::isinf(degrees_of_freedom);
  const auto cdf = [&](double t) { return normal ? normal_cdf(t) : student_t_cdf(t, degrees_of_freedom); };
  double low = -1.0, high = 1.0;
  while (cdf(low) > probability) low *= 2.0;
  while (cdf(high) < probability) high *= 2.0;
  for (int i = 0; i < 200 && high - low > 1e-14 * std::max(1.0, std::abs(low)); ++i) {
    const double mid = 0.5 * (low + high);
    (cdf(mid) < probability ? low : high) = mid;
  }
  return 0.5 * (low + high);
}

double two_sided_t(double confidence, double degrees_of_freedom) {
  return student_t_quantile(0.5 * (1.0 + confidence), degrees_of_freedom);
}

}  // namespace loopaudit
