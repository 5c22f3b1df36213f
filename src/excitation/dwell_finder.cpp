#include "excitation/dwell_finder.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <numbers>
#include <utility>

#include "excitation/crossing_fit.hpp"

namespace loopaudit::detail {
namespace {

// Shorter runs are no dwell: a sine fit needs a few cycles after settling.
constexpr std::size_t kMinDwellCycles = 4;
// The mean |p_i - p_(i-1)| over p that a plateau is assumed to show before
// it has shown its own (what a tone under noise at a tenth of its RMS gives
// at its crossings), and how many changes that guess weighs: a young plateau
// takes the last plateau's jitter, or this, until its own outweighs it.
constexpr double kInitialChange = 0.02;
constexpr double kPriorWeight = 8.0;
// A period further than this many of its standard deviations from the
// plateau's mean is outside it. Gaussian jitter passes 5 sigma once in 3.5
// million periods; twice in a row on the same side, practically never.
constexpr double kJumpSigmas = 5.0;
// A step between the latest periods and the run before them counts when it
// passes this many of its standard deviations: about 15 tests a period over
// up to 10^6 periods, and Gaussian noise passes 6 sigma once in 5 x 10^8.
constexpr double kStepSigmas = 6.0;
// Steps smaller than this share of the period are no edge, however clean the
// tone: 0.2 % is over 1000 points a decade, denser than sweeps are made, and
// it keeps a generator's own slow wander from cutting a dwell into pieces.
constexpr double kMinStep = 0.002;
// Periods on each side of a step before it is tested.
constexpr std::size_t kMinSide = 2;
// Counts of latest periods tested against the run before them; roughly
// geometric, so that a step is tested at every length from 4 to
// kRecentPeriods within a factor 1.5 of its best (a step that shows within
// fewer periods is outside the jitter, found by the rule of two periods
// outside). A count r is tested every r / kTestsPerCount periods (at most a
// few periods late), rounded down to a power of two; that makes about 4
// tests a period rather than 13.
constexpr std::array<std::size_t, 13> kRightCounts{4, 6, 8, 12, 16, 24, 32, 48, 64, 96, 128, 192, 256};
constexpr std::size_t kTestsPerCount = 4;
constexpr std::array<std::size_t, kRightCounts.size()> test_strides() {
  std::array<std::size_t, kRightCounts.size()> out{};
  for (std::size_t i = 0; i < out.size(); ++i) {
    out[i] = 1;
    while (2 * out[i] <= kRightCounts[i] / kTestsPerCount) out[i] *= 2;
  }
  return out;
}
constexpr auto kTestStrides = test_strides();  // nondecreasing
// Two plateaus this many periods apart or closer (outliers passed over
// between them: a burst of noise) whose periods agree are one dwell.
constexpr double kMergeGapPeriods = 16.0;
// An edge is judged on up to this many cycles either side: enough to tell a
// bend from a curve under noise (a chirp cut where its step first passes
// kStepSigmas leaves a curve worth 0.4 n jitter^2 against two lines over n
// cycles a side, a bend as much against a parabola), few enough that a
// logarithmic chirp is a parabola over them.
constexpr std::size_t kEdgeCycles = 64;
// For crossing times with independent errors of RMS s, a difference of two
// periods has E|p_i - p_(i-1)| = s sqrt(6) sqrt(2/pi) = s sqrt(12/pi).
const double kJitterPerChange = std::sqrt(std::numbers::pi / 12.0);

// Whether runs of `left` and `right` periods with these means differ, for
// crossings of RMS timing error `jitter`: the mean of n consecutive periods is
// their span over n, so its error is sqrt(2) jitter / n (not over sqrt(n)).
bool steps_apart(double left_mean, double left_count, double right_mean, double right_count, double jitter) {
  const double variance = 2.0 * jitter * jitter * (1.0 / (left_count * left_count) + 1.0 / (right_count * right_count));
  const double difference = right_mean - left_mean;
  return difference * difference > kStepSigmas * kStepSigmas * variance && std::abs(difference) > kMinStep * left_mean;
}

}  // namespace

void Plateau::add(double period) {
  if (cycles > 0) {
    change_sum += std::abs(period - last_period);
    ++changes;
  }
  period_sum += period;
  last_period = period;
  ++cycles;
}

void Plateau::absorb(const Plateau& later) {
  period_sum += later.period_sum;
  change_sum += later.change_sum;
  changes += later.changes;
  cycles += later.cycles;
  last_period = later.last_period;
  end = later.end;
}

DwellFinder::DwellFinder() : prior_change_(kInitialChange) {}

double DwellFinder::crossing_jitter(const Plateau& p) const {
  const double mean = p.cycles ? p.mean_period() : 0.0;
  const double change = (p.change_sum + kPriorWeight * prior_change_ * mean) / (static_cast<double>(p.changes) + kPriorWeight);
  return kJitterPerChange * change;
}

void DwellFinder::add_period(double from, double to) {
  const double period = to - from;
  if (current_.cycles > 0) {
    const double mean = current_.mean_period();
    const double tolerance = std::max(kJumpSigmas * std::sqrt(2.0) * crossing_jitter(current_), kMinStep * mean);
    if (std::abs(period - mean) > tolerance) {
      const bool longer = period > mean;
      if (!outlier_ || outlier_->longer != longer) {  // the first outside: passed over
        outlier_ = Outlier{from, to, longer};
        return;
      }
      // Twice outside on the same side: no noise, but a step. Both are
      // taken, and the step test places the edge among the latest periods.
      const Outlier first = *outlier_;
      outlier_.reset();
      take(first.from, first.to);
      take(from, to);
      return;
    }
  }
  outlier_.reset();
  take(from, to);
}

// Adds a period to the current plateau; when the latest periods step away
// from the run before them, the plateau ends there and they start the next
// one (taken again, as they may hold further steps).
void DwellFinder::take(double from, double to) {
  replay_.push_back({from, to, {}});
  while (!replay_.empty()) {
    const Entry next = replay_.front();
    replay_.pop_front();
    recent_.push_back({next.from, next.to, current_});
    if (current_.cycles == 0) current_.start = next.from;
    current_.add(next.to - next.from);
    current_.end = next.to;
    if (current_.cycles == kEdgeCycles) edge_right_ = crossings(0, recent_.size());
    if (const auto j = find_step()) split(*j);
  }
}

bool DwellFinder::steps_at(std::size_t j, double jitter) const {
  const Plateau& left = recent_[j].before;
  if (left.cycles < kMinSide || current_.cycles < left.cycles + kMinSide) return false;
  const auto left_count = static_cast<double>(left.cycles);
  const auto right_count = static_cast<double>(current_.cycles - left.cycles);
  return steps_apart(left.mean_period(), left_count, (current_.period_sum - left.period_sum) / right_count, right_count,
                     jitter);
}

// Whether the latest periods step away from the run before them, tested for
// each of kRightCounts latest periods; if so, where.
std::optional<std::size_t> DwellFinder::find_step() const {
  const std::size_t n = recent_.size();
  const double jitter = crossing_jitter(current_);
  // The counts due now: those whose stride divides the cycle count, a prefix
  // of kRightCounts as the strides are powers of two that do not decrease.
  const std::size_t due = current_.cycles & (~current_.cycles + 1);  // the largest power of two dividing it
  for (std::size_t i = 0; i < kRightCounts.size() && kTestStrides[i] <= due && kRightCounts[i] + kMinSide <= n; ++i) {
    if (steps_at(n - kRightCounts[i], jitter)) return locate_step();
  }
  return std::nullopt;
}

// The edge in the latest periods: the period j between two straight lines
// through the crossing times (sample position against cycle count), one
// each side, that fit best. A step in frequency bends the line, a phase jump
// shifts it; the period across the edge, a blend of both dwells or cut short
// by the jump, belongs to neither. The edge is placed to about the
// crossings' jitter over the step, within a cycle where a test of mean
// periods could be a few cycles off.
std::size_t DwellFinder::locate_step() const {
  std::vector<std::size_t> first_point;  // the crossing that starts each period
  const std::vector<ZeroCrossing> points = crossings(0, recent_.size(), &first_point);
  CrossingLines lines(points.front().position, current_.mean_period());
  for (const ZeroCrossing& c : points) lines.add(c);
  std::size_t best = kMinSide;
  double best_residual = std::numeric_limits<double>::infinity();
  for (std::size_t j = kMinSide; j + 2 <= recent_.size(); ++j) {
    const double residual = lines.residual(0, first_point[j] + 1) + lines.residual(first_point[j] + 1, lines.size());
    if (residual < best_residual) {
      best = j;
      best_residual = residual;
    }
  }
  return best;
}

// The crossings of recent_[first, last) as (cycle, position), the first at
// cycle 0, counting a period passed over between two periods that do not meet.
std::vector<ZeroCrossing> DwellFinder::crossings(std::size_t first, std::size_t last,
                                             std::vector<std::size_t>* first_point) const {
  std::vector<ZeroCrossing> out;
  double cycle = 0.0;
  for (std::size_t i = first; i < last; ++i) {
    if (i == first || recent_[i].from != recent_[i - 1].to) {
      if (i > first) cycle += 1.0;
      out.push_back({cycle, recent_[i].from});
    }
    if (first_point) first_point->push_back(out.size() - 1);
    cycle += 1.0;
    out.push_back({cycle, recent_[i].to});
  }
  return out;
}

void DwellFinder::split(std::size_t j) {
  std::deque<Entry> tail;
  for (std::size_t i = j + 1; i < recent_.size(); ++i) tail.push_back(recent_[i]);
  current_ = recent_[j].before;
  close(j);
  replay_.insert(replay_.begin(), tail.begin(), tail.end());
}

// Ends the current plateau, whose periods are the first `periods` of
// recent_ (all when it is not full): kept, joined to the last, or dropped
// when too short; the edge to the last plateau is judged.
void DwellFinder::close(std::optional<std::size_t> periods) {
  const std::size_t n = periods.value_or(recent_.size());
  if (current_.changes >= static_cast<std::size_t>(kPriorWeight)) {
    prior_change_ = current_.change_sum / static_cast<double>(current_.changes) / current_.mean_period();
  }
  if (current_.cycles >= kMinDwellCycles && n > 0) {
    if (edge_right_.empty()) edge_right_ = crossings(0, std::min(n, kEdgeCycles));
    std::erase_if(edge_right_, [&](const ZeroCrossing& c) { return c.position > current_.end; });
    if (!join_last()) {
      if (!plateaus_.empty() && current_.start - plateaus_.back().end <= kMergeGapPeriods * current_.mean_period()) {
        judge_edge();
      }
      plateaus_.push_back(current_);
    }
    edge_left_ = crossings(n - std::min(n, kEdgeCycles), n);
  } else {
    edge_left_.clear();
  }
  edge_right_.clear();
  current_ = Plateau{};
  recent_.clear();
}

// Joins the current plateau to the last one when only outliers lie between
// them and their periods do not differ.
bool DwellFinder::join_last() {
  if (plateaus_.empty()) return false;
  Plateau& last = plateaus_.back();
  if (current_.start - last.end > kMergeGapPeriods * last.mean_period()) return false;
  Plateau both = last;
  both.absorb(current_);
  if (steps_apart(last.mean_period(), static_cast<double>(last.cycles), current_.mean_period(),
                  static_cast<double>(current_.cycles), crossing_jitter(both))) {
    return false;
  }
  last = both;
  return true;
}

// Whether the crossings either side of the edge between the last plateau and
// the current one lie on two lines (a stepped sine bends or shifts there)
// rather than on one parabola (a chirp curves through).
void DwellFinder::judge_edge() {
  if (edge_left_.size() < 3 || edge_right_.size() < 3) return;
  std::vector<ZeroCrossing> both = edge_left_;
  const double period = 0.5 * (plateaus_.back().mean_period() + current_.mean_period());
  const double gap = edge_right_.front().position - edge_left_.back().position;
  const double skipped = gap > 0.0 ? std::max(1.0, std::round(gap / period)) : 0.0;  // 0: they share a crossing
  const double offset = edge_left_.back().cycle + skipped - edge_right_.front().cycle;
  for (std::size_t i = skipped > 0.0 ? 0 : 1; i < edge_right_.size(); ++i) {
    both.push_back({edge_right_[i].cycle + offset, edge_right_[i].position});
  }
  ++edges_;
  if (parabola_residual(both) > line_residual(edge_left_) + line_residual(edge_right_)) ++bends_;
}

FoundDwells DwellFinder::finish() {
  outlier_.reset();
  close();
  return {std::move(plateaus_), edges_, bends_};
}

}  // namespace loopaudit::detail
