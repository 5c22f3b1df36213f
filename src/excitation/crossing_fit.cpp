#include "excitation/crossing_fit.hpp"

#include <algorithm>

namespace loopaudit::detail {
namespace {

struct Centred {
  std::vector<double> u;  // cycle minus its mean
  std::vector<double> v;  // position minus its mean
};

Centred centred(std::span<const ZeroCrossing> points) {
  Centred c;
  const auto n = static_cast<double>(points.size());
  double mean_cycle = 0.0, mean_position = 0.0;
  for (const ZeroCrossing& p : points) {
    mean_cycle += p.cycle / n;
    mean_position += p.position / n;
  }
  for (const ZeroCrossing& p : points) {
    c.u.push_back(p.cycle - mean_cycle);
    c.v.push_back(p.position - mean_position);
  }
  return c;
}

// What is left of `v` after taking out its projection on `basis`.
void remove(std::vector<double>& v, const std::vector<double>& basis) {
  double vb = 0.0, bb = 0.0;
  for (std::size_t i = 0; i < v.size(); ++i) {
    vb += v[i] * basis[i];
    bb += basis[i] * basis[i];
  }
  if (bb <= 0.0) return;
  for (std::size_t i = 0; i < v.size(); ++i) v[i] -= vb / bb * basis[i];
}

double squares(const std::vector<double>& v) {
  double s = 0.0;
  for (double x : v) s += x * x;
  return s;
}

}  // namespace

void CrossingLines::add(const ZeroCrossing& c) {
  const double y = c.position - origin_ - period_ * c.cycle;
  Sums s = sums_.back();
  s.n += 1.0;
  s.x += c.cycle;
  s.y += y;
  s.xx += c.cycle * c.cycle;
  s.xy += c.cycle * y;
  s.yy += y * y;
  sums_.push_back(s);
}

double CrossingLines::residual(std::size_t first, std::size_t last) const {
  const Sums& a = sums_[first];
  const Sums& b = sums_[last];
  const double n = b.n - a.n;
  if (n < 3.0) return 0.0;
  const double mx = (b.x - a.x) / n, my = (b.y - a.y) / n;
  const double sxx = (b.xx - a.xx) - n * mx * mx;
  const double sxy = (b.xy - a.xy) - n * mx * my;
  const double syy = (b.yy - a.yy) - n * my * my;
  return sxx > 0.0 ? std::max(syy - sxy * sxy / sxx, 0.0) : 0.0;
}

double line_residual(std::span<const ZeroCrossing> points) {
  if (points.size() < 3) return 0.0;
  Centred c = centred(points);
  remove(c.v, c.u);
  return squares(c.v);
}

double parabola_residual(std::span<const ZeroCrossing> points) {
  if (points.size() < 4) return 0.0;
  Centred c = centred(points);
  std::vector<double> square(c.u.size());
  double mean_square = 0.0;
  for (std::size_t i = 0; i < c.u.size(); ++i) mean_square += c.u[i] * c.u[i] / static_cast<double>(c.u.size());
  for (std::size_t i = 0; i < c.u.size(); ++i) square[i] = c.u[i] * c.u[i] - mean_square;
  remove(square, c.u);  // now orthogonal to 1 and u
  remove(c.v, c.u);
  remove(c.v, square);
  return squares(c.v);
}

}  // namespace loopaudit::detail
