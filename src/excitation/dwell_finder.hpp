// The dwells of a stepped sine from the periods between the injection's
// upward zero crossings, in one streaming pass.
//
// A dwell is a run of periods that hold steady; its edges are where the
// period jumps. The mean of the latest periods (4 to kRecentPeriods of them)
// is tested against the run before them, which finds steps smaller than the
// jitter of one period (a dense sweep on a noisy tone) as well as large ones;
// the edge is then placed where two straight lines through the crossing
// times fit best, and the period across it belongs to neither dwell. A
// single period far outside the run's jitter (a phase reset between dwells,
// a noise spike) is passed over; two in a row on the same side are a step
// and are kept for the test. Each edge between plateaus that meet is judged:
// a stepped sine's crossings bend (or shift) there, a chirp's curve through.
// The step test keeps the latest kRecentPeriods periods; memory does not grow
// with the record beyond a few numbers per dwell.
#pragma once

#include <cstddef>
#include <deque>
#include <optional>
#include <vector>

#include "excitation/crossing_fit.hpp"

namespace loopaudit::detail {

// A run of steady period: a dwell candidate.
struct Plateau {
  double start = 0.0;  // sample position of its first upward crossing
  double end = 0.0;    // and of its last
  double period_sum = 0.0;
  double change_sum = 0.0;        // sum of |p_i - p_(i-1)|: the jitter, blind to a trend
  double last_period = 0.0;
  std::size_t cycles = 0;
  std::size_t changes = 0;

  double mean_period() const { return period_sum / static_cast<double>(cycles); }
  void add(double period);
  // `later` appended to this one, as if they were one run.
  void absorb(const Plateau& later);
};

struct FoundDwells {
  std::vector<Plateau> plateaus;  // of at least kMinDwellCycles, in time order
  // Edges between plateaus that meet, judged on the crossings either side;
  // `bends` of them lie on two lines rather than one parabola.
  std::size_t edges = 0;
  std::size_t bends = 0;
};

class DwellFinder {
 public:
  // Periods go only up to this many back for the step test: a step is found
  // once this many periods of the new dwell are in (enough for a 0.2 % step
  // under crossings that jitter by 2 % of a period), and memory stays bounded.
  static constexpr std::size_t kRecentPeriods = 256;
  static_assert((kRecentPeriods & (kRecentPeriods - 1)) == 0, "a power of two: the ring's index is a mask");

  DwellFinder();

  // One period: consecutive upward crossings at sample positions `from`, `to`.
  void add_period(double from, double to);
  FoundDwells finish();
  // The current plateau's mean period (0 before the first period).
  double period() const { return current_.cycles ? current_.mean_period() : 0.0; }

 private:
  struct Entry {
    double from = 0.0;
    double to = 0.0;
    Plateau before;  // the plateau before this period joined it
  };
  // The latest kRecentPeriods entries, oldest first; a full ring drops its
  // oldest on push.
  class Recent {
   public:
    void push_back(const Entry& e) {
      ring_[(head_ + size_) % kRecentPeriods] = e;
      if (size_ < kRecentPeriods) {
        ++size_;
      } else {
        head_ = (head_ + 1) % kRecentPeriods;
      }
    }
    const Entry& operator[](std::size_t i) const { return ring_[(head_ + i) % kRecentPeriods]; }
    std::size_t size() const { return size_; }
    void clear() { head_ = size_ = 0; }

   private:
    std::vector<Entry> ring_ = std::vector<Entry>(kRecentPeriods);
    std::size_t head_ = 0;
    std::size_t size_ = 0;
  };
  struct Outlier {
    double from = 0.0;
    double to = 0.0;
    bool longer = false;
  };

  double crossing_jitter(const Plateau& p) const;  // RMS timing error of one crossing, in samples
  void take(double from, double to);
  std::optional<std::size_t> find_step() const;
  bool steps_at(std::size_t j, double jitter) const;
  std::size_t locate_step() const;
  std::vector<ZeroCrossing> crossings(std::size_t first, std::size_t last,
                                  std::vector<std::size_t>* first_point = nullptr) const;
  void split(std::size_t j);
  void close(std::optional<std::size_t> periods = std::nullopt);
  bool join_last();
  void judge_edge();

  Plateau current_;
  Recent recent_;                 // the latest periods of current_
  std::deque<Entry> replay_;      // periods that a split moved to a new plateau, to take again
  std::optional<Outlier> outlier_;
  double prior_change_;           // mean |p_i - p_(i-1)| over p of the last plateau that showed it
  std::vector<Plateau> plateaus_;
  std::vector<ZeroCrossing> edge_left_;   // the last kEdgeCycles crossings of the last plateau
  std::vector<ZeroCrossing> edge_right_;  // the first kEdgeCycles crossings of the current one
  std::size_t edges_ = 0;
  std::size_t bends_ = 0;
};

}  // namespace loopaudit::detail
