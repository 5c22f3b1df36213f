#include "analysis/crossings.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "loopaudit/units.hpp"

namespace loopaudit::detail {

LineTable make_line_table(const std::vector<double>& frequency_hz, const std::vector<std::complex<double>>& value,
                          const std::vector<double>& relative_sigma, const std::vector<double>& coherence) {
  LineTable table;
  table.value = value;
  table.coherence = coherence;
  double previous_rad = 0.0;
  double unwrapped_deg = 0.0;
  for (std::size_t k = 0; k < value.size(); ++k) {
    const double angle_rad = std::arg(value[k]);
    unwrapped_deg = (k == 0) ? deg_from_rad(angle_rad) : unwrapped_deg + wrap_deg(deg_from_rad(angle_rad - previous_rad));
    previous_rad = angle_rad;
    const double sigma = relative_sigma.empty() ? 0.0 : relative_sigma[k];
    table.log_f.push_back(std::log10(frequency_hz[k]));
    table.gain_db.push_back(db_from_ratio(std::abs(value[k])));
    table.phase_deg.push_back(unwrapped_deg);
    table.relative_sigma.push_back(sigma);
    table.gain_sigma_db.push_back(db_from_nepers(sigma));
    table.phase_sigma_deg.push_back(deg_from_rad(sigma));
  }
  return table;
}

std::vector<Bracket> gain_brackets(const LineTable& table) {
  std::vector<Bracket> brackets;
  for (std::size_t k = 0; k + 1 < table.size(); ++k) {
    if ((table.gain_db[k] > 0.0) != (table.gain_db[k + 1] > 0.0)) brackets.push_back({k, 0.0});
  }
  return brackets;
}

std::vector<Bracket> phase_brackets(const LineTable& table) {
  std::vector<Bracket> brackets;
  for (std::size_t k = 0; k + 1 < table.size(); ++k) {
    const double p0 = table.phase_deg[k];
    const double p1 = table.phase_deg[k + 1];
    const auto m_low = static_cast<long>(std::floor((std::min(p0, p1) + 180.0) / 360.0));
    const auto m_high = static_cast<long>(std::ceil((std::max(p0, p1) + 180.0) / 360.0));
    for (long m = m_low; m <= m_high; ++m) {
      const double level = -180.0 + 360.0 * static_cast<double>(m);
      if ((p0 > level) != (p1 > level)) brackets.push_back({k, level});
    }
  }
  return brackets;
}

std::size_t modulus_minimum_index(const LineTable& table) {
  std::size_t best = 0;
  for (std::size_t k = 1; k < table.size(); ++k) {
    if (std::abs(1.0 + table.value[k]) < std::abs(1.0 + table.value[best])) best = k;
  }
  return best;
}

double LocalFit::at(double log_f) const {
  const double t = log_f - centre;
  double value = 0.0;
  for (auto c = coefficients.rbegin(); c != coefficients.rend(); ++c) value = value * t + *c;
  return value;
}

double LocalFit::derivative_at(double log_f) const {
  const double t = log_f - centre;
  double value = 0.0;
  for (std::size_t d = coefficients.size(); d-- > 1;) value = value * t + static_cast<double>(d) * coefficients[d];
  return value;
}

double LocalFit::sigma_at(double log_f) const {
  if (covariance.empty()) return 0.0;
  const double t = log_f - centre;
  std::vector<double> basis(coefficients.size());
  double power = 1.0;
  for (double& b : basis) {
    b = power;
    power *= t;
  }
  double variance = 0.0;
  for (std::size_t i = 0; i < basis.size(); ++i) {
    for (std::size_t j = 0; j < basis.size(); ++j) variance += basis[i] * covariance[i][j] * basis[j];
  }
  return std::sqrt(std::max(0.0, variance));
}

int fit_degree(const std::vector<double>& sigmas, std::size_t first, std::size_t last) {
  const bool exact = std::all_of(sigmas.begin() + first, sigmas.begin() + last + 1, [](double s) { return s == 0.0; });
  return exact ? 3 : 2;
}

LocalFit fit_local(const std::vector<double>& log_f, const std::vector<double>& values,
                   const std::vector<double>& sigmas, std::size_t first, std::size_t last, int degree,
                   Weighting weighting) {
  const std::size_t count = last - first + 1;
  degree = std::min<int>(degree, static_cast<int>(count) - 1);
  const bool known = std::all_of(sigmas.begin() + first, sigmas.begin() + last + 1, [](double s) { return s > 0.0; });
  const bool weighted = known && weighting == Weighting::kBySigma;
  LocalFit fit;
  fit.centre = 0.5 * (log_f[first] + log_f[last]);
  Eigen::MatrixXd design(count, degree + 1);
  Eigen::VectorXd target(count);
  for (std::size_t i = 0; i < count; ++i) {
    const double weight = weighted ? 1.0 / sigmas[first + i] : 1.0;
    const double t = log_f[first + i] - fit.centre;
    double power = 1.0;
    for (int d = 0; d <= degree; ++d, power *= t) design(i, d) = weight * power;
    target(i) = weight * values[first + i];
  }
  const Eigen::VectorXd solution = design.colPivHouseholderQr().solve(target);
  fit.coefficients.assign(solution.data(), solution.data() + solution.size());
  if (known && count > static_cast<std::size_t>(degree)) {
    // Weighted least squares: cov = (A^T W A)^-1 with the rows already scaled
    // by 1/sigma. Equal weights: the sandwich (A^T A)^-1 A^T S A (A^T A)^-1
    // with S the lines' variances.
    const Eigen::MatrixXd inverse = (design.transpose() * design).inverse();
    Eigen::MatrixXd covariance = inverse;
    if (!weighted) {
      const Eigen::VectorXd variances =
          Eigen::Map<const Eigen::VectorXd>(sigmas.data() + first, static_cast<Eigen::Index>(count)).array().square();
      covariance = inverse * (design.transpose() * variances.asDiagonal() * design) * inverse;
    }
    fit.covariance.assign(covariance.rows(), std::vector<double>(covariance.cols()));
    for (Eigen::Index i = 0; i < covariance.rows(); ++i) {
      for (Eigen::Index j = 0; j < covariance.cols(); ++j) fit.covariance[i][j] = covariance(i, j);
    }
  }
  return fit;
}

double solve_in_bracket(const LocalFit& fit, const std::vector<double>& log_f, const std::vector<double>& values,
                        const Bracket& bracket) {
  const double u0 = log_f[bracket.index];
  const double u1 = log_f[bracket.index + 1];
  const auto offset = [&](double u) { return fit.at(u) - bracket.level; };
  if ((offset(u0) > 0.0) != (offset(u1) > 0.0)) return bisect(offset, u0, u1);
  const double v0 = values[bracket.index] - bracket.level;
  const double v1 = values[bracket.index + 1] - bracket.level;
  return u0 + (u1 - u0) * v0 / (v0 - v1);
}

double bisect(const std::function<double(double)>& g, double a, double b) {
  const bool a_positive = g(a) > 0.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (a + b);
    if (mid == a || mid == b) break;
    ((g(mid) > 0.0) == a_positive ? a : b) = mid;
  }
  return 0.5 * (a + b);
}

double golden_minimum(const std::function<double(double)>& g, double a, double b) {
  const double ratio = (std::sqrt(5.0) - 1.0) / 2.0;
  double c = b - ratio * (b - a);
  double d = a + ratio * (b - a);
  double gc = g(c);
  double gd = g(d);
  for (int i = 0; i < 200 && std::abs(b - a) > 1e-15 * std::max(1.0, std::abs(a)); ++i) {
    if (gc < gd) {
      b = d;
      d = c;
      gd = gc;
      c = b - ratio * (b - a);
      gc = g(c);
    } else {
      a = c;
      c = d;
      gc = gd;
      d = a + ratio * (b - a);
      gd = g(d);
    }
  }
  return 0.5 * (a + b);
}

Window window_around(std::size_t first_bracket, std::size_t last_bracket, std::size_t half_width, std::size_t size) {
  const std::size_t first = first_bracket >= half_width - 1 ? first_bracket - (half_width - 1) : 0;
  const std::size_t last = std::min(last_bracket + half_width, size - 1);
  return {first, last};
}

std::optional<Interval> interval(double value, double sigma, double z) {
  if (!(sigma > 0.0)) return std::nullopt;
  return Interval{value - z * sigma, value + z * sigma};
}

GainDirection direction_of(double gain_margin_db) {
  return gain_margin_db >= 0.0 ? GainDirection::kIncrease : GainDirection::kDecrease;
}

namespace {

// What an unresolved stretch may hide from the summary. Phase crossings
// where |L| > 1 would limit a gain reduction (GM = -|L| dB), where |L| < 1 a
// gain increase; gain crossings would have a phase margin in the range of
// 180 + angle L there. Only what could be smaller than the summary's value,
// or of a kind it has none of, is kept.
std::vector<PossibleMargin> possible_margins(const std::vector<UnresolvedStretch>& stretches, const MarginSummary& s) {
  std::vector<PossibleMargin> out;
  const auto smaller = [](const std::optional<Estimate>& known, double could_be) {
    return !known || std::abs(could_be) < std::abs(known->value);
  };
  for (const UnresolvedStretch& u : stretches) {
    const auto add = [&](const char* key, double low, double high) { out.push_back({key, u.low_hz, u.high_hz, {low, high}}); };
    if (u.level == CrossingLevel::kGain) {
      if (smaller(s.phase_margin_deg, u.other.low)) add("phase_margin_deg", u.other.low, u.other.high);
      continue;
    }
    if (u.other.high > 0.0 && smaller(s.gain_reduction_margin_db, std::max(u.other.low, 0.0))) {
      add("gain_reduction_margin_db", -u.other.high, -std::max(u.other.low, 0.0));
    }
    if (u.other.low < 0.0 && smaller(s.gain_increase_margin_db, std::max(-u.other.high, 0.0))) {
      add("gain_increase_margin_db", std::max(-u.other.high, 0.0), -u.other.low);
    }
  }
  return out;
}

}  // namespace

MarginSummary summarize(const Margins& margins) {
  MarginSummary summary;
  for (const GainCrossover& c : margins.gain_crossovers) {
    if (!summary.phase_margin_deg || c.phase_margin_deg.value < summary.phase_margin_deg->value) {
      summary.phase_margin_deg = c.phase_margin_deg;
      summary.gain_crossover_hz = c.frequency_hz;
    }
    if (!summary.delay_margin_s || c.delay_margin_s.value < summary.delay_margin_s->value) {
      summary.delay_margin_s = c.delay_margin_s;
    }
  }
  for (const PhaseCrossover& c : margins.phase_crossovers) {
    const double gm = c.gain_margin_db.value;
    if (!summary.gain_margin_db || std::abs(gm) < std::abs(summary.gain_margin_db->value)) {
      summary.gain_margin_db = c.gain_margin_db;
      summary.phase_crossover_hz = c.frequency_hz;
    }
    auto& directed = gm >= 0.0 ? summary.gain_increase_margin_db : summary.gain_reduction_margin_db;
    if (!directed || std::abs(gm) < std::abs(directed->value)) directed = c.gain_margin_db;
  }
  summary.possible = possible_margins(margins.unresolved, summary);
  if (margins.modulus) {
    summary.modulus_margin = margins.modulus->modulus_margin;
    summary.peak_sensitivity_db = margins.modulus->peak_sensitivity_db;
    summary.modulus_frequency_hz = margins.modulus->frequency_hz;
  }
  return summary;
}

void add_absence_findings(const LineTable& table, Margins& margins) {
  const Location band{.low_hz = margins.band_low_hz, .high_hz = margins.band_high_hz};
  const auto unresolved = [&](CrossingLevel level) {
    return std::any_of(margins.unresolved.begin(), margins.unresolved.end(),
                       [&](const UnresolvedStretch& u) { return u.level == level; });
  };
  if (margins.gain_crossovers.empty()) {
    const auto [low, high] = std::minmax_element(table.gain_db.begin(), table.gain_db.end());
    std::ostringstream message;
    message << "no gain crossover listed in the band: ";
    if (unresolved(CrossingLevel::kGain)) {
      message << "|L| meets 0 dB only where its crossings could not be resolved (margins.unresolved-crossings)";
    } else {
      message << "|L| stays " << (*low > 0.0 ? "above" : "below") << " 0 dB (from " << std::round(*low * 10.0) / 10.0
              << " to " << std::round(*high * 10.0) / 10.0 << " dB)";
    }
    margins.findings.push_back(make_note("margins.no-gain-crossover", message.str(), band));
  }
  if (margins.phase_crossovers.empty() && unresolved(CrossingLevel::kPhase)) {
    margins.findings.push_back(make_note("margins.no-phase-crossover",
                                         "no phase crossover listed in the band: the phase meets -180 deg only where "
                                         "its crossings could not be resolved (margins.unresolved-crossings)",
                                         band));
  } else if (margins.phase_crossovers.empty()) {
    margins.findings.push_back(
        make_note("margins.no-phase-crossover", "no phase crossover in the band: the phase never reaches -180 deg", band));
  }
  if (margins.modulus && margins.modulus->at_band_edge) {
    margins.findings.push_back(make_warning("margins.modulus-at-edge",
                                            "the smallest |1 + L| lies at the edge of the band; the true minimum "
                                            "may lie outside it",
                                            band));
  }
}

}  // namespace loopaudit::detail
