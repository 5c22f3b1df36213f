#include "loopaudit/analysis/margins.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <sstream>

#include "analysis/crossings.hpp"
#include "analysis/groups.hpp"
#include "analysis/jackknife_margins.hpp"
#include "analysis/peaks.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

using detail::Bracket;
using detail::Crossing;
using detail::Curve;
using detail::Group;
using detail::Verdict;
using detail::bracket_sigma;
using detail::crossing_groups;
using detail::group_band;
using detail::unresolved;
using detail::LineTable;
using detail::LocalFit;
using detail::interval;
using detail::Window;
using detail::window_around;



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
  const LocalFit own = detail::group_fit(table, crossing_curve, group, options);
  const LocalFit other = detail::group_fit(table, other_curve, group, options);
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




// The other curve's range over lines first..last: |L| in dB for phase
// crossings, the phase margin for gain crossings.
Interval other_range(const LineTable& table, CrossingLevel level, std::size_t first, std::size_t last) {
  Interval range{INFINITY, -INFINITY};
  for (std::size_t k = first; k <= last; ++k) {
    const double v = level == CrossingLevel::kPhase ? table.gain_db[k] : wrap_deg(180.0 + table.phase_deg[k]);
    range.low = std::min(range.low, v);
    range.high = std::max(range.high, v);
  }
  return range;
}

// Lines first..last where crossings of one level are unresolved, with the
// noise crossings seen there (0 for lines too noisy to show a crossing at all).
struct Stretch {
  std::size_t first = 0;
  std::size_t last = 0;
  std::size_t count = 0;
  std::size_t wide = 0;  // of them placed with intervals too wide to use
};

// One stretch for each run of unresolved groups and hidden runs (lines too
// noisy to show a crossing) between resolved groups, in line order.
std::vector<Stretch> unresolved_stretches(const std::vector<Group>& groups,
                                          const std::vector<detail::LineRun>& hidden) {
  struct Item {
    Stretch lines;
    bool resolved = false;
  };
  std::vector<Item> items;
  for (const Group& g : groups) {
    const std::size_t count = g.members.size();
    items.push_back({{g.members.front().bracket.index, g.members.back().bracket.index + 1, count,
                      g.verdict == Verdict::kTooWide ? count : 0},
                     !unresolved(g.verdict)});
  }
  for (const detail::LineRun& run : hidden) items.push_back({{run.first, run.last}, false});
  std::stable_sort(items.begin(), items.end(),
                   [](const Item& a, const Item& b) { return a.lines.first < b.lines.first; });
  std::vector<Stretch> out;
  bool open = false;
  for (const Item& item : items) {
    if (item.resolved) {
      open = false;
      continue;
    }
    if (!open) {
      out.push_back(item.lines);
      open = true;
      continue;
    }
    Stretch& s = out.back();
    s.last = std::max(s.last, item.lines.last);
    s.count += item.lines.count;
    s.wide += item.lines.wide;
  }
  return out;
}

std::string unresolved_message(const Stretch& s, const std::string& range, CrossingLevel level,
                               const MarginOptions& options) {
  const char* what = level == CrossingLevel::kGain ? "gain crossing" : "phase crossing";
  const std::string where = (range.find(" to ") != std::string::npos ? "from " : "at ") + range;
  std::ostringstream message;
  if (s.count == 0) {
    message << "no " << what << " is seen " << where << ", but the lines there are too noisy (relative uncertainty "
            << "above " << options.max_line_sigma << ") and come within their noise of "
            << (level == CrossingLevel::kGain ? "0 dB" : "-180 deg") << ": a crossing there can be neither placed "
            << "nor ruled out";
  } else {
    message << s.count << " " << what << (s.count == 1 ? " " : "s ") << where << (s.count == 1 ? " is" : " are")
            << " not listed: the lines there are too noisy to place " << (s.count == 1 ? "it" : "them")
            << " (relative uncertainty above " << options.max_line_sigma << "), to show that the curve really "
            << "crosses, or to give an interval that means anything";
    if (s.wide > 0) message << " (" << s.wide << " placed with intervals too wide to use)";
  }
  message << ". Raise the injection or average longer if a crossover may lie there";
  return message.str();
}

// One stretch and one finding for each unresolved stretch (see above).
void report_unresolved(const std::vector<Group>& groups, const LineTable& table, const Curve& curve,
                       CrossingLevel level, const MarginOptions& options, Margins& margins) {
  const auto hidden = detail::hidden_runs(table, curve, level, groups, options);
  for (const Stretch& s : unresolved_stretches(groups, hidden)) {
    const Location band{.low_hz = std::pow(10.0, table.log_f[s.first]), .high_hz = std::pow(10.0, table.log_f[s.last])};
    margins.unresolved.push_back(
        {level, *band.low_hz, *band.high_hz, s.count, other_range(table, level, s.first, s.last)});
    const std::string range = format_frequency_range(*band.low_hz, *band.high_hz);
    margins.findings.push_back(
        make_warning("margins.unresolved-crossings", unresolved_message(s, range, level, options), band));
  }
}

double group_sigma(const Group& g) {
  double sigma = 0.0;
  for (const Crossing& c : g.members) sigma = std::max(sigma, c.log_f_sigma);
  return sigma;
}

// A near miss within a few of its sigmas of a crossover of the same level is
// that crossover's noise (a steep curve crossed many times by noisy lines),
// not a second approach to the level: it gets no warning of its own.
bool beside_crossover(const Group& near_miss, const std::vector<Group>& groups) {
  constexpr double kBesideSigmas = 3.0;
  for (const Group& g : groups) {
    if (g.verdict != Verdict::kCrossover) continue;
    if (std::abs(g.log_f - near_miss.log_f) <= kBesideSigmas * (group_sigma(g) + group_sigma(near_miss))) return true;
  }
  return false;
}

void report_near_miss(const Group& g, const LineTable& table, const std::string& what, Diagnostics& findings) {
  std::ostringstream message;
  message << what << " near " << format_frequency(std::pow(10.0, g.log_f)) << " without crossing on balance ("
          << g.members.size() << (g.members.size() == 1 ? " noise crossing" : " noise crossings")
          << "); the data cannot tell whether it crosses";
  findings.push_back(make_warning("margins.near-crossing", message.str(), group_band(g.members, table)));
}

std::vector<GainCrossover> gain_crossovers(const LineTable& table, const MarginOptions& options, Margins& margins,
                                           std::vector<Group>& listed) {
  const Curve gain{table.gain_db, table.gain_sigma_db};
  const Curve phase{table.phase_deg, table.phase_sigma_deg};
  auto groups = crossing_groups(detail::gain_brackets(table), table, gain, options);
  std::vector<GainCrossover> result;
  const double z = two_sided_z(options.confidence);
  for (Group& g : groups) {
    const Placed p = place(table, gain, phase, g.members, g.log_f, options);
    const double phase_margin_deg = wrap_deg(180.0 + p.other);
    if (g.verdict == Verdict::kNearMiss && !beside_crossover(g, groups)) {
      report_near_miss(g, table, "|L| comes within noise of 0 dB (phase margin there about " +
                                     std::to_string(std::lround(phase_margin_deg)) + " deg)", margins.findings);
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
    if (detail::too_wide(c.frequency_hz, c.phase_margin_deg, detail::kMaxPhaseIntervalDeg, table.log_f.back() - table.log_f.front())) {
      g.verdict = Verdict::kTooWide;
      continue;
    }
    result.push_back(c);
    listed.push_back(g);
  }
  report_unresolved(groups, table, gain, CrossingLevel::kGain, options, margins);
  return result;
}

std::vector<PhaseCrossover> phase_crossovers(const LineTable& table, const MarginOptions& options, Margins& margins,
                                             std::vector<Group>& listed) {
  const Curve gain{table.gain_db, table.gain_sigma_db};
  const Curve phase{table.phase_deg, table.phase_sigma_deg};
  auto groups = crossing_groups(detail::phase_brackets(table), table, phase, options);
  std::vector<PhaseCrossover> result;
  const double z = two_sided_z(options.confidence);
  for (Group& g : groups) {
    const Placed p = place(table, phase, gain, g.members, g.log_f, options);
    const double gain_db = p.other;
    if (g.verdict == Verdict::kNearMiss && !beside_crossover(g, groups)) {
      report_near_miss(g, table, "the phase comes within noise of -180 deg (|L| there about " +
                                     std::to_string(std::lround(gain_db)) + " dB)", margins.findings);
    }
    if (g.verdict != Verdict::kCrossover) continue;
    PhaseCrossover c;
    c.frequency_hz = {std::pow(10.0, g.log_f), frequency_interval(p.log_f, p.log_f_sigma, z)};
    c.gain_margin_db = {-gain_db, interval(-gain_db, p.other_sigma, z)};
    c.limits = detail::direction_of(-gain_db);
    c.merged_crossings = g.members.size();
    c.trust_flags = trust_flags(table, g.members, options);
    if (detail::too_wide(c.frequency_hz, c.gain_margin_db, detail::kMaxGainIntervalDb, table.log_f.back() - table.log_f.front())) {
      g.verdict = Verdict::kTooWide;
      continue;
    }
    result.push_back(c);
    listed.push_back(g);
  }
  report_unresolved(groups, table, phase, CrossingLevel::kPhase, options, margins);
  // Crossings of different levels (-180, -540 deg) come level by level: the
  // list and its groups go out in frequency order together.
  std::vector<std::size_t> order(result.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return result[a].frequency_hz.value < result[b].frequency_hz.value; });
  std::vector<PhaseCrossover> sorted;
  std::vector<Group> sorted_groups;
  for (std::size_t i : order) {
    sorted.push_back(result[i]);
    sorted_groups.push_back(listed[i]);
  }
  listed = std::move(sorted_groups);
  return sorted;
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
  margins.stability = assess_stability(loop, {.open_loop_rhp_poles = options.open_loop_rhp_poles, .sign_doubted = options.sign_doubted});
  margins.findings.push_back(make_warning("margins.too-few-lines",
                                          "margins need at least two lines to bracket a crossing; the response has " +
                                              std::to_string(loop.size())));
  return margins;
}

// The lines inside options.band_hz (all without one), with a note for the
// lines left out; fewer than two inside is an error that names the band.
Response lines_in_band(const Response& loop, const MarginOptions& options, Diagnostics& findings) {
  if (!options.band_hz || loop.size() == 0) return loop;
  const Interval band = *options.band_hz;
  std::vector<std::size_t> lines;
  for (std::size_t k = 0; k < loop.size(); ++k) {
    if (loop.frequency_hz[k] >= band.low && loop.frequency_hz[k] <= band.high) lines.push_back(k);
  }
  const Response inside = select_lines(loop, lines);
  const std::string what = format_frequency(band.low) + " to " + format_frequency(band.high) + " (" +
                           options.band_source + ")";
  if (inside.size() < 2) {
    throw NumericalError("only " + std::to_string(inside.size()) + " of the " + std::to_string(loop.size()) +
                         " lines (" + format_frequency(loop.frequency_hz.front()) + " to " +
                         format_frequency(loop.frequency_hz.back()) + ") lie in the margin band " + what +
                         "; margins need at least two: widen the band");
  }
  const std::size_t left_out = loop.size() - inside.size();
  if (left_out > 0) {
    findings.push_back(make_note("margins.band", "margins are read from the " + std::to_string(inside.size()) +
                                                     " lines from " + what + "; the other " + std::to_string(left_out) +
                                                     " lines are drawn but not used",
                                 {.low_hz = band.low, .high_hz = band.high}));
  }
  return inside;
}

// A warning for each margin an unresolved stretch may hide from the summary.
void report_possible(const MarginSummary& summary, Diagnostics& findings) {
  for (const PossibleMargin& p : summary.possible) {
    const bool phase = p.is_phase();
    const char* what = p.what();
    const char* unit = phase ? " deg" : " dB";
    std::ostringstream message;
    const auto number = [&](double v) { return phase ? format_fixed(v, 1) : format_signed(v, 1); };
    message << what << " from " << number(p.range.low) << " to " << number(p.range.high) << unit
            << " may lie from " << format_frequency(p.low_hz) << " to " << format_frequency(p.high_hz) << ", where "
            << (phase ? "gain" : "phase") << " crossings could not be resolved: the summary's "
            << (phase ? "phase margin" : "gain margins") << " may not be the loop's. Measure that stretch again with "
            << "more injection or longer averaging before relying on them";
    findings.push_back(make_warning("margins.possible-margin", message.str(), {.low_hz = p.low_hz, .high_hz = p.high_hz}));
  }
}

// A verdict the lines cannot support becomes undecided, with the reason;
// the count stays, the closed-loop poles it implied go.
void withdraw_verdict(StabilityAssessment& st, std::string reason) {
  st.verdict = StabilityVerdict::kUndecided;
  st.closed_loop_rhp_poles.reset();
  st.reason = std::move(reason);
}

// A listed crossover where L meets -1 within rounding (kOnMarginRelative):
// the gain margin or the phase margin there is zero as far as the numbers tell.
std::optional<double> on_margin_at(const Margins& m) {
  const double gain_tolerance_db = db_from_ratio(1.0 + kOnMarginRelative);
  const double phase_tolerance_deg = deg_from_rad(kOnMarginRelative);
  for (const PhaseCrossover& c : m.phase_crossovers) {
    if (std::abs(c.gain_margin_db.value) <= gain_tolerance_db) return c.frequency_hz.value;
  }
  for (const GainCrossover& c : m.gain_crossovers) {
    if (std::abs(c.phase_margin_deg.value) <= phase_tolerance_deg) return c.frequency_hz.value;
  }
  return std::nullopt;
}

// Why an unresolved stretch may hide a pass of L by -1, or "": phase
// crossings where |L| ranges across 0 dB may cross the negative real axis on
// either side of -1; gain crossings where the phase margin ranges across 0
// may pass through it.
std::string near_critical(const UnresolvedStretch& u) {
  if (!(u.other.low <= 0.0 && u.other.high >= 0.0)) return "";
  const std::string range = format_frequency_range(u.low_hz, u.high_hz);
  const std::string where = (range.find(" to ") != std::string::npos ? "from " : "at ") + range;
  if (u.level == CrossingLevel::kGain) {
    return "gain crossings " + where + " are unresolved and the phase margin there ranges from " +
           format_fixed(u.other.low, 1) + " to " + format_fixed(u.other.high, 1) +
           " deg: L may pass -1 there, on either side, and the lines cannot tell which (margins.unresolved-crossings)";
  }
  return "phase crossings " + where + " are unresolved and |L| there ranges from " + format_signed(u.other.low, 1) +
         " to " + format_signed(u.other.high, 1) +
         " dB: L may cross the negative real axis there on either side of "
         "-1, and the lines cannot tell which (margins.unresolved-crossings)";
}

// The Nyquist count is withdrawn where the margins show that L meets -1
// within rounding, or that an unresolved stretch may hide a pass by -1.
void doubt_verdict(Margins& m) {
  StabilityAssessment& st = m.stability;
  if (const auto f = on_margin_at(m)) {
    char tolerance[32];
    std::snprintf(tolerance, sizeof tolerance, "%.0e", kOnMarginRelative);
    const std::string text = "L meets -1 within rounding (" + std::string(tolerance) + " relative) at " +
                             format_frequency(*f) +
                             ": the loop sits on the stability margin, so it is neither stable nor unstable as far "
                             "as the lines can tell";
    m.findings.push_back(make_warning("margins.on-margin", text, {.low_hz = *f, .high_hz = *f}));
    if (st.verdict != StabilityVerdict::kUndecided) withdraw_verdict(st, text);
  }
  if (st.verdict == StabilityVerdict::kUndecided) return;
  for (const UnresolvedStretch& u : m.unresolved) {
    if (std::string why = near_critical(u); !why.empty()) {
      withdraw_verdict(st, std::move(why));
      return;
    }
  }
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

Margins find_margins(const Response& all_lines, const MarginOptions& options) {
  options.validate();
  Diagnostics band_findings;
  const Response loop = lines_in_band(all_lines, options, band_findings);
  if (loop.size() < 2) return too_few_lines(loop, options);
  const LineTable table = detail::make_line_table(loop.frequency_hz, loop.value, loop.relative_sigma, loop.coherence);
  Margins margins;
  margins.band_low_hz = loop.frequency_hz.front();
  margins.band_high_hz = loop.frequency_hz.back();
  margins.line_count = loop.size();
  margins.confidence = options.confidence;
  detail::ListedGroups listed;
  margins.gain_crossovers = gain_crossovers(table, options, margins, listed.gain);
  margins.phase_crossovers = phase_crossovers(table, options, margins, listed.phase);
  margins.modulus = detail::modulus_point(table, options);
  margins.disk = detail::disk_point(table, options);
  detail::jackknife_margins(loop, table, listed, options, margins);
  margins.stability = assess_stability(loop, {.open_loop_rhp_poles = options.open_loop_rhp_poles, .sign_doubted = options.sign_doubted});
  doubt_verdict(margins);
  if (margins.stability.verdict == StabilityVerdict::kUnstable) {
    margins.findings.push_back(make_warning(
        "margins.closed-loop-unstable",
        "the closed loop is unstable by the Nyquist count: the margins, the modulus margin and the disk margin "
        "measure the distance to a boundary the loop has already crossed and do not say that it is robust"));
  }
  margins.summary = detail::summarize(margins);
  report_possible(margins.summary, margins.findings);
  detail::add_absence_findings(table, margins);
  margins.findings.insert(margins.findings.begin(), band_findings.begin(), band_findings.end());
  return margins;
}

}  // namespace loopaudit
