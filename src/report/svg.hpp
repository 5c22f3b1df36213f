// A small SVG writer for the report's plots: scales, ticks, a plot panel
// with its frame, and the drawing primitives the plots use. Coordinates are
// pixels with y downward; Scale maps data to pixels.
#pragma once

#include <cstddef>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

namespace loopaudit::svg {

struct Point {
  double x = 0.0;
  double y = 0.0;
};

struct Scale {
  double low = 0.0;  // data range
  double high = 1.0;
  double from_px = 0.0;  // pixel range (from_px at low)
  double to_px = 1.0;
  bool log = false;
  double operator()(double value) const;
  // A log scale's pixel for the value whose log10 is given: lines mapped
  // many times take their logarithms once.
  double at_log10(double log10_value) const;
  bool contains(double value) const;

  // The logarithms of the ends, taken once for the range they were taken
  // for: a plot maps every line through its scales, several times.
  mutable double logs_for_low_ = 0.0, logs_for_high_ = 0.0, log_low_ = 0.0, log_high_ = 0.0;
  mutable bool logs_taken_ = false;
};

struct Tick {
  double value = 0.0;
  std::string label;  // empty: an unlabelled minor tick
  bool major = false;
};

// Decades labelled in full; 2 and 5 as bare multipliers when `label_subdivisions`
// (there is room); the other integers as unlabelled minor ticks.
std::vector<Tick> log_ticks(double low, double high, const std::function<std::string(double)>& label,
                            bool label_subdivisions);
// Steps of 1, 2 or 5 times a power of ten (or of `unit`, e.g. 45 deg), about `count` of them.
std::vector<Tick> linear_ticks(double low, double high, int count, const std::function<std::string(double)>& label,
                               double unit = 0.0);
// A range widened to whole ticks of linear_ticks.
void round_out(double& low, double& high, int count, double unit = 0.0);

struct Stroke {
  std::string colour = "#222831";
  double width = 1.0;
  std::string dash;  // SVG dash array, "" for solid
  double opacity = 1.0;
};

struct Text {
  double size = 11.0;
  std::string anchor = "start";  // start, middle, end
  std::string colour = "#222831";
  bool bold = false;
  bool halo = false;  // a white outline so that the text reads over curves
  double rotate = 0.0;
};

std::string escape(const std::string& text);

// The most dots one call of Canvas::dots writes (about 14 bytes each).
inline constexpr std::size_t kMostDots = 10000;
// The most points thin_path keeps (about 12 bytes each).
inline constexpr std::size_t kMostPathPoints = 3000;

// Every id the canvas writes (clip paths) begins with `id_prefix` and a
// hyphen: SVGs set inline in one page share one id space, so each of them
// needs a prefix of its own (the plots use their file stem).
class Canvas {
 public:
  Canvas(double width, double height, std::string title, std::string id_prefix);

  void line(Point a, Point b, const Stroke& stroke);
  // One path element, broken at non-finite points into runs; a run of fewer than two points is left out.
  void path(const std::vector<Point>& points, const Stroke& stroke);
  // A round dot of diameter `stroke.width` at each finite point, at most one
  // a pixel (one path: overlapping dots do not darken each other); where more
  // than `most_dots` pixels would hold one, one a cell of 1.5, 2.25, ... px,
  // so that a cloud of any number of lines costs at most `most_dots` dots.
  void dots(const std::vector<Point>& points, const Stroke& stroke, std::size_t most_dots = kMostDots);
  void polygon(const std::vector<Point>& points, const std::string& fill, double opacity);
  // Filled areas, one path element: the points of each, broken at non-finite
  // points (the areas should wind the same way, so that overlaps stay filled).
  void areas(const std::vector<Point>& outlines, const std::string& fill, double opacity);
  void circle(Point centre, double radius, const Stroke& stroke, const std::string& fill = "none");
  void rect(double x, double y, double width, double height, const Stroke& stroke, const std::string& fill);
  void text(Point at, const std::string& content, const Text& style);
  // Everything drawn between begin_clip and end_clip stays inside the rectangle.
  void begin_clip(double x, double y, double width, double height);
  void end_clip();
  std::string finish() const;

 private:
  double width_;
  double height_;
  std::string title_;
  std::string id_prefix_;
  std::ostringstream body_;
  int clips_ = 0;
};

// A plot area with its scales, drawn with grid, ticks, labels and frame.
struct Panel {
  double left = 0.0, top = 0.0, width = 0.0, height = 0.0;
  Scale x, y;
  Point at(double xv, double yv) const { return {x(xv), y(yv)}; }
  double right() const { return left + width; }
  double bottom() const { return top + height; }
};

struct AxisLabels {
  std::vector<Tick> x_ticks;
  std::vector<Tick> y_ticks;
  std::string x_title;  // "" for none (a panel above another)
  std::string y_title;
};

void draw_frame(Canvas& canvas, const Panel& panel, const AxisLabels& labels);

// Pixel-space points thinned to at most four per pixel column (first, lowest,
// highest, last), in their order: the drawing keeps its envelope, the data
// are untouched.
std::vector<Point> thin(const std::vector<Point>& points);
// For curves that are not functions of x (the complex plane): drops each
// point closer than `spacing` px to the last one kept; keeps the ends and
// the breaks at non-finite points. Widens the spacing until at most
// `most_points` remain in runs of two or more (what Canvas::path draws).
// Each run keeps its ends at any spacing, so of more than `most_points` / 4
// runs (thousands of short ones between breaks) it keeps that many, the
// longest on screen, and puts the points of the others in `left_out` (when
// given) to be drawn as dots; so the file is bounded whatever the line count.
std::vector<Point> thin_path(const std::vector<Point>& points, double spacing = 0.75,
                             std::size_t most_points = kMostPathPoints, std::vector<Point>* left_out = nullptr);

}  // namespace loopaudit::svg
