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

// Measured lines: the lines within kPeakDecades of line k on each side, at
// least options.fit_half_width and at most options.peak_half_width; exact
// lines: options.fit_half_width. A wider fit smooths the noise of dense
// lines, but over sparse lines (a stepped sine's, 5 % apart) a quadratic
// across a resonance misses its peak: on the calibration check's resonant
// loop, nine lines spanning 0.16 decades read the modulus margin 2 % high,
// thirteen times its standard error.
constexpr double kPeakDecades = 0.03;

Window peak_window(const LineTable& table, std::size_t k, const MarginOptions& options) {
  if (!(table.relative_sigma[k] > 0.0)) return window_around(k, k, options.fit_half_width, table.size());
  std::size_t first = k, last = k;
  const auto within = [&](std::size_t i) { return std::abs(table.log_f[i] - table.log_f[k]) <= kPeakDecades; };
  for (std::size_t n = 0; n < options.peak_half_width && first > 0 && (n < options.fit_half_width || within(first - 1)); ++n) {
    --first;
  }
  for (std::size_t n = 0; n < options.peak_half_width && last + 1 < table.size() &&
                          (n < options.fit_half_width || within(last + 1));
       ++n) {
    ++last;
  }
  return {first, last};
}

LocalLoop local_loop(const LineTable& table, std::size_t k, const MarginOptions& options) {
  const Window w = peak_window(table, k, options);
  std::vector<double> re(table.size()), im(table.size()), sigmas(table.size());
  for (std::size_t i = w.first; i <= w.last; ++i) {
    re[i] = table.value[i].real();
    im[i] = table.value[i].imag();
    sigmas[i] = line_sigma(table, i);
  }
  const int degree = detail::fit_degree(table.relative_sigma, w.first, w.last);
  return {detail::fit_local(table.log_f, re, sigmas, w.first, w.last, degree, Weighting::kEqual),
          detail::fit_local(table.log_f, im, sigmas, w.first, w.last, degree, Weighting::kEqual)};
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
  // Exact lines: the peak lies between the extreme line's neighbours.
  // Measured ones: anywhere the fit spans but its end lines, since the
  // noisiest extreme line need not be the one nearest the peak (searching
  // only beside it read a broad minimum of |1 + L| low by 0.4 of its
  // standard error on the calibration check's damped loop).
  std::size_t low = k - 1, high = k + 1;
  if (table.relative_sigma[k] > 0.0) {
    const Window w = peak_window(table, k, options);
    low = std::min(low, w.first + 1);
    high = std::max(high, w.last - 1);
  }
  return {detail::golden_minimum(negative, table.log_f[low], table.log_f[high]), std::move(fit)};
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
  const Estimate& m = point.modulus_margin;
  const auto in_db = [](const std::optional<Interval>& ci) {
    return ci && ci->low > 0.0 ? std::optional<Interval>(Interval{-db_from_ratio(ci->high), -db_from_ratio(ci->low)})
                               : std::nullopt;
  };
  point.peak_sensitivity_db = {-db_from_ratio(m.value), in_db(m.interval), m.method, in_db(m.first_order)};
  if (m.uncorrected) point.peak_sensitivity_db.uncorrected = -db_from_ratio(*m.uncorrected);
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
