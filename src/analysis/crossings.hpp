// Shared machinery of the margin finders: lines in log frequency, brackets of
// crossings between adjacent lines, local fits, and the summary.
#pragma once

#include <complex>
#include <cstddef>
#include <functional>
#include <vector>

#include "loopaudit/analysis/margins.hpp"

namespace loopaudit::detail {

// Lines as the crossing search sees them.
struct LineTable {
  std::vector<double> log_f;        // log10 of frequency in Hz
  std::vector<double> gain_db;      // 20 log10 |L|
  std::vector<double> phase_deg;    // unwrapped along frequency
  std::vector<double> gain_sigma_db;
  std::vector<double> phase_sigma_deg;
  std::vector<double> relative_sigma;
  std::vector<double> coherence;  // empty when unknown
  std::vector<std::complex<double>> value;

  std::size_t size() const { return log_f.size(); }
};

LineTable make_line_table(const std::vector<double>& frequency_hz, const std::vector<std::complex<double>>& value,
                          const std::vector<double>& relative_sigma, const std::vector<double>& coherence = {});

// A crossing of `level` between line `index` and line `index + 1`.
struct Bracket {
  std::size_t index = 0;
  double level = 0.0;
};

std::vector<Bracket> gain_brackets(const LineTable& table);   // level 0 dB
std::vector<Bracket> phase_brackets(const LineTable& table);  // levels -180 + 360 m deg

// Index of the line with the smallest |1 + L|.
std::size_t modulus_minimum_index(const LineTable& table);

// A polynomial in t = log_f - centre fitted by weighted least squares
// (weights 1/sigma when every sigma is positive, else equal).
struct LocalFit {
  double centre = 0.0;
  std::vector<double> coefficients;  // constant term first
  // Covariance of the coefficients from the lines' sigmas; empty when the
  // lines carry none (an exact table).
  std::vector<std::vector<double>> covariance;
  double at(double log_f) const;
  double derivative_at(double log_f) const;
  double slope() const { return coefficients.size() > 1 ? coefficients[1] : 0.0; }  // at the centre
  // Standard deviation of the fitted value at log_f; 0 without covariance.
  double sigma_at(double log_f) const;
};

// How a local fit weighs measured lines. By sigma is the least-squares
// optimum when the sigmas are known; but measured sigmas are estimates from
// the same data, correlated with the lines' errors, and the jackknife, which
// finds the fit again on replicates of the values with the sigmas held,
// cannot see what that correlation adds: fits whose results it measures
// weigh lines equally (measured on the coverage check's noisy cell: the same
// scatter of the crossing either way, and jackknife intervals 9 % too narrow
// with weights against right without). The covariance uses the sigmas either way.
enum class Weighting { kBySigma, kEqual };

LocalFit fit_local(const std::vector<double>& log_f, const std::vector<double>& values,
                   const std::vector<double>& sigmas, std::size_t first, std::size_t last, int degree,
                   Weighting weighting = Weighting::kBySigma);

// Lines with no stated uncertainty are exact: an interpolating cubic places
// crossings between them. Measured lines get a least-squares quadratic,
// which smooths their noise.
int fit_degree(const std::vector<double>& sigmas, std::size_t first, std::size_t last);

// The log frequency in [log_f[index], log_f[index + 1]] where the fit equals
// `level`; linear interpolation between the two lines when the fit does not
// cross the level there.
double solve_in_bracket(const LocalFit& fit, const std::vector<double>& log_f, const std::vector<double>& values,
                        const Bracket& bracket);

// Root of g on [a, b], where g(a) and g(b) differ in sign, by bisection to
// the last bit.
double bisect(const std::function<double(double)>& g, double a, double b);

// Minimum of a unimodal g on [a, b] by golden-section search.
double golden_minimum(const std::function<double(double)>& g, double a, double b);

// Lines first..last (inclusive) around the brackets first_bracket..last_bracket,
// half_width lines on each side, within the table.
struct Window {
  std::size_t first;
  std::size_t last;
};
Window window_around(std::size_t first_bracket, std::size_t last_bracket, std::size_t half_width, std::size_t size);

// value +- z sigma; unset when sigma is not positive (exact lines).
std::optional<Interval> interval(double value, double sigma, double z);

GainDirection direction_of(double gain_margin_db);
MarginSummary summarize(const Margins& margins);
void add_absence_findings(const LineTable& table, Margins& margins);

}  // namespace loopaudit::detail
