// Where the Bode plot's crossover tags go: each near its own mark, clear of
// the curves, of the other marks and tags, and with a leader to its mark
// that crosses no other mark, tag or leader. Pixel coordinates, y downward.
#pragma once

#include <utility>
#include <vector>

#include "report/svg.hpp"

namespace loopaudit::plotting {

struct Box {
  double left = 0.0, top = 0.0, right = 0.0, bottom = 0.0;
  static Box around(svg::Point centre, double half) {
    return {centre.x - half, centre.y - half, centre.x + half, centre.y + half};
  }
  Box grown(double by) const { return {left - by, top - by, right + by, bottom + by}; }
  bool overlaps(const Box& o) const { return left < o.right && o.left < right && top < o.bottom && o.top < bottom; }
  bool holds(const Box& o) const { return o.left >= left && o.right <= right && o.top >= top && o.bottom <= bottom; }
  bool holds(svg::Point p) const { return p.x >= left && p.x <= right && p.y >= top && p.y <= bottom; }
};

class TagPlacer {
 public:
  TagPlacer(double width, double height);
  // A drawn curve, broken at non-finite points: tags keep off it.
  void block_path(const std::vector<svg::Point>& points);
  // A mark: no tag sits on it and no other tag's leader crosses it.
  void block(const Box& box);
  // The centre of a tag of half size `half` for the mark at `anchor`, inside
  // `area`, reserved with its leader: the nearest place that is clear, or
  // else the least crowded one.
  svg::Point place(svg::Point anchor, double half, const Box& area);

 private:
  double crowding(svg::Point anchor, svg::Point centre, double half) const;
  bool curve_at(svg::Point p) const;
  int columns_ = 0;
  int rows_ = 0;
  std::vector<unsigned char> curve_;  // one flag per cell of kCell px
  std::vector<Box> taken_;
  std::vector<std::pair<svg::Point, svg::Point>> leaders_;
};

}  // namespace loopaudit::plotting
