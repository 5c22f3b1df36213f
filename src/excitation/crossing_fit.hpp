// Straight lines and parabolas through zero-crossing times (sample position
// against cycle count): a steady tone's crossings lie on a line, a stepped
// sine's bend (or, after a phase jump, shift) at each edge, a chirp's curve.
#pragma once

#include <cstddef>
#include <span>
#include <vector>

namespace loopaudit::detail {

struct ZeroCrossing {
  double cycle = 0.0;
  double position = 0.0;  // in samples
};

// Crossings with running sums from which the least-squares line through any
// run of them comes in constant time. Positions are taken relative to a line
// of slope `period` through `origin`, so that the sums hold deviations of a
// few samples, not positions of millions.
class CrossingLines {
 public:
  CrossingLines(double origin, double period) : origin_(origin), period_(period) {}
  void add(const ZeroCrossing& c);
  std::size_t size() const { return sums_.size() - 1; }
  // The sum of squared residuals of the line through crossings [first, last).
  double residual(std::size_t first, std::size_t last) const;

 private:
  struct Sums {
    double n = 0.0, x = 0.0, y = 0.0, xx = 0.0, xy = 0.0, yy = 0.0;
  };
  double origin_;
  double period_;
  std::vector<Sums> sums_{Sums{}};
};

// Sums of squared residuals of the least-squares line and parabola through
// the crossings (two passes, centred: accurate for any positions).
double line_residual(std::span<const ZeroCrossing> points);
double parabola_residual(std::span<const ZeroCrossing> points);

}  // namespace loopaudit::detail
