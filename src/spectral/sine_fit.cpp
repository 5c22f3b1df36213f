#include "loopaudit/spectral/sine_fit.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <numbers>

#include "loopaudit/error.hpp"

namespace loopaudit {
namespace {

constexpr std::size_t kMinSamples = 4;

void check(std::size_t samples, double frequency_hz, double sample_rate_hz) {
  if (samples < kMinSamples) throw NumericalError("a sine fit needs at least 4 samples");
  if (!(frequency_hz > 0.0 && frequency_hz < sample_rate_hz / 2.0)) {
    throw NumericalError("a sine fit needs a frequency between DC and Nyquist");
  }
}

double omega_per_sample(double frequency_hz, double sample_rate_hz) {
  return 2.0 * std::numbers::pi * frequency_hz / sample_rate_hz;
}

// Normal equations of the columns; the 3x3 (or 4x4) systems are small and
// well conditioned away from DC and Nyquist.
SineFit solve_three(std::span<const double> x, double frequency_hz, double sample_rate_hz) {
  const double w = omega_per_sample(frequency_hz, sample_rate_hz);
  Eigen::Matrix3d normal = Eigen::Matrix3d::Zero();
  Eigen::Vector3d right = Eigen::Vector3d::Zero();
  for (std::size_t n = 0; n < x.size(); ++n) {
    const Eigen::Vector3d column(std::cos(w * static_cast<double>(n)), std::sin(w * static_cast<double>(n)), 1.0);
    normal += column * column.transpose();
    right += column * x[n];
  }
  const Eigen::Vector3d p = normal.ldlt().solve(right);
  SineFit fit{frequency_hz, p(0), p(1), p(2), 0.0, x.size()};
  double sum_squares = 0.0;
  for (std::size_t n = 0; n < x.size(); ++n) {
    const double model = p(0) * std::cos(w * static_cast<double>(n)) + p(1) * std::sin(w * static_cast<double>(n)) + p(2);
    sum_squares += (x[n] - model) * (x[n] - model);
  }
  fit.residual_rms = std::sqrt(sum_squares / static_cast<double>(x.size()));
  return fit;
}

}  // namespace

SineFit fit_sine_three(std::span<const double> x, double frequency_hz, double sample_rate_hz) {
  check(x.size(), frequency_hz, sample_rate_hz);
  return solve_three(x, frequency_hz, sample_rate_hz);
}

SineFit fit_sine_four(std::span<const double> x, double frequency_guess_hz, double sample_rate_hz, int iterations) {
  check(x.size(), frequency_guess_hz, sample_rate_hz);
  SineFit fit = solve_three(x, frequency_guess_hz, sample_rate_hz);
  double w = omega_per_sample(fit.frequency_hz, sample_rate_hz);
  for (int i = 0; i < iterations; ++i) {
    // Columns cos, sin, 1 and the derivative in w: -a n sin + b n cos (IEEE 1057, four-parameter fit).
    Eigen::Matrix4d normal = Eigen::Matrix4d::Zero();
    Eigen::Vector4d right = Eigen::Vector4d::Zero();
    for (std::size_t n = 0; n < x.size(); ++n) {
      const double t = static_cast<double>(n);
      const double c = std::cos(w * t), s = std::sin(w * t);
      const Eigen::Vector4d column(c, s, 1.0, t * (-fit.a * s + fit.b * c));
      normal += column * column.transpose();
      right += column * x[n];
    }
    const Eigen::Vector4d p = normal.ldlt().solve(right);
    const double step = p(3);
    fit.a = p(0);
    fit.b = p(1);
    fit.offset = p(2);
    w += step;
    if (!(w > 0.0 && w < std::numbers::pi)) throw NumericalError("the four-parameter sine fit left the band");
    if (std::abs(step) < 1e-12 * w) break;
  }
  fit = solve_three(x, w * sample_rate_hz / (2.0 * std::numbers::pi), sample_rate_hz);
  return fit;
}

SineFit fit_sine_with_drift(std::span<const double> x, double frequency_hz, double sample_rate_hz, int drift_order,
                            std::vector<double>* residual) {
  check(x.size(), frequency_hz, sample_rate_hz);
  if (drift_order < 0 || drift_order > 4) throw NumericalError("a drift polynomial of order 0 to 4 is supported");
  const std::size_t count = x.size();
  if (drift_order > 0 && static_cast<double>(count) * frequency_hz / sample_rate_hz < 1.0) {
    throw NumericalError("a sine fit with drift needs at least one whole cycle");
  }
  const double w = omega_per_sample(frequency_hz, sample_rate_hz);
  const auto columns = static_cast<Eigen::Index>(3 + drift_order);
  // The polynomial in u = -1 .. 1 over the record, for conditioning.
  const double half = 0.5 * static_cast<double>(count - 1);
  const auto column = [&](std::size_t n, Eigen::VectorXd& c) {
    const double t = static_cast<double>(n);
    c(0) = std::cos(w * t);
    c(1) = std::sin(w * t);
    const double u = half > 0.0 ? (t - half) / half : 0.0;
    double power = 1.0;
    for (Eigen::Index k = 2; k < columns; ++k, power *= u) c(k) = power;
  };
  Eigen::MatrixXd normal = Eigen::MatrixXd::Zero(columns, columns);
  Eigen::VectorXd right = Eigen::VectorXd::Zero(columns);
  Eigen::VectorXd c(columns);
  for (std::size_t n = 0; n < count; ++n) {
    column(n, c);
    normal.selfadjointView<Eigen::Lower>().rankUpdate(c);
    right += c * x[n];
  }
  const Eigen::VectorXd p = normal.selfadjointView<Eigen::Lower>().ldlt().solve(right);
  SineFit fit{frequency_hz, p(0), p(1), p(2), 0.0, count};
  if (residual) residual->resize(count);
  double sum_squares = 0.0;
  for (std::size_t n = 0; n < count; ++n) {
    column(n, c);
    const double e = x[n] - c.dot(p);
    if (residual) (*residual)[n] = e;
    sum_squares += e * e;
  }
  fit.residual_rms = std::sqrt(sum_squares / static_cast<double>(count));
  return fit;
}

std::vector<double> harmonic_amplitudes(std::span<const double> x, double f0_hz, double sample_rate_hz, int highest) {
  std::vector<double> out;
  for (int k = 2; k <= highest; ++k) {
    const double f = k * f0_hz;
    out.push_back(f < sample_rate_hz / 2.0 ? solve_three(x, f, sample_rate_hz).amplitude() : 0.0);
  }
  return out;
}

}  // namespace loopaudit
