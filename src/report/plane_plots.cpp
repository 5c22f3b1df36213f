// L in the complex plane: near the critical point -1 with the margins, and
// over the whole band with its radius compressed.
#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>
#include <string>
#include <utility>

#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"
#include "report/margin_marks.hpp"
#include "report/plot_parts.hpp"
#include "report/svg.hpp"

namespace loopaudit::plotting {
namespace {

using svg::Canvas;
using svg::Panel;
using svg::Point;

// The points near the view (20 px around it) and their neighbours; the rest
// become breaks, so that a curve far outside costs nothing in the file.
std::vector<Point> in_view(const Panel& p, const std::vector<Point>& points) {
  const auto near = [&](const Point& q) {
    return q.x > p.left - 20.0 && q.x < p.right() + 20.0 && q.y > p.top - 20.0 && q.y < p.bottom() + 20.0;
  };
  std::vector<Point> out;
  for (std::size_t k = 0; k < points.size(); ++k) {
    const bool keep = near(points[k]) || (k > 0 && near(points[k - 1])) ||
                      (k + 1 < points.size() && near(points[k + 1]));
    out.push_back(keep ? points[k] : Point{NAN, NAN});
  }
  return out;
}

// Runs of reliable lines in the complex plane, broken at non-finite points:
// across one or two noisy lines, or any number that leave a gap no eye would see.
std::vector<Point> trusted_runs(const std::vector<Point>& points, const std::vector<bool>& reliable) {
  std::vector<Point> out;
  const auto bridges = [&](std::size_t a, std::size_t b) {
    return b - a - 1 <= kMostBridgedLines ||
           std::hypot(points[b].x - points[a].x, points[b].y - points[a].y) <= kUnseenPixels;
  };
  for (const auto& [first, last] : reliable_runs(reliable, bridges)) {
    for (std::size_t k = first; k <= last; ++k) {
      if (reliable[k]) out.push_back(points[k]);
    }
    out.push_back({NAN, NAN});
  }
  return out;
}

bool shows(const Panel& p, const Point& q) {
  return q.x > p.left - 2.0 && q.x < p.right() + 2.0 && q.y > p.top - 2.0 && q.y < p.bottom() + 2.0;
}

// A curve of runs thinned by screen distance; the runs it has no room for
// (thousands of short ones) as dots in the same colour.
void draw_plane_runs(Canvas& canvas, const Panel& p, const std::vector<Point>& runs, double spacing,
                     const svg::Stroke& stroke) {
  std::vector<Point> left_out, dots;
  canvas.path(svg::thin_path(in_view(p, runs), spacing, svg::kMostPathPoints, &left_out), stroke);
  for (const Point& q : left_out) {
    if (shows(p, q)) dots.push_back(q);
  }
  canvas.dots(dots, {stroke.colour, stroke.width, "", stroke.opacity});
}

// L in the complex plane: the reliable lines solid, each noisy one a faint dot.
void draw_plane_curve(Canvas& canvas, const Panel& p, const std::vector<Point>& points,
                      const std::vector<bool>& reliable) {
  std::vector<Point> noisy;
  for (std::size_t k = 0; k < points.size(); ++k) {
    if (!reliable[k] && shows(p, points[k])) noisy.push_back(points[k]);
  }
  canvas.dots(noisy, kNoiseDots);
  draw_plane_runs(canvas, p, trusted_runs(points, reliable), 0.75, kCurveStroke);
}

struct ComplexView {
  double re_low, re_high, im_low, im_high;
};

Panel square_panel(const ComplexView& v, double top, double size) {
  return {kLeft, top, size, size, {v.re_low, v.re_high, kLeft, kLeft + size}, {v.im_low, v.im_high, top + size, top}};
}

// Small dots with labels at the decades along the curve, so that frequency
// can be read off the complex plane.
void decade_marks(Canvas& canvas, const Panel& p, const Drawable& d, const std::vector<Point>& points) {
  for (std::size_t k = 1; k < d.f.size(); ++k) {
    const double decade = std::pow(10.0, std::floor(d.log_f[k]));
    if (!(d.f[k - 1] < decade && d.f[k] >= decade)) continue;
    const Point at = points[k];
    if (at.x < p.left || at.x > p.right() || at.y < p.top || at.y > p.bottom()) continue;
    canvas.circle(at, 2.6, {kCurve, 1.0}, kCurve);
    canvas.text({at.x + 5.0, at.y - 5.0}, format_frequency(decade), {10.0, "start", kCurve, false, true});
  }
}

// Phase margin: the ray to the crossover on the unit circle and the arc from
// -1 to it; gain margin: the stretch of the negative real axis from -1 to the
// crossing.
void plane_margins(Canvas& canvas, const Panel& p, const Margins& m) {
  for (std::size_t k = 0; k < std::min(m.gain_crossovers.size(), kMostMarkedEach); ++k) {
    const double pm = phase_margin(m.gain_crossovers[k]).value;
    const double angle = rad_from_deg(pm - 180.0);  // of L at the crossover
    const Point on_circle = p.at(std::cos(angle), std::sin(angle));
    canvas.line(p.at(0.0, 0.0), on_circle, {kMarker, 1.2});
    std::vector<Point> arc;
    for (int i = 0; i <= 40; ++i) {
      const double a = -std::numbers::pi + (angle + std::numbers::pi) * i / 40.0;
      arc.push_back(p.at(0.55 * std::cos(a), 0.55 * std::sin(a)));
    }
    canvas.path(arc, {kMarker, 2.0});
    canvas.circle(on_circle, 3.5, {kMarker, 1.5}, "#ffffff");
    canvas.text({on_circle.x + 6.0, on_circle.y + 14.0}, "PM " + deg(pm), marker_text("start"));
  }
  for (std::size_t k = 0; k < std::min(m.phase_crossovers.size(), kMostMarkedEach); ++k) {
    const double gm = gain_margin(m.phase_crossovers[k]).value;
    const double re = -ratio_from_db(-gm);  // the crossing lies on the negative real axis
    if (re < -2.5) continue;
    const Point at = p.at(re, 0.0);
    canvas.line(p.at(-1.0, 0.0), at, {kMarker, 2.4});
    canvas.rect(at.x - 3.5, at.y - 3.5, 7.0, 7.0, {kMarker, 1.5}, "#ffffff");
    canvas.text({0.5 * (at.x + p.x(-1.0)), at.y + 18.0}, "GM " + signed_db(gm), marker_text("middle"));
  }
}

// The critical point as a cross of half-size `arm`, drawn last so that nothing hides it.
void critical_point(Canvas& canvas, Point critical, double arm, double label_dx, double label_dy) {
  canvas.line({critical.x - arm, critical.y - arm}, {critical.x + arm, critical.y + arm}, {kInk, 2.0});
  canvas.line({critical.x - arm, critical.y + arm}, {critical.x + arm, critical.y - arm}, {kInk, 2.0});
  canvas.text({critical.x - label_dx, critical.y + label_dy}, "-1", {12.0, "end", kInk, true, true});
}

}  // namespace

Plot nyquist_near(const AnalysisResult& result, const Drawable& d) {
  Plot plot{"nyquist-near", "L in the complex plane around the critical point -1", "", {}};
  Canvas canvas(560.0, 560.0, "Loop gain L in the complex plane, near -1", plot.name);
  canvas.text({kLeft, 24.0}, "L in the complex plane, near -1", {14.0, "start", kInk, true});
  const Panel p = square_panel({-2.5, 1.0, -1.75, 1.75}, 44.0, 440.0);
  const auto ticks = [](double low, double high) { return svg::linear_ticks(low, high, 7, tick_number); };
  svg::draw_frame(canvas, p, {ticks(-2.5, 1.0), ticks(-1.75, 1.75), "real part", "imaginary part"});
  canvas.begin_clip(p.left, p.top, p.width, p.height);
  canvas.line(p.at(-2.5, 0.0), p.at(1.0, 0.0), {kReference, 1.0});
  canvas.line(p.at(0.0, -1.75), p.at(0.0, 1.75), {kReference, 1.0});
  const double unit_px = p.x(1.0) - p.x(0.0);
  canvas.circle(p.at(0.0, 0.0), unit_px, kReferenceStroke);
  const auto& m = result.margins;
  if (m.modulus) {
    canvas.circle(p.at(-1.0, 0.0), modulus_margin(*m.modulus).value * unit_px, {kModulus, 1.4, "1 3"});
  }
  std::vector<Point> points;
  for (const auto& v : d.value) points.push_back(p.at(v.real(), v.imag()));
  draw_plane_curve(canvas, p, points, d.reliable);
  plane_margins(canvas, p, m);
  canvas.end_clip();
  decade_marks(canvas, p, d, points);
  critical_point(canvas, p.at(-1.0, 0.0), 6.0, 8.0, 18.0);
  // Key.
  double y = p.bottom() + 52.0;
  canvas.line({kLeft, y - 4.0}, {kLeft + 24.0, y - 4.0}, kReferenceStroke);
  canvas.text({kLeft + 30.0, y}, "|L| = 1", {11.0});
  canvas.line({kLeft + 100.0, y - 4.0}, {kLeft + 124.0, y - 4.0}, {kModulus, 1.4, "1 3"});
  canvas.text({kLeft + 130.0, y},
              m.modulus ? "modulus margin " + fixed(modulus_margin(*m.modulus).value, 3) + " around -1"
                        : "no modulus margin",
              {11.0});
  if (d.f.empty()) empty_message(canvas, p, "no finite lines to draw");
  for (const auto& [count, kind] : {std::pair{m.gain_crossovers.size(), "phase margins"},
                                    std::pair{m.phase_crossovers.size(), "gain margins"}}) {
    if (count > kMostMarkedEach) {
      plot.notes.push_back("Only the first " + std::to_string(kMostMarkedEach) + " of " + std::to_string(count) + " " +
                           kind + " are marked; the margins table lists them all.");
    }
  }
  plot.svg = canvas.finish();
  return plot;
}

Plot nyquist_whole(const Drawable& d) {
  Plot plot{"nyquist-whole", "L over the whole band, radius drawn as log10(1 + |L|) so that every decade shows", "", {}};
  Canvas canvas(560.0, 560.0, "Loop gain L in the complex plane, whole band", plot.name);
  canvas.text({kLeft, 24.0}, "L over the whole band (radius compressed)", {14.0, "start", kInk, true});
  const auto squash = [](std::complex<double> v) { return std::polar(std::log10(1.0 + std::abs(v)), std::arg(v)); };
  double reach = std::log10(2.0) * 1.3;
  const bool any_reliable = std::find(d.reliable.begin(), d.reliable.end(), true) != d.reliable.end();
  for (std::size_t k = 0; k < d.value.size(); ++k) {
    if (d.reliable[k] || !any_reliable) reach = std::max(reach, std::log10(1.0 + std::abs(d.value[k])) * 1.05);
  }
  const Panel p = square_panel({-reach, reach, -reach, reach}, 44.0, 440.0);
  canvas.rect(p.left, p.top, p.width, p.height, {kInk, 1.0}, "none");
  canvas.begin_clip(p.left, p.top, p.width, p.height);
  canvas.line(p.at(-reach, 0.0), p.at(reach, 0.0), {kReference, 1.0});
  canvas.line(p.at(0.0, -reach), p.at(0.0, reach), {kReference, 1.0});
  const double px = p.x(1.0) - p.x(0.0);
  for (double magnitude = 0.1; std::log10(1.0 + magnitude) < reach; magnitude *= 10.0) {
    const double r = std::log10(1.0 + magnitude);
    canvas.circle(p.at(0.0, 0.0), r * px, {"#c9ced4", 1.0});
    canvas.text({p.x(0.0) + r * px * 0.7071 + 3.0, p.y(0.0) - r * px * 0.7071 - 3.0}, "|L| = " + tick_number(magnitude),
                {10.0, "start", kReference, false, true});
  }
  canvas.circle(p.at(0.0, 0.0), std::log10(2.0) * px, kReferenceStroke);
  std::vector<Point> points, mirror;
  for (const auto& v : d.value) {
    const auto s = squash(v);
    points.push_back(p.at(s.real(), s.imag()));
    mirror.push_back(p.at(s.real(), -s.imag()));
  }
  draw_plane_runs(canvas, p, trusted_runs(mirror, d.reliable), 1.5, {kCurve, 1.0, "3 3", 0.5});
  draw_plane_curve(canvas, p, points, d.reliable);
  canvas.end_clip();
  decade_marks(canvas, p, d, points);
  critical_point(canvas, p.at(-std::log10(2.0), 0.0), 5.0, 7.0, 16.0);
  const double key_y = p.bottom() + 26.0;
  canvas.line({kLeft, key_y - 4.0}, {kLeft + 24.0, key_y - 4.0}, kCurveStroke);
  canvas.text({kLeft + 30.0, key_y}, "L, rising frequency", {11.0});
  canvas.line({kLeft + 150.0, key_y - 4.0}, {kLeft + 174.0, key_y - 4.0}, {kCurve, 1.0, "3 3", 0.5});
  canvas.text({kLeft + 180.0, key_y}, "mirror (negative frequency)", {11.0});
  canvas.text({kLeft, key_y + 18.0}, "Angle true to L, radius log10(1 + |L|); grey circles: |L| by decades.",
              {11.0, "start", kReference});
  if (d.f.empty()) empty_message(canvas, p, "no finite lines to draw");
  plot.svg = canvas.finish();
  return plot;
}

}  // namespace loopaudit::plotting
