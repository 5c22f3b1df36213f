#include "analysis/peaks.hpp"

#include <algorithm>
#include <cmath>
#include <complex>

#include "loopaudit/units.hpp"

namespace loopaudit::detail {
namespace {

// L near line k from local fits of Re L and Im L (interpolating for exact
// lines, smoothing for measured ones), with each part's fitted sigma.
struct LocalLoop {
  LocalFit re;
  LocalFit im;
  std::complex<double> at(double u) const { return {re.at(u), im.at(u)}; }
  // First-order sigma of |g(L)| at u, given g and dg/dL there: |g| moves by
  // Re(w dL) with w = conj(g)/|g| * dg/dL, and dL = d(Re L) + i d(Im L).
  // Never below what the nearest line's own sigma (absolute, `line_sigma`)
  // gives: neighbouring lines' errors are correlated (see curve_sigma).
  double sigma_of_modulus(double u, std::complex<double> g, std::complex<double> dg_dl, double line_sigma) const {
    const std::complex<double> w = std::conj(g) / std::abs(g) * dg_dl;
    return std::max(std::hypot(w.real() * re.sigma_at(u), w.imag() * im.sigma_at(u)), std::abs(dg_dl) * line_sigma);
  }
};

// The absolute standard deviation of L at line k (each of Re and Im).
double line_sigma(const LineTable& table, std::size_t k) { return table.relative_sigma[k] * std::abs(table.value[k]); }

LocalLoop local_loop(const LineTable& table, std::size_t k, const MarginOptions& options) {
  const bool measured = table.relative_sigma[k] > 0.0;
  const Window w = window_around(k, k, measured ? options.peak_half_width : options.fit_half_width, table.size());
  std::vector<double> re(table.size()), im(table.size()), sigmas(table.size());
  for (std::size_t i = w.first; i <= w.last; ++i) {
    re[i] = table.value[i].real();
    im[i] = table.value[i].imag();
    sigmas[i] = line_sigma(table, i);
  }
  const int degree = detail::fit_degree(table.relative_sigma, w.first, w.last);
  return {detail::fit_local(table.log_f, re, sigmas, w.first, w.last, degree),
          detail::fit_local(table.log_f, im, sigmas, w.first, w.last, degree)};
}

// The line where `measure` of L is largest, and the log frequency between its
// neighbours where the local fit of L makes it largest.
template <typename Measure>
std::pair<std::size_t, double> peak_of(const LineTable& table, const MarginOptions& options, Measure measure,
                                       LocalLoop* fitted) {
  std::size_t k = 0;
  for (std::size_t i = 1; i < table.size(); ++i) {
    if (measure(table.value[i]) > measure(table.value[k])) k = i;
  }
  if (k == 0 || k + 1 == table.size() || table.size() < 4) return {k, table.log_f[k]};
  *fitted = local_loop(table, k, options);
  const auto negative = [&](double u) { return -measure(fitted->at(u)); };
  return {k, detail::golden_minimum(negative, table.log_f[k - 1], table.log_f[k + 1])};
}

}  // namespace

ModulusPoint modulus_point(const LineTable& table, const MarginOptions& options) {
  const auto closeness = [](std::complex<double> l) { return -std::abs(1.0 + l); };
  LocalLoop fit;
  const auto [k, u] = peak_of(table, options, closeness, &fit);
  const bool edge = k == 0 || k + 1 == table.size() || table.size() < 4;
  ModulusPoint point{std::pow(10.0, u), {std::abs(1.0 + table.value[k]), std::nullopt}, {}, edge};
  if (!edge) {
    const std::complex<double> l = fit.at(u);
    // An exact table's minimum cannot lie above a line; a measured one is
    // read off the fit alone, since the smallest noisy line is biased low.
    const bool measured = table.relative_sigma[k] > 0.0;
    const double s_m = measured ? std::abs(1.0 + l) : std::min(std::abs(1.0 + l), std::abs(1.0 + table.value[k]));
    const double sigma = fit.sigma_of_modulus(u, 1.0 + l, 1.0, line_sigma(table, k));
    point.modulus_margin = {s_m, interval(s_m, sigma, two_sided_z(options.confidence))};
    const auto& ci = point.modulus_margin.interval;
    if (ci && ci->low > 0.0) point.peak_sensitivity_db.interval = Interval{-db_from_ratio(ci->high), -db_from_ratio(ci->low)};
  }
  point.peak_sensitivity_db.value = -db_from_ratio(point.modulus_margin.value);
  return point;
}

// The largest |S - T| = |(1 - L)/(1 + L)| over the band.
DiskMargin disk_point(const LineTable& table, const MarginOptions& options) {
  const auto spread = [](std::complex<double> l) { return std::abs((1.0 - l) / (1.0 + l)); };
  LocalLoop fit;
  const auto [k, u] = peak_of(table, options, spread, &fit);
  const bool edge = k == 0 || k + 1 == table.size() || table.size() < 4;
  // As for the modulus margin: a measured peak is read off the fit alone.
  const bool measured = table.relative_sigma[k] > 0.0;
  const double peak = edge       ? spread(table.value[k])
                      : measured ? spread(fit.at(u))
                                 : std::max(spread(fit.at(u)), spread(table.value[k]));
  DiskMargin disk = disk_margin_from_peak(peak, std::pow(10.0, u), edge);
  if (edge) return disk;
  // d/dL (1 - L)/(1 + L) = -2 / (1 + L)^2
  const std::complex<double> l = fit.at(u);
  const double sigma =
      fit.sigma_of_modulus(u, (1.0 - l) / (1.0 + l), -2.0 / ((1.0 + l) * (1.0 + l)), line_sigma(table, k));
  const auto peak_ci = interval(peak, sigma, two_sided_z(options.confidence));
  if (peak_ci && peak_ci->low > 0.0) {
    // alpha = 2 / peak, and the guaranteed ranges grow with alpha.
    const DiskMargin least = disk_margin_from_peak(peak_ci->high, disk.frequency_hz, edge);
    const DiskMargin most = disk_margin_from_peak(peak_ci->low, disk.frequency_hz, edge);
    disk.alpha.interval = Interval{least.alpha.value, most.alpha.value};
    disk.phase_deg.interval = Interval{least.phase_deg.value, most.phase_deg.value};
    if (std::isfinite(least.gain_high_db.value)) {
      disk.gain_high_db.interval = Interval{least.gain_high_db.value, most.gain_high_db.value};
    }
  }
  return disk;
}

}  // namespace loopaudit::detail

namespace loopaudit {

DiskMargin disk_margin_from_peak(double peak, double frequency_hz, bool at_band_edge) {
  DiskMargin d;
  const double alpha = 2.0 / peak;
  d.alpha.value = alpha;
  d.frequency_hz = frequency_hz;
  d.at_band_edge = at_band_edge;
  // At alpha = 2 (to rounding) the disk admits any gain increase.
  const bool unbounded = alpha >= 2.0 * (1.0 - 1e-9);
  d.gain_low_db = unbounded ? -INFINITY : db_from_ratio((2.0 - alpha) / (2.0 + alpha));
  d.gain_high_db.value = unbounded ? INFINITY : db_from_ratio((2.0 + alpha) / (2.0 - alpha));
  d.phase_deg.value = deg_from_rad(2.0 * std::atan(alpha / 2.0));
  return d;
}

}  // namespace loopaudit
