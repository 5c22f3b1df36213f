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

double closeness(std::complex<double> l) { return -std::abs(1.0 + l); }
double spread(std::complex<double> l) { return std::abs((1.0 - l) / (1.0 + l)); }

// The line where `measure` of L is largest.
template <typename Measure>
std::size_t extreme_line(const LineTable& table, Measure measure) {
  std::size_t k = 0;
  for (std::size_t i = 1; i < table.size(); ++i) {
    if (measure(table.value[i]) > measure(table.value[k])) k = i;
  }
  return k;
}

bool at_edge(const LineTable& table, std::size_t k) { return k == 0 || k + 1 == table.size() || table.size() < 4; }

// A peak at line k: the log frequency between its neighbours where the local
// fit of L makes `measure` largest, and the fit.
template <typename Measure>
std::pair<double, LocalLoop> refined(const LineTable& table, std::size_t k, const MarginOptions& options,
                                     Measure measure) {
  LocalLoop fit = local_loop(table, k, options);
  const auto negative = [&](double u) { return -measure(fit.at(u)); };
  return {detail::golden_minimum(negative, table.log_f[k - 1], table.log_f[k + 1]), std::move(fit)};
}

// The largest `measure` near line k: a measured peak is read off the fit
// alone, since the most extreme noisy line is biased; an exact table's
// cannot lie below a line.
template <typename Measure>
double peak_value(const LineTable& table, std::size_t k, const MarginOptions& options, Measure measure) {
  if (at_edge(table, k)) return measure(table.value[k]);
  const auto [u, fit] = refined(table, k, options, measure);
  const double fitted = measure(fit.at(u));
  return table.relative_sigma[k] > 0.0 ? fitted : std::max(fitted, measure(table.value[k]));
}

}  // namespace

std::size_t modulus_line(const LineTable& table) { return extreme_line(table, closeness); }
std::size_t disk_line(const LineTable& table) { return extreme_line(table, spread); }
double modulus_at(const LineTable& table, std::size_t k, const MarginOptions& options) {
  return -peak_value(table, k, options, closeness);
}
double disk_alpha_at(const LineTable& table, std::size_t k, const MarginOptions& options) {
  return 2.0 / peak_value(table, k, options, spread);
}

ModulusPoint modulus_point(const LineTable& table, const MarginOptions& options) {
  const std::size_t k = modulus_line(table);
  const bool edge = at_edge(table, k);
  const double s_m = modulus_at(table, k, options);
  ModulusPoint point{std::pow(10.0, table.log_f[k]), {s_m, std::nullopt}, {}, edge};
  if (!edge) {
    const auto [u, fit] = refined(table, k, options, closeness);
    point.frequency_hz = std::pow(10.0, u);
    const std::complex<double> l = fit.at(u);
    const double sigma = fit.sigma_of_modulus(u, 1.0 + l, 1.0, line_sigma(table, k));
    point.modulus_margin.interval = interval(s_m, sigma, two_sided_z(options.confidence));
  }
  set_peak_sensitivity(point);
  return point;
}

void set_peak_sensitivity(ModulusPoint& point) {
  point.peak_sensitivity_db = {-db_from_ratio(point.modulus_margin.value), std::nullopt};
  const auto& ci = point.modulus_margin.interval;
  if (ci && ci->low > 0.0) point.peak_sensitivity_db.interval = Interval{-db_from_ratio(ci->high), -db_from_ratio(ci->low)};
}

// The largest |S - T| = |(1 - L)/(1 + L)| over the band.
DiskMargin disk_point(const LineTable& table, const MarginOptions& options) {
  const std::size_t k = disk_line(table);
  const bool edge = at_edge(table, k);
  const double alpha = disk_alpha_at(table, k, options);
  if (edge) return disk_margin_from_peak(2.0 / alpha, std::pow(10.0, table.log_f[k]), edge);
  const auto [u, fit] = refined(table, k, options, spread);
  DiskMargin disk = disk_margin_from_peak(2.0 / alpha, std::pow(10.0, u), edge);
  // d/dL (1 - L)/(1 + L) = -2 / (1 + L)^2; alpha = 2 / peak moves by 2/peak^2 times the peak's move.
  const std::complex<double> l = fit.at(u);
  const double peak_sigma =
      fit.sigma_of_modulus(u, (1.0 - l) / (1.0 + l), -2.0 / ((1.0 + l) * (1.0 + l)), line_sigma(table, k));
  const double peak = 2.0 / alpha;
  const auto peak_ci = interval(peak, peak_sigma, two_sided_z(options.confidence));
  if (peak_ci && peak_ci->low > 0.0) set_disk_interval(disk, Interval{2.0 / peak_ci->high, 2.0 / peak_ci->low});
  return disk;
}

void set_disk_interval(DiskMargin& disk, Interval alpha) {
  if (!(alpha.low > 0.0)) return;
  // The guaranteed ranges grow with alpha.
  const DiskMargin least = disk_margin_from_peak(2.0 / alpha.low, disk.frequency_hz, disk.at_band_edge);
  const DiskMargin most = disk_margin_from_peak(2.0 / alpha.high, disk.frequency_hz, disk.at_band_edge);
  disk.alpha.interval = alpha;
  disk.phase_deg.interval = Interval{least.phase_deg.value, most.phase_deg.value};
  disk.gain_high_db.interval.reset();
  if (std::isfinite(least.gain_high_db.value)) {
    disk.gain_high_db.interval = Interval{least.gain_high_db.value, most.gain_high_db.value};
  }
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
