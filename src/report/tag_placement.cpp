#include "report/tag_placement.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

namespace loopaudit::plotting {
namespace {

using svg::Point;

constexpr double kCell = 2.0;         // px of the curve map
constexpr double kCurveClear = 2.0;   // px kept between a tag and a curve
constexpr double kTagClear = 3.0;     // px kept between two tags, or a tag and a mark
constexpr double kLeaderStart = 6.0;  // px of the leader next to its own mark, where it may touch the curve
constexpr int kDirections = 16;
constexpr double kRadii[] = {18.0, 24.0, 31.0, 40.0, 51.0, 64.0, 80.0, 100.0};
// Costs: a tag on a tag or mark, a leader through one, leaders crossing or a
// tag on a leader, a tag on the curve (per cell), a leader over the curve (per
// px); the distance from the mark breaks ties.
constexpr double kOnTag = 1e7;
constexpr double kLeaderThroughMark = 1e6;
constexpr double kLeadersCross = 1e5;
constexpr double kTagOnLeader = 1e5;
constexpr double kOnCurve = 1e4;
constexpr double kLeaderOverCurve = 20.0;

bool finite(Point p) { return std::isfinite(p.x) && std::isfinite(p.y); }

double cross(Point o, Point a, Point b) { return (a.x - o.x) * (b.y - o.y) - (a.y - o.y) * (b.x - o.x); }

bool segments_cross(Point a, Point b, Point c, Point d) {
  return cross(a, b, c) * cross(a, b, d) < 0.0 && cross(c, d, a) * cross(c, d, b) < 0.0;
}

// Whether the segment from a to b passes through the box (sampled at 1 px).
bool touches(const Box& box, Point a, Point b) {
  const double length = std::hypot(b.x - a.x, b.y - a.y);
  for (double s = 0.0; s <= length; s += 1.0) {
    const double t = length > 0.0 ? s / length : 0.0;
    if (box.holds(Point{a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)})) return true;
  }
  return false;
}

}  // namespace

TagPlacer::TagPlacer(double width, double height)
    : columns_(static_cast<int>(std::ceil(width / kCell)) + 1),
      rows_(static_cast<int>(std::ceil(height / kCell)) + 1),
      curve_(static_cast<std::size_t>(columns_) * static_cast<std::size_t>(rows_), 0) {}

void TagPlacer::block_path(const std::vector<Point>& points) {
  const auto mark = [&](Point p) {
    const double cx = std::floor(p.x / kCell), cy = std::floor(p.y / kCell);
    if (cx < 0.0 || cy < 0.0 || cx >= columns_ || cy >= rows_) return;
    curve_[static_cast<std::size_t>(cy) * columns_ + static_cast<std::size_t>(cx)] = 1;
  };
  for (std::size_t k = 0; k + 1 < points.size(); ++k) {
    const Point a = points[k], b = points[k + 1];
    if (!finite(a) || !finite(b)) continue;
    // Long segments run far outside the canvas only when clipped; a cap keeps the work bounded.
    const double length = std::min(std::hypot(b.x - a.x, b.y - a.y), 4000.0);
    const int steps = static_cast<int>(std::ceil(length / (0.5 * kCell))) + 1;
    for (int i = 0; i <= steps; ++i) {
      const double t = static_cast<double>(i) / steps;
      mark({a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)});
    }
  }
}

void TagPlacer::block(const Box& box) { taken_.push_back(box); }

bool TagPlacer::curve_at(Point p) const {
  const double cx = std::floor(p.x / kCell), cy = std::floor(p.y / kCell);
  if (cx < 0.0 || cy < 0.0 || cx >= columns_ || cy >= rows_) return false;
  return curve_[static_cast<std::size_t>(cy) * columns_ + static_cast<std::size_t>(cx)] != 0;
}

double TagPlacer::crowding(Point anchor, Point centre, double half) const {
  const Box tag = Box::around(centre, half);
  double cost = std::hypot(centre.x - anchor.x, centre.y - anchor.y);
  for (const Box& t : taken_) {
    if (tag.overlaps(t.grown(kTagClear))) cost += kOnTag;
  }
  const Box near = tag.grown(kCurveClear);
  for (double y = near.top; y <= near.bottom; y += kCell) {
    for (double x = near.left; x <= near.right; x += kCell) {
      if (curve_at({x, y})) cost += kOnCurve;
    }
  }
  // The leader runs from the mark to the tag's edge.
  const double length = std::hypot(centre.x - anchor.x, centre.y - anchor.y);
  for (double s = kLeaderStart; s < length - half; s += 1.0) {
    const Point p{anchor.x + (centre.x - anchor.x) * s / length, anchor.y + (centre.y - anchor.y) * s / length};
    if (curve_at(p)) cost += kLeaderOverCurve;
    for (const Box& t : taken_) {
      if (t.holds(p)) cost += kLeaderThroughMark;
    }
  }
  for (const auto& [a, b] : leaders_) {
    if (segments_cross(anchor, centre, a, b)) cost += kLeadersCross;
    if (touches(tag.grown(kTagClear), a, b)) cost += kTagOnLeader;
  }
  return cost;
}

Point TagPlacer::place(Point anchor, double half, const Box& area) {
  // Where the tag goes when no candidate fits the area: above the mark, pushed inside.
  const auto inside = [&](double v, double low, double high) {
    return std::clamp(v, low + half, std::max(low + half, high - half));
  };
  Point best{inside(anchor.x, area.left, area.right), inside(anchor.y - kRadii[0], area.top, area.bottom)};
  double best_cost = std::numeric_limits<double>::infinity();
  for (double radius : kRadii) {
    for (int i = 0; i < kDirections; ++i) {
      // From straight up, alternately to either side, so that ties go to the upper side.
      const int step = (i + 1) / 2;
      const double angle =
          -std::numbers::pi / 2.0 + (i % 2 == 1 ? 1.0 : -1.0) * step * 2.0 * std::numbers::pi / kDirections;
      const Point centre{anchor.x + radius * std::cos(angle), anchor.y + radius * std::sin(angle)};
      if (!area.holds(Box::around(centre, half))) continue;
      const double cost = crowding(anchor, centre, half);
      if (cost < best_cost) {
        best_cost = cost;
        best = centre;
      }
    }
    if (best_cost < kLeaderOverCurve * 4.0 + radius) break;  // clear at this radius: no need to look farther
  }
  taken_.push_back(Box::around(best, half));
  leaders_.push_back({anchor, best});
  return best;
}

}  // namespace loopaudit::plotting
