#include "analysis/groups.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "loopaudit/units.hpp"

namespace loopaudit::detail {

double bracket_sigma(const std::vector<double>& sigmas, const Bracket& bracket) {
  return 0.5 * (sigmas[bracket.index] + sigmas[bracket.index + 1]);
}

Location group_band(const std::vector<Crossing>& group, const LineTable& table) {
  return {.low_hz = std::pow(10.0, table.log_f[group.front().bracket.index]),
          .high_hz = std::pow(10.0, table.log_f[group.back().bracket.index + 1])};
}

bool unresolved(Verdict v) { return v == Verdict::kUnresolved || v == Verdict::kTooWide; }

bool too_wide(const Estimate& frequency_hz, const Estimate& margin, double max_margin_width, double band_decades) {
  constexpr double kMaxFrequencyDecades = 1.0;
  if (const auto& f = frequency_hz.interval) {
    const double decades = std::log10(f->high / f->low);
    if (!(decades <= std::min(kMaxFrequencyDecades, band_decades))) return true;
  }
  if (const auto& m = margin.interval) {
    if (!(m->high - m->low <= max_margin_width)) return true;
  }
  return false;
}

namespace {

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

// True when the lines between two crossings show that the curve leaves the
// level there, so that the two are separate crossings, each to be judged on
// its own evidence: either a run of kClearRun neighbouring lines all more
// than kClearSigmas from the level on one side (for lines on the level by
// chance about 0.023^3 = 1e-5, more with correlated neighbours), or their
// weighted mean more than kMeanSigmas of its own sigma from the level, that
// sigma inflated by sqrt 2 because neighbouring lines are correlated (0.3 to
// 0.5 for a Hann window; DEVELOPERS.md, "Intervals").
bool leaves_level_between(const Crossing& a, const Crossing& b, const Curve& curve) {
  constexpr double kClearSigmas = 2.0;
  constexpr std::size_t kClearRun = 3;
  constexpr double kMeanSigmas = 3.0;
  constexpr double kCorrelationInflation = std::numbers::sqrt2;
  std::size_t run = 0, lines = 0;
  int run_side = 0;
  double weighted_sum = 0.0, weight_total = 0.0;
  for (std::size_t k = a.bracket.index + 1; k <= b.bracket.index; ++k) {
    const double offset = curve.values[k] - a.bracket.level;
    const double sigma = curve.sigmas[k];
    if (!(sigma > 0.0)) return false;  // exact lines: every crossing is its own
    const int side = std::abs(offset) > kClearSigmas * sigma ? (offset > 0.0 ? 1 : -1) : 0;
    run = side != 0 && side == run_side ? run + 1 : (side != 0 ? 1 : 0);
    run_side = side;
    if (run >= kClearRun) return true;
    weighted_sum += offset / (sigma * sigma);
    weight_total += 1.0 / (sigma * sigma);
    ++lines;
  }
  if (lines < kClearRun) return false;
  const double mean_sigma = kCorrelationInflation / std::sqrt(weight_total);
  return std::abs(weighted_sum / weight_total) > kMeanSigmas * mean_sigma;
}

// True when two crossings of one level are the same crossover seen through
// noise: both placeable or both not (a noisy crossing's wide interval must not
// swallow a clean one), their intervals touch, every line between them
// stays near the level (a curve that leaves the level between two crossings
// crosses twice for real), and no run of clearly one-sided lines parts them.
// "Near" is three standard deviations, so that one line of several rarely
// breaks a group by chance (0.3 % a line for Gaussian errors), plus what the
// curve's own slope moves it from the nearer crossing.
bool same_crossover(const Crossing& a, const Crossing& b, const LineTable& table, const Curve& curve,
                    double merge_sigmas) {
  constexpr double kNearLevelSigmas = 3.0;
  if (a.bracket.level != b.bracket.level || a.noisy != b.noisy) return false;
  if (b.log_f - a.log_f >= merge_sigmas * (a.log_f_sigma + b.log_f_sigma)) return false;
  if (leaves_level_between(a, b, curve)) return false;
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

}  // namespace

namespace {

// Measured lines are noisy: a crossover is placed by a quadratic over the
// lines within kPlacementDecades of its brackets on each side, at least
// options.fit_half_width - 1 and at most options.slope_half_width lines
// beyond them. Fewer lines make a crossing that follows the noise of the two
// or three nearest: on a simulated loop with 0.5 dB of line noise (the
// coverage check's noisy cell, 300 seeds) a quadratic over four lines placed
// the crossover with a scatter of 0.0117 decades, heavy-tailed, so that its
// jackknife intervals held the truth 84 % of the time at a nominal 95 %; over
// up to eight lines each side the scatter is 0.0087 decades and the
// intervals hold it 93 % of the time (a straight line over the same lines
// scatters less, 0.0061, but is biased by a third of that by the curve's
// bend).
constexpr double kPlacementDecades = 0.03;
// A window of this many lines or more that spans at least kCubicDecades is
// fitted with a cubic: a quadratic's own error, which grows as the cube of
// the span, then shows (measured on the calibration check's resonant loop, a
// stepped sine of 200 dwells: the phase crossover beside the resonance came
// out on average 0.8 standard errors low with a quadratic over eight lines
// spanning 0.055 decade, 0.1 with a cubic; 1.6 and 0.5 without the loop's
// disturbance). Over a narrower window the cubic only adds noise: on 2000
// lines a decade with 3 % errors, a merged crossover's phase margin
// scattered by 0.41 deg with a cubic over its window, 0.30 deg with a
// quadratic (60 seeds).
constexpr std::size_t kCubicLines = 7;
constexpr double kCubicDecades = 0.04;

bool measured(const Curve& curve, const Window& w) {
  return std::all_of(curve.sigmas.begin() + w.first, curve.sigmas.begin() + w.last + 1, [](double s) { return s > 0.0; });
}

Window placement_window(const std::vector<Crossing>& members, const LineTable& table, const MarginOptions& options) {
  std::size_t first = members.front().bracket.index;
  std::size_t last = members.back().bracket.index + 1;
  const std::size_t least = options.fit_half_width - 1;
  const auto within = [&](std::size_t from, std::size_t to) {
    return std::abs(table.log_f[to] - table.log_f[from]) <= kPlacementDecades;
  };
  const std::size_t low_line = first, high_line = last;
  for (std::size_t n = 0; n < options.slope_half_width && first > 0 && (n < least || within(low_line, first - 1)); ++n) --first;
  for (std::size_t n = 0; n < options.slope_half_width && last + 1 < table.size() && (n < least || within(high_line, last + 1));
       ++n) {
    ++last;
  }
  return {first, last};
}

}  // namespace

LocalFit group_fit(const LineTable& table, const Curve& curve, const std::vector<Crossing>& members,
                   const MarginOptions& options) {
  const std::size_t first = members.front().bracket.index;
  const std::size_t last = members.back().bracket.index;
  const Window narrow = window_around(first, last, options.fit_half_width, table.size());
  if (measured(curve, narrow)) {
    const Window w = placement_window(members, table, options);
    const bool cubic = w.last - w.first + 1 >= kCubicLines && table.log_f[w.last] - table.log_f[w.first] >= kCubicDecades;
    const int degree = cubic ? 3 : 2;
    return detail::fit_local(table.log_f, curve.values, curve.sigmas, w.first, w.last, degree, Weighting::kEqual);
  }
  const int degree = first == last ? detail::fit_degree(curve.sigmas, narrow.first, narrow.last) : 1;
  return detail::fit_local(table.log_f, curve.values, curve.sigmas, narrow.first, narrow.last, degree);
}

// Measured lines: the root of the group's fit nearest its members. Exact
// lines: a single crossing solved in its bracket, a merged group's on a
// straight line over the lines it spans, kept between its first and last
// member.
double group_crossing(const std::vector<Crossing>& members, const LineTable& table, const Curve& curve,
                      const MarginOptions& options) {
  const LocalFit fit = group_fit(table, curve, members, options);
  const double centre = 0.5 * (members.front().log_f + members.back().log_f);
  if (measured(curve, window_around(members.front().bracket.index, members.back().bracket.index, options.fit_half_width,
                                    table.size()))) {
    const double root = group_root(members, table, curve, options, centre);
    if (std::isfinite(root)) return root;
  }
  if (members.size() == 1) return detail::solve_in_bracket(fit, table.log_f, curve.values, members.front().bracket);
  const double level = members.front().bracket.level;
  const double root = fit.slope() != 0.0 ? fit.centre + (level - fit.coefficients[0]) / fit.slope() : fit.centre;
  return std::clamp(root, members.front().log_f, members.back().log_f);
}

double group_root(const std::vector<Crossing>& members, const LineTable& table, const Curve& curve,
                  const MarginOptions& options, double start) {
  const LocalFit fit = group_fit(table, curve, members, options);
  const Window w = placement_window(members, table, options);
  const double low = table.log_f[w.first], high = table.log_f[w.last];
  const double level = members.front().bracket.level;
  double u = start;
  for (int i = 0; i < 50; ++i) {
    const double slope = fit.derivative_at(u);
    if (!(slope != 0.0)) return NAN;
    const double step = (fit.at(u) - level) / slope;
    u -= step;
    if (!(u >= low && u <= high)) return NAN;
    if (std::abs(step) <= 1e-13 * std::max(1.0, std::abs(u))) return u;
  }
  return NAN;
}

namespace {

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

}  // namespace

std::vector<Group> crossing_groups(const std::vector<Bracket>& brackets, const LineTable& table, const Curve& curve,
                                   const MarginOptions& options) {
  std::vector<Group> groups;
  for (auto& members : cluster(place_crossings(brackets, table, curve, options), table, curve, options.merge_sigmas)) {
    Group g{std::move(members)};
    g.verdict = verdict_of(g, table, curve);
    g.log_f = group_crossing(g.members, table, curve, options);
    groups.push_back(std::move(g));
  }
  return groups;
}

std::vector<LineRun> hidden_runs(const LineTable& table, const Curve& curve, CrossingLevel level,
                                 const std::vector<Group>& groups, const MarginOptions& options) {
  constexpr double kNearSigmas = 2.0;  // as clear_side: closer than this, the line shows no side
  std::vector<bool> in_group(table.size(), false);
  for (const Group& g : groups) {
    for (std::size_t k = g.members.front().bracket.index; k <= g.members.back().bracket.index + 1; ++k)
      in_group[k] = true;
  }
  // Within its noise of the level: for the phase, two sigmas from -180 deg
  // (mod 360); for the gain, two sigmas of dB below 0 dB, or above it by
  // less than |L| (1 + 2 sigma) reaches, the bound of the lines' error model
  // (circular complex Gaussian of standard deviation |L| sigma), which a
  // tiny, very noisy value stays under.
  const auto near_level = [&](std::size_t k) {
    const double v = curve.values[k];
    if (level == CrossingLevel::kPhase) {
      return std::abs(v + 180.0 - 360.0 * std::round((v + 180.0) / 360.0)) <= kNearSigmas * curve.sigmas[k];
    }
    return v - kNearSigmas * curve.sigmas[k] <= 0.0 &&
           v + db_from_ratio(1.0 + kNearSigmas * table.relative_sigma[k]) >= 0.0;
  };
  std::vector<LineRun> runs;
  for (std::size_t k = 0; k < table.size();) {
    if (in_group[k] || !(table.relative_sigma[k] > options.max_line_sigma)) {
      ++k;
      continue;
    }
    LineRun run{k, k};
    bool near = false;
    for (; k < table.size() && !in_group[k] && table.relative_sigma[k] > options.max_line_sigma; ++k) {
      run.last = k;
      near = near || near_level(k);
    }
    if (near) runs.push_back(run);
  }
  return runs;
}

}  // namespace loopaudit::detail
