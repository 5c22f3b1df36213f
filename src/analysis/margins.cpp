#include <algorithm>
#include <cmath>
#include <numbers>
#include <sstream>

#include "analysis/crossings.hpp"
#include "analysis/peaks.hpp"
#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

using detail::Bracket;
using detail::LineTable;
using detail::LocalFit;
using detail::interval;
using detail::Window;
using detail::window_around;

// A crossing placed between two lines, before clusters are merged.
struct Crossing {
  Bracket bracket;
  double log_f = 0.0;
  double slope = 0.0;        // of the curve, per decade, fitted over a wide window
  double log_f_sigma = 0.0;  // from the per-line uncertainty and the slope
  bool noisy = false;        // its lines are too uncertain to place it
};

double bracket_sigma(const std::vector<double>& sigmas, const Bracket& bracket) {
  return 0.5 * (sigmas[bracket.index] + sigmas[bracket.index + 1]);
}

// One curve of the table (gain in dB or unwrapped phase in deg) with the
// standard deviation of each line, in the same unit.
struct Curve {
  const std::vector<double>& values;
  const std::vector<double>& sigmas;
};

std::vector<Crossing> place_crossings(const std::vector<Bracket>& brackets, const LineTable& table, const Curve& curve,
                                      const MarginOptions& options) {
  std::vector<Crossing> crossings;
  for (const Bracket& bracket : brackets) {
    const Window w = window_around(bracket.index, bracket.index, options.fit_half_width, table.size());
    const int degree = detail::fit_degree(curve.sigmas, w.first, w.last);
    const LocalFit fit = detail::fit_local(table.log_f, curve.values, curve.sigmas, w.first, w.last, degree);
    const double log_f = detail::solve_in_bracket(fit, table.log_f, curve.values, bracket);
    const Window wide = window_around(bracket.index, bracket.index, options.slope_half_width, table.size());
    const double slope =
        std::abs(detail::fit_local(table.log_f, curve.values, curve.sigmas, wide.first, wide.last, 1).slope());
    const double sigma = bracket_sigma(curve.sigmas, bracket);
    const bool noisy = bracket_sigma(table.relative_sigma, bracket) > options.max_line_sigma;
    crossings.push_back({bracket, log_f, slope, slope > 0.0 ? sigma / slope : 0.0, noisy});
  }
  return crossings;
}

// True when two crossings of one level are the same crossover seen through
// noise: both placeable or both not (a noisy crossing's wide interval must not
// swallow a clean one), their intervals touch, and every line between them
// stays near the level (a curve that leaves the level between two crossings
// crosses twice for real). "Near" is three standard deviations, so that one
// line of several rarely breaks a group by chance (0.3 % a line for Gaussian
// errors), plus what the curve's own slope moves it from the nearer crossing.
bool same_crossover(const Crossing& a, const Crossing& b, const LineTable& table, const Curve& curve,
                    double merge_sigmas) {
  constexpr double kNearLevelSigmas = 3.0;
  if (a.bracket.level != b.bracket.level || a.noisy != b.noisy) return false;
  if (b.log_f - a.log_f >= merge_sigmas * (a.log_f_sigma + b.log_f_sigma)) return false;
  const double slope = 0.5 * (a.slope + b.slope);
  for (std::size_t k = a.bracket.index + 1; k <= b.bracket.index; ++k) {
    const double from_crossing = std::min(table.log_f[k] - a.log_f, b.log_f - table.log_f[k]);
    const double allowed = kNearLevelSigmas * curve.sigmas[k] + slope * std::max(from_crossing, 0.0);
    if (std::abs(curve.values[k] - a.bracket.level) > allowed) return false;
  }
  return true;
}

// Groups of neighbouring crossings that are one crossover seen through noise.
std::vector<std::vector<Crossing>> cluster(const std::vector<Crossing>& crossings, const LineTable& table,
                                           const Curve& curve, double merge_sigmas) {
  std::vector<std::vector<Crossing>> groups;
  for (const Crossing& c : crossings) {
    if (!groups.empty() && same_crossover(groups.back().back(), c, table, curve, merge_sigmas)) {
      groups.back().push_back(c);
    } else {
      groups.push_back({c});
    }
  }
  return groups;
}

Location group_band(const std::vector<Crossing>& group, const LineTable& table) {
  return {.low_hz = std::pow(10.0, table.log_f[group.front().bracket.index]),
          .high_hz = std::pow(10.0, table.log_f[group.back().bracket.index + 1])};
}

// The log frequency where a merged group crosses its level: a straight line
// fitted to all lines the group spans.
double merged_log_f(const std::vector<Crossing>& group, const LineTable& table, const Curve& curve,
                    const MarginOptions& options) {
  if (group.size() == 1) return group.front().log_f;
  const Window w = window_around(group.front().bracket.index, group.back().bracket.index, options.fit_half_width,
                                 table.size());
  const LocalFit fit = detail::fit_local(table.log_f, curve.values, curve.sigmas, w.first, w.last, 1);
  const double level = group.front().bracket.level;
  const double root = fit.slope() != 0.0 ? fit.centre + (level - fit.coefficients[0]) / fit.slope() : fit.centre;
  return std::clamp(root, group.front().log_f, group.back().log_f);
}

// The local fit of a curve over the lines a group spans (the one that placed
// a single crossing; a straight line over a merged group).
LocalFit fit_for(const LineTable& table, const Curve& curve, const std::vector<Crossing>& group,
                 const MarginOptions& options) {
  const std::size_t first = group.front().bracket.index;
  const std::size_t last = group.back().bracket.index;
  const Window w = window_around(first, last, options.fit_half_width, table.size());
  const int degree = first == last ? detail::fit_degree(curve.sigmas, w.first, w.last) : 1;
  return detail::fit_local(table.log_f, curve.values, curve.sigmas, w.first, w.last, degree);
}

// A crossing and the other curve's value there, with standard deviations:
// the crossing moves by the fitted curve's sigma over its slope, and the
// other value carries its own fit's sigma plus its slope times that move.
struct Placed {
  double log_f = 0.0;
  double log_f_sigma = 0.0;
  double other = 0.0;
  double other_sigma = 0.0;
};

// The slope of a curve at a group, from a straight line over the wider
// window, so that line noise does not set it.
double wide_slope(const LineTable& table, const Curve& curve, const std::vector<Crossing>& group,
                  const MarginOptions& options) {
  const Window w = window_around(group.front().bracket.index, group.back().bracket.index, options.slope_half_width,
                                 table.size());
  return detail::fit_local(table.log_f, curve.values, curve.sigmas, w.first, w.last, 1).slope();
}

// The sigma of a fitted curve at a crossing, never below that of the lines
// beside it: the errors of neighbouring lines are correlated (a window's
// kernel spans several lines, and leakage of coloured noise spreads over
// more), so the fit earns no credit for averaging them.
double curve_sigma(const LocalFit& fit, const Curve& curve, const Bracket& bracket, double log_f) {
  return std::max(fit.sigma_at(log_f), bracket_sigma(curve.sigmas, bracket));
}

Placed place(const LineTable& table, const Curve& crossing_curve, const Curve& other_curve, const std::vector<Crossing>& group,
             double log_f, const MarginOptions& options) {
  const LocalFit own = fit_for(table, crossing_curve, group, options);
  const LocalFit other = fit_for(table, other_curve, group, options);
  const Bracket& nearest = group[group.size() / 2].bracket;
  const double slope = std::abs(wide_slope(table, crossing_curve, group, options));
  const double log_f_sigma = slope > 0.0 ? curve_sigma(own, crossing_curve, nearest, log_f) / slope : 0.0;
  const double moved = wide_slope(table, other_curve, group, options) * log_f_sigma;
  return {log_f, log_f_sigma, other.at(log_f), std::hypot(curve_sigma(other, other_curve, nearest, log_f), moved)};
}

// Why a crossing deserves less trust than its interval gives it.
std::vector<std::string> trust_flags(const LineTable& table, const std::vector<Crossing>& group,
                                     const MarginOptions& options) {
  constexpr double kLowCoherence = 0.5;
  constexpr std::size_t kEdgeLines = 2;
  const double sparse = std::log10(1.10);
  std::vector<std::string> flags;
  const std::size_t first = group.front().bracket.index;
  const std::size_t last = group.back().bracket.index + 1;
  const Window w = window_around(first, last - 1, options.fit_half_width, table.size());
  if (!table.coherence.empty()) {
    for (std::size_t i = w.first; i <= w.last; ++i) {
      if (table.coherence[i] <= kLowCoherence) {
        flags.emplace_back(kTrustLowCoherence);
        break;
      }
    }
  }
  if (first < kEdgeLines || last + kEdgeLines >= table.size()) flags.emplace_back(kTrustBandEdge);
  for (std::size_t i = first; i < last; ++i) {
    if (table.log_f[i + 1] - table.log_f[i] > sparse) {
      flags.emplace_back(kTrustSparseLines);
      break;
    }
  }
  return flags;
}

std::optional<Interval> frequency_interval(double log_f, double log_f_sigma, double z) {
  if (!(log_f_sigma > 0.0)) return std::nullopt;
  return Interval{std::pow(10.0, log_f - z * log_f_sigma), std::pow(10.0, log_f + z * log_f_sigma)};
}

// What a group of merged crossings says.
enum class Verdict {
  kCrossover,    // an odd number of crossings: the curve passes the level once on balance
  kNearMiss,     // an even number: it comes back to the side it started on, within noise
  kUnresolved,   // a member lies between lines too noisy to place it
};

struct Group {
  std::vector<Crossing> members;
  Verdict verdict = Verdict::kCrossover;
  double log_f = 0.0;
};

// The side of the level (+1 above, -1 below) that the curve is clearly on
// next to a group: the first line, walking away from the group, that lies
// more than two standard deviations from the level. 0 when no line within
// kSideWalkDecades (or before the band edge) is that clear.
int clear_side(const Group& g, const LineTable& table, const Curve& curve, bool upward) {
  constexpr double kSideSigmas = 2.0;
  constexpr double kSideWalkDecades = 0.1;
  const double level = g.members.front().bracket.level;
  const std::ptrdiff_t start = upward ? static_cast<std::ptrdiff_t>(g.members.back().bracket.index + 1)
                                      : static_cast<std::ptrdiff_t>(g.members.front().bracket.index);
  const std::ptrdiff_t step = upward ? 1 : -1;
  for (std::ptrdiff_t k = start; k >= 0 && k < static_cast<std::ptrdiff_t>(table.size()); k += step) {
    if (std::abs(table.log_f[k] - table.log_f[start]) > kSideWalkDecades) break;
    const double offset = curve.values[k] - level;
    if (std::abs(offset) > kSideSigmas * curve.sigmas[k]) return offset > 0.0 ? 1 : -1;
  }
  return 0;
}

// A crossover when the curve is clearly on opposite sides before and after
// the group, a near miss when on the same side, unresolved otherwise.
Verdict verdict_of(const Group& g, const LineTable& table, const Curve& curve) {
  if (g.members.front().noisy) return Verdict::kUnresolved;  // a group is all noisy or all placeable
  const int before = clear_side(g, table, curve, false);
  const int after = clear_side(g, table, curve, true);
  if (before == 0 || after == 0) return Verdict::kUnresolved;
  return before == after ? Verdict::kNearMiss : Verdict::kCrossover;
}

std::vector<Group> crossing_groups(const std::vector<Bracket>& brackets, const LineTable& table, const Curve& curve,
                                   const MarginOptions& options) {
  std::vector<Group> groups;
  for (auto& members : cluster(place_crossings(brackets, table, curve, options), table, curve, options.merge_sigmas)) {
    Group g{std::move(members)};
    g.verdict = verdict_of(g, table, curve);
    g.log_f = merged_log_f(g.members, table, curve, options);
    groups.push_back(std::move(g));
  }
  return groups;
}

// One finding for each run of unresolved groups between resolved ones.
void report_unresolved(const std::vector<Group>& groups, const LineTable& table, const char* what,
                       const MarginOptions& options, Diagnostics& findings) {
  for (std::size_t i = 0; i < groups.size();) {
    if (groups[i].verdict != Verdict::kUnresolved) {
      ++i;
      continue;
    }
    std::size_t end = i;
    std::size_t count = 0;
    for (; end < groups.size() && groups[end].verdict == Verdict::kUnresolved; ++end) count += groups[end].members.size();
    const Location band{.low_hz = group_band(groups[i].members, table).low_hz,
                        .high_hz = group_band(groups[end - 1].members, table).high_hz};
    std::ostringstream message;
    message << count << " " << what << (count == 1 ? "" : "s") << " from " << format_frequency(*band.low_hz) << " to "
            << format_frequency(*band.high_hz)
            << (count == 1 ? " is not listed: the lines there are too noisy to place it "
                           : " are not listed: the lines there are too noisy to place them ")
            << "(relative uncertainty above " << options.max_line_sigma << ") or to show that the curve really "
            << "crosses. Raise the injection or average longer if a crossover may lie there";
    findings.push_back(make_warning("margins.unresolved-crossings", message.str(), band));
    i = end;
  }
}

void report_near_miss(const Group& g, const LineTable& table, const std::string& what, Diagnostics& findings) {
  std::ostringstream message;
  message << what << " near " << format_frequency(std::pow(10.0, g.log_f)) << " without crossing on balance ("
          << g.members.size() << (g.members.size() == 1 ? " noise crossing" : " noise crossings")
          << "); the data cannot tell whether it crosses";
  findings.push_back(make_warning("margins.near-crossing", message.str(), group_band(g.members, table)));
}

std::vector<GainCrossover> gain_crossovers(const LineTable& table, const MarginOptions& options, Diagnostics& findings) {
  const Curve gain{table.gain_db, table.gain_sigma_db};
  const Curve phase{table.phase_deg, table.phase_sigma_deg};
  const auto groups = crossing_groups(detail::gain_brackets(table), table, gain, options);
  report_unresolved(groups, table, "gain crossing", options, findings);
  std::vector<GainCrossover> result;
  const double z = two_sided_z(options.confidence);
  for (const Group& g : groups) {
    const Placed p = place(table, gain, phase, g.members, g.log_f, options);
    const double phase_margin_deg = wrap_deg(180.0 + p.other);
    if (g.verdict == Verdict::kNearMiss) {
      report_near_miss(g, table, "|L| comes within noise of 0 dB (phase margin there about " +
                                     std::to_string(std::lround(phase_margin_deg)) + " deg)", findings);
    }
    if (g.verdict != Verdict::kCrossover) continue;
    GainCrossover c;
    const double frequency_hz = std::pow(10.0, g.log_f);
    const double omega = rad_per_s_from_hz(frequency_hz);
    const double delay_margin_s = rad_from_deg(phase_margin_deg) / omega;
    // DM = PM / omega: relative errors of PM (rad) and omega add in quadrature.
    const double delay_sigma =
        std::hypot(rad_from_deg(p.other_sigma) / omega, delay_margin_s * std::numbers::ln10 * p.log_f_sigma);
    c.frequency_hz = {frequency_hz, frequency_interval(p.log_f, p.log_f_sigma, z)};
    c.phase_margin_deg = {phase_margin_deg, interval(phase_margin_deg, p.other_sigma, z)};
    c.delay_margin_s = {delay_margin_s, interval(delay_margin_s, delay_sigma, z)};
    c.merged_crossings = g.members.size();
    c.trust_flags = trust_flags(table, g.members, options);
    result.push_back(c);
  }
  return result;
}

std::vector<PhaseCrossover> phase_crossovers(const LineTable& table, const MarginOptions& options,
                                             Diagnostics& findings) {
  const Curve gain{table.gain_db, table.gain_sigma_db};
  const Curve phase{table.phase_deg, table.phase_sigma_deg};
  const auto groups = crossing_groups(detail::phase_brackets(table), table, phase, options);
  report_unresolved(groups, table, "phase crossing", options, findings);
  std::vector<PhaseCrossover> result;
  const double z = two_sided_z(options.confidence);
  for (const Group& g : groups) {
    const Placed p = place(table, phase, gain, g.members, g.log_f, options);
    const double gain_db = p.other;
    if (g.verdict == Verdict::kNearMiss) {
      report_near_miss(g, table, "the phase comes within noise of -180 deg (|L| there about " +
                                     std::to_string(std::lround(gain_db)) + " dB)", findings);
    }
    if (g.verdict != Verdict::kCrossover) continue;
    PhaseCrossover c;
    c.frequency_hz = {std::pow(10.0, g.log_f), frequency_interval(p.log_f, p.log_f_sigma, z)};
    c.gain_margin_db = {-gain_db, interval(-gain_db, p.other_sigma, z)};
    c.limits = detail::direction_of(-gain_db);
    c.merged_crossings = g.members.size();
    c.trust_flags = trust_flags(table, g.members, options);
    result.push_back(c);
  }
  std::sort(result.begin(), result.end(), [](const auto& a, const auto& b) { return a.frequency_hz.value < b.frequency_hz.value; });
  return result;
}

// One line or none: nothing can be bracketed. The result says so instead of
// failing, so that the outputs and the report still show the line.
Margins too_few_lines(const Response& loop, const MarginOptions& options) {
  Margins margins;
  margins.line_count = loop.size();
  margins.confidence = options.confidence;
  if (!loop.frequency_hz.empty()) {
    margins.band_low_hz = loop.frequency_hz.front();
    margins.band_high_hz = loop.frequency_hz.back();
  }
  margins.stability = assess_stability(loop, {options.open_loop_rhp_poles});
  margins.findings.push_back(make_warning("margins.too-few-lines",
                                          "margins need at least two lines to bracket a crossing; the response has " +
                                              std::to_string(loop.size())));
  return margins;
}

}  // namespace

double two_sided_z(double confidence) {
  if (!(confidence > 0.0 && confidence < 1.0)) throw ConfigError("the confidence level must lie between 0 and 1");
  // P(|Z| < z) = erf(z / sqrt 2): solved by bisection, to far below any use.
  double low = 0.0, high = 40.0;
  for (int i = 0; i < 200; ++i) {
    const double mid = 0.5 * (low + high);
    (std::erf(mid / std::numbers::sqrt2) < confidence ? low : high) = mid;
  }
  return 0.5 * (low + high);
}

Margins find_margins(const Response& loop, const MarginOptions& options) {
  options.validate();
  if (loop.size() < 2) return too_few_lines(loop, options);
  const LineTable table = detail::make_line_table(loop.frequency_hz, loop.value, loop.relative_sigma, loop.coherence);
  Margins margins;
  margins.band_low_hz = loop.frequency_hz.front();
  margins.band_high_hz = loop.frequency_hz.back();
  margins.line_count = loop.size();
  margins.confidence = options.confidence;
  margins.gain_crossovers = gain_crossovers(table, options, margins.findings);
  margins.phase_crossovers = phase_crossovers(table, options, margins.findings);
  margins.modulus = detail::modulus_point(table, options);
  margins.disk = detail::disk_point(table, options);
  margins.stability = assess_stability(loop, {options.open_loop_rhp_poles});
  margins.summary = detail::summarize(margins);
  detail::add_absence_findings(table, margins);
  return margins;
}

}  // namespace loopaudit
