#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

#include "analysis/crossings.hpp"
#include "loopmargin/analysis/margins.hpp"
#include "loopmargin/error.hpp"
#include "loopmargin/format.hpp"
#include "loopmargin/units.hpp"

namespace loopmargin {
namespace {

using detail::Bracket;
using detail::LineTable;
using detail::LocalFit;

// A crossing placed between two lines, before clusters are merged.
struct Crossing {
  Bracket bracket;
  double log_f = 0.0;
  double log_f_sigma = 0.0;  // from the per-line uncertainty and the local slope
};

struct Window {
  std::size_t first;
  std::size_t last;
};

Window window_around(std::size_t first_bracket, std::size_t last_bracket, std::size_t half_width, std::size_t size) {
  const std::size_t first = first_bracket >= half_width - 1 ? first_bracket - (half_width - 1) : 0;
  const std::size_t last = std::min(last_bracket + half_width, size - 1);
  return {first, last};
}

double bracket_sigma(const std::vector<double>& sigmas, const Bracket& bracket) {
  return 0.5 * (sigmas[bracket.index] + sigmas[bracket.index + 1]);
}

void report_unresolved(const std::vector<Bracket>& run, const LineTable& table, const char* what, double limit,
                       Diagnostics& findings) {
  const double low_hz = std::pow(10.0, table.log_f[run.front().index]);
  const double high_hz = std::pow(10.0, table.log_f[run.back().index + 1]);
  std::ostringstream message;
  message << run.size() << " " << what << " from " << format_frequency(low_hz) << " to " << format_frequency(high_hz)
          << " fall where the lines are too noisy to place them (relative uncertainty above " << limit
          << "); they are not listed. Raise the injection or average longer if a crossover may lie there";
  findings.push_back(make_warning("margins.unresolved-crossings", message.str(), {.low_hz = low_hz, .high_hz = high_hz}));
}

// Removes the brackets whose lines are too uncertain to place a crossing and
// reports each run of them between placeable ones in one finding.
void drop_unresolved(std::vector<Bracket>& brackets, const LineTable& table, const char* what,
                     const MarginOptions& options, Diagnostics& findings) {
  std::vector<Bracket> kept;
  std::vector<Bracket> run;
  for (const Bracket& b : brackets) {
    if (bracket_sigma(table.relative_sigma, b) > options.max_line_sigma) {
      run.push_back(b);
      continue;
    }
    if (!run.empty()) report_unresolved(run, table, what, options.max_line_sigma, findings);
    run.clear();
    kept.push_back(b);
  }
  if (!run.empty()) report_unresolved(run, table, what, options.max_line_sigma, findings);
  brackets = std::move(kept);
}

std::vector<Crossing> place_crossings(const std::vector<Bracket>& brackets, const LineTable& table,
                                      const std::vector<double>& values, const std::vector<double>& sigmas,
                                      const MarginOptions& options) {
  std::vector<Crossing> crossings;
  for (const Bracket& bracket : brackets) {
    const Window w = window_around(bracket.index, bracket.index, options.fit_half_width, table.size());
    const LocalFit fit =
        detail::fit_local(table.log_f, values, sigmas, w.first, w.last, detail::fit_degree(sigmas, w.first, w.last));
    const double log_f = detail::solve_in_bracket(fit, table.log_f, values, bracket);
    const Window wide = window_around(bracket.index, bracket.index, options.slope_half_width, table.size());
    const double slope = std::abs(detail::fit_local(table.log_f, values, sigmas, wide.first, wide.last, 1).slope());
    crossings.push_back({bracket, log_f, slope > 0.0 ? bracket_sigma(sigmas, bracket) / slope : 0.0});
  }
  return crossings;
}

// Groups of neighbouring crossings of the same level whose intervals touch.
std::vector<std::vector<Crossing>> cluster(const std::vector<Crossing>& crossings, double merge_sigmas) {
  std::vector<std::vector<Crossing>> groups;
  for (const Crossing& c : crossings) {
    if (!groups.empty()) {
      const Crossing& previous = groups.back().back();
      const double reach = merge_sigmas * (previous.log_f_sigma + c.log_f_sigma);
      if (previous.bracket.level == c.bracket.level && c.log_f - previous.log_f < reach) {
        groups.back().push_back(c);
        continue;
      }
    }
    groups.push_back({c});
  }
  return groups;
}

// The log frequency where a merged group crosses its level: a straight line
// fitted to all lines the group spans.
double merged_log_f(const std::vector<Crossing>& group, const LineTable& table, const std::vector<double>& values,
                    const std::vector<double>& sigmas, const MarginOptions& options) {
  if (group.size() == 1) return group.front().log_f;
  const Window w = window_around(group.front().bracket.index, group.back().bracket.index, options.fit_half_width,
                                 table.size());
  const LocalFit fit = detail::fit_local(table.log_f, values, sigmas, w.first, w.last, 1);
  const double level = group.front().bracket.level;
  const double root = fit.slope() != 0.0 ? fit.centre + (level - fit.coefficients[0]) / fit.slope() : fit.centre;
  return std::clamp(root, group.front().log_f, group.back().log_f);
}

// The value of `values` at log frequency `log_f`, from a local fit around `index`.
double value_at(const LineTable& table, const std::vector<double>& values, const std::vector<double>& sigmas,
                std::size_t first_index, std::size_t last_index, double log_f, const MarginOptions& options) {
  const Window w = window_around(first_index, last_index, options.fit_half_width, table.size());
  const int degree = first_index == last_index ? detail::fit_degree(sigmas, w.first, w.last) : 1;
  return detail::fit_local(table.log_f, values, sigmas, w.first, w.last, degree).at(log_f);
}

std::vector<GainCrossover> gain_crossovers(const LineTable& table, const MarginOptions& options, Diagnostics& findings) {
  auto brackets = detail::gain_brackets(table);
  drop_unresolved(brackets, table, "gain crossings", options, findings);
  const auto crossings = place_crossings(brackets, table, table.gain_db, table.gain_sigma_db, options);
  std::vector<GainCrossover> result;
  for (const auto& group : cluster(crossings, options.merge_sigmas)) {
    const double log_f = merged_log_f(group, table, table.gain_db, table.gain_sigma_db, options);
    const double phase_deg = value_at(table, table.phase_deg, table.phase_sigma_deg, group.front().bracket.index,
                                      group.back().bracket.index, log_f, options);
    GainCrossover c;
    c.frequency_hz = std::pow(10.0, log_f);
    c.phase_margin_deg = wrap_deg(180.0 + phase_deg);
    c.delay_margin_s = rad_from_deg(c.phase_margin_deg) / rad_per_s_from_hz(c.frequency_hz);
    c.merged_crossings = group.size();
    result.push_back(c);
  }
  return result;
}

std::vector<PhaseCrossover> phase_crossovers(const LineTable& table, const MarginOptions& options,
                                             Diagnostics& findings) {
  auto brackets = detail::phase_brackets(table);
  drop_unresolved(brackets, table, "phase crossings", options, findings);
  const auto crossings = place_crossings(brackets, table, table.phase_deg, table.phase_sigma_deg, options);
  std::vector<PhaseCrossover> result;
  for (const auto& group : cluster(crossings, options.merge_sigmas)) {
    const double log_f = merged_log_f(group, table, table.phase_deg, table.phase_sigma_deg, options);
    const double gain_db = value_at(table, table.gain_db, table.gain_sigma_db, group.front().bracket.index,
                                    group.back().bracket.index, log_f, options);
    PhaseCrossover c;
    c.frequency_hz = std::pow(10.0, log_f);
    c.gain_margin_db = -gain_db;
    c.limits = detail::direction_of(c.gain_margin_db);
    c.merged_crossings = group.size();
    result.push_back(c);
  }
  std::sort(result.begin(), result.end(), [](const auto& a, const auto& b) { return a.frequency_hz < b.frequency_hz; });
  return result;
}

// The smallest |1 + L| between the neighbours of the smallest line, on local
// fits of Re L and Im L (interpolating for exact lines, smoothing for
// measured ones).
ModulusPoint modulus_point(const LineTable& table, const MarginOptions& options) {
  const std::size_t k = detail::modulus_minimum_index(table);
  const auto distance = [&](std::size_t i) { return std::abs(1.0 + table.value[i]); };
  ModulusPoint point{std::pow(10.0, table.log_f[k]), distance(k), 0.0, k == 0 || k + 1 == table.size()};
  if (!point.at_band_edge && table.size() >= 4) {
    const Window w = window_around(k, k, options.fit_half_width, table.size());
    std::vector<double> re, im;
    for (const auto& v : table.value) {
      re.push_back(v.real());
      im.push_back(v.imag());
    }
    const int degree = detail::fit_degree(table.relative_sigma, w.first, w.last);
    // Absolute sigma of each part: relative sigma times |L|.
    std::vector<double> sigmas(table.size());
    for (std::size_t i = w.first; i <= w.last; ++i) sigmas[i] = table.relative_sigma[i] * std::abs(table.value[i]);
    const LocalFit fit_re = detail::fit_local(table.log_f, re, sigmas, w.first, w.last, degree);
    const LocalFit fit_im = detail::fit_local(table.log_f, im, sigmas, w.first, w.last, degree);
    const auto fitted = [&](double u) { return std::hypot(1.0 + fit_re.at(u), fit_im.at(u)); };
    const double u = detail::golden_minimum(fitted, table.log_f[k - 1], table.log_f[k + 1]);
    point.frequency_hz = std::pow(10.0, u);
    point.modulus_margin = fitted(u);
  }
  point.peak_sensitivity_db = -db_from_ratio(point.modulus_margin);
  return point;
}

}  // namespace

const char* direction_name(GainDirection direction) {
  return direction == GainDirection::kIncrease ? "increase" : "decrease";
}

Margins find_margins(const Response& loop, const MarginOptions& options) {
  if (loop.size() < 2) throw NumericalError("margins need at least two lines; the response has " +
                                            std::to_string(loop.size()));
  if (options.fit_half_width < 1) throw ConfigError("the local fit needs at least one line on each side");
  const LineTable table = detail::make_line_table(loop.frequency_hz, loop.value, loop.relative_sigma);
  Margins margins;
  margins.band_low_hz = loop.frequency_hz.front();
  margins.band_high_hz = loop.frequency_hz.back();
  margins.line_count = loop.size();
  margins.gain_crossovers = gain_crossovers(table, options, margins.findings);
  margins.phase_crossovers = phase_crossovers(table, options, margins.findings);
  margins.modulus = modulus_point(table, options);
  margins.summary = detail::summarize(margins);
  detail::add_absence_findings(table, margins);
  return margins;
}

}  // namespace loopmargin
