// Crossings of one level between measured lines, grouped into crossovers:
// noise crossings of one crossover merge, and each group says whether the
// curve really passes the level there (DEVELOPERS.md, "Crossings").
#pragma once

#include <cstddef>
#include <vector>

#include "analysis/crossings.hpp"

namespace loopaudit::detail {

// A crossing placed between two lines, before clusters are merged.
struct Crossing {
  Bracket bracket;
  double log_f = 0.0;
  double slope = 0.0;        // of the curve, per decade, fitted over a wide window
  double log_f_sigma = 0.0;  // from the per-line uncertainty and the slope
  bool noisy = false;        // its lines are too uncertain to place it
};

// One curve of the table (gain in dB or unwrapped phase in deg) with the
// standard deviation of each line, in the same unit.
struct Curve {
  const std::vector<double>& values;
  const std::vector<double>& sigmas;
};

// What a group of merged crossings says.
enum class Verdict {
  kCrossover,    // the curve is clearly on opposite sides before and after it
  kNearMiss,     // clearly on the same side: it comes back, within noise
  kUnresolved,   // a member lies between lines too noisy to place it, or no clear side
  kTooWide,      // placed, but its intervals are too wide to mean anything
};
bool unresolved(Verdict v);

struct Group {
  std::vector<Crossing> members;
  Verdict verdict = Verdict::kCrossover;
  double log_f = 0.0;  // where the group crosses the level
};

double bracket_sigma(const std::vector<double>& sigmas, const Bracket& bracket);
Location group_band(const std::vector<Crossing>& group, const LineTable& table);

// Intervals that say nothing: a frequency interval wider than a decade or
// than the band (band_decades wide), a margin interval wider than
// `max_margin_width` (kMaxPhaseIntervalDeg: any phase at all;
// kMaxGainIntervalDb: a factor of 100 in gain). Such a crossing is neither
// listed nor summarised.
inline constexpr double kMaxPhaseIntervalDeg = 180.0;
inline constexpr double kMaxGainIntervalDb = 40.0;
bool too_wide(const Estimate& frequency_hz, const Estimate& margin, double max_margin_width, double band_decades);

// The local fit of a curve that places a group. Measured lines: a quadratic
// (a cubic over a window of 7 lines or more spanning 0.04 decade) with equal
// weights over the placement window (the group's brackets, at least
// fit_half_width - 1 lines beyond them and any further within 0.03 decade). Lines with an exact part: the bracket's own fit (degree from
// fit_degree) for a single crossing, a straight line over a merged group.
LocalFit group_fit(const LineTable& table, const Curve& curve, const std::vector<Crossing>& members,
                   const MarginOptions& options);

// Where the group crosses its level on these lines (the table the group was
// found on, or a replicate of it): a single crossing solved in its bracket,
// a merged group on a straight line over its lines (Group::log_f).
double group_crossing(const std::vector<Crossing>& members, const LineTable& table, const Curve& curve,
                      const MarginOptions& options);

// The root of the group's fit (group_fit) nearest to `start`, by Newton's
// method: a smooth function of the lines, unlike group_crossing (which keeps
// a crossing in its bracket or between its members), for the jackknife to
// measure how far the lines' noise moves a crossing. NaN when the fit has no
// root near `start` (within its window).
double group_root(const std::vector<Crossing>& members, const LineTable& table, const Curve& curve,
                  const MarginOptions& options, double start);

// The crossings of `brackets`, grouped, each group with its verdict.
std::vector<Group> crossing_groups(const std::vector<Bracket>& brackets, const LineTable& table, const Curve& curve,
                                   const MarginOptions& options);

// Lines first..last (inclusive).
struct LineRun {
  std::size_t first = 0;
  std::size_t last = 0;
};

// Runs of lines too noisy to place a crossing among (relative sigma above
// options.max_line_sigma) where no crossing was seen, outside every group's
// lines, that hold a line within two of its sigmas of a level (0 dB, or
// -180 deg mod 360 for the phase): the curve may cross there unseen, so "no
// crossing" is not a claim those lines support.
std::vector<LineRun> hidden_runs(const LineTable& table, const Curve& curve, CrossingLevel level,
                                 const std::vector<Group>& groups, const MarginOptions& options);

}  // namespace loopaudit::detail
