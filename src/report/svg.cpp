#include "report/svg.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdint>
#include <numeric>
#include <unordered_set>
#include <utility>

namespace loopaudit::svg {
namespace {

const char* kFont = "'DejaVu Sans', 'Liberation Sans', Arial, Helvetica, sans-serif";
const char* kGrid = "#e2e5e9";
const char* kMinorGrid = "#f1f3f5";
const char* kInk = "#222831";

// As printf's "%.1f" (the same digits), but several times faster: plots write many of them.
std::string number(double v) {
  char text[32];
  const auto [end, error] = std::to_chars(text, text + sizeof text, v, std::chars_format::fixed, 1);
  if (error == std::errc{}) return std::string(text, end);
  std::snprintf(text, sizeof text, "%.1f", v);
  return text;
}

std::string stroke_attributes(const Stroke& s) {
  std::string out = " stroke=\"" + s.colour + "\" stroke-width=\"" + number(s.width) + "\"";
  if (!s.dash.empty()) out += " stroke-dasharray=\"" + s.dash + "\"";
  if (s.opacity < 1.0) out += " stroke-opacity=\"" + std::to_string(s.opacity).substr(0, 4) + "\"";
  return out;
}

bool finite(Point p) { return std::isfinite(p.x) && std::isfinite(p.y); }

double nice_step(double span, int count, double unit) {
  const double raw = span / std::max(count, 1);
  if (unit > 0.0 && raw >= unit) {
    for (double m : {1.0, 2.0, 4.0, 8.0, 16.0, 32.0}) {
      if (unit * m >= raw) return unit * m;
    }
  }
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  for (double m : {1.0, 2.0, 5.0, 10.0}) {
    if (m * power >= raw) return m * power;
  }
  return 10.0 * power;
}

}  // namespace

double Scale::operator()(double value) const {
  if (!log) return from_px + (value - low) / (high - low) * (to_px - from_px);
  return at_log10(std::log10(value));
}

double Scale::at_log10(double log10_value) const {
  if (!logs_taken_ || logs_for_low_ != low || logs_for_high_ != high) {
    logs_for_low_ = low;
    logs_for_high_ = high;
    log_low_ = std::log10(low);
    log_high_ = std::log10(high);
    logs_taken_ = true;
  }
  return from_px + (log10_value - log_low_) / (log_high_ - log_low_) * (to_px - from_px);
}

bool Scale::contains(double value) const {
  return value >= std::min(low, high) && value <= std::max(low, high);
}

std::vector<Tick> log_ticks(double low, double high, const std::function<std::string(double)>& label,
                            bool label_subdivisions) {
  std::vector<Tick> ticks;
  const int first = static_cast<int>(std::floor(std::log10(low)));
  const int last = static_cast<int>(std::ceil(std::log10(high)));
  for (int e = first; e <= last; ++e) {
    const double decade = std::pow(10.0, e);
    for (int m = 1; m <= 9; ++m) {
      const double v = m * decade;
      if (v < low * (1.0 - 1e-9) || v > high * (1.0 + 1e-9)) continue;
      std::string text;
      if (m == 1) text = label(v);
      if (label_subdivisions && (m == 2 || m == 5)) text = std::to_string(m);
      ticks.push_back({v, text, m == 1});
    }
  }
  // A band narrower than a decade shows no decade: label its 2s and 5s in full.
  if (std::none_of(ticks.begin(), ticks.end(), [](const Tick& t) { return t.major; })) {
    for (Tick& t : ticks) {
      if (!t.label.empty()) t.label = label(t.value);
    }
  }
  return ticks;
}

void round_out(double& low, double& high, int count, double unit) {
  if (!(high > low)) {
    const double pad = std::max(std::abs(low) * 0.1, 1.0);
    low -= pad;
    high += pad;
  }
  const double step = nice_step(high - low, count, unit);
  low = std::floor(low / step + 1e-9) * step;
  high = std::ceil(high / step - 1e-9) * step;
}

std::vector<Tick> linear_ticks(double low, double high, int count, const std::function<std::string(double)>& label,
                               double unit) {
  std::vector<Tick> ticks;
  const double step = nice_step(high - low, count, unit);
  for (double v = std::ceil(low / step - 1e-9) * step; v <= high + step * 1e-9; v += step) {
    const double clean = std::abs(v) < step * 1e-9 ? 0.0 : v;
    ticks.push_back({clean, label(clean), true});
  }
  return ticks;
}

std::string escape(const std::string& text) {
  std::string out;
  for (char c : text) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += "&#39;"; break;
      default: out += c;
    }
  }
  return out;
}

Canvas::Canvas(double width, double height, std::string title, std::string id_prefix)
    : width_(width), height_(height), title_(std::move(title)), id_prefix_(std::move(id_prefix)) {}

void Canvas::line(Point a, Point b, const Stroke& stroke) {
  if (!finite(a) || !finite(b)) return;
  body_ << "<line x1=\"" << number(a.x) << "\" y1=\"" << number(a.y) << "\" x2=\"" << number(b.x) << "\" y2=\""
        << number(b.y) << "\"" << stroke_attributes(stroke) << "/>\n";
}

void Canvas::path(const std::vector<Point>& points, const Stroke& stroke) {
  std::string d, run_d;
  std::size_t run = 0;
  const auto flush = [&] {
    if (run >= 2) d += run_d;
    run_d.clear();
    run = 0;
  };
  for (const Point& p : points) {
    if (!finite(p)) {
      flush();
      continue;
    }
    run_d += run == 0 ? 'M' : 'L';
    run_d += number(p.x);
    run_d += ',';
    run_d += number(p.y);
    ++run;
  }
  flush();
  if (d.empty()) return;
  body_ << "<path fill=\"none\" stroke-linejoin=\"round\"" << stroke_attributes(stroke) << " d=\"" << d << "\"/>\n";
}

namespace {
constexpr double kOffEveryCanvas = 1e6;  // px: a point this far out is drawn nowhere

// The first finite point in each cell of `cell` px (centred on multiples of it), in their order.
std::vector<Point> one_a_cell(const std::vector<Point>& points, double cell) {
  std::unordered_set<std::uint64_t> taken;
  std::vector<Point> out;
  for (const Point& p : points) {
    if (!finite(p) || std::abs(p.x) > kOffEveryCanvas || std::abs(p.y) > kOffEveryCanvas) continue;
    const auto column = static_cast<std::uint32_t>(static_cast<std::int32_t>(std::lround(p.x / cell)));
    const auto row = static_cast<std::uint32_t>(static_cast<std::int32_t>(std::lround(p.y / cell)));
    if (taken.insert(static_cast<std::uint64_t>(column) << 32 | row).second) out.push_back(p);
  }
  return out;
}
}  // namespace

void Canvas::dots(const std::vector<Point>& points, const Stroke& stroke, std::size_t most_dots) {
  double cell = 1.0;
  std::vector<Point> kept = one_a_cell(points, cell);
  while (kept.size() > most_dots && cell < kOffEveryCanvas) {
    cell *= 1.5;
    kept = one_a_cell(points, cell);
  }
  kept.resize(std::min(kept.size(), most_dots));  // only when most_dots is below the few cells left
  std::string d;
  for (const Point& p : kept) d += 'M' + number(p.x) + ',' + number(p.y) + "h0";
  if (d.empty()) return;
  body_ << "<path fill=\"none\" stroke-linecap=\"round\"" << stroke_attributes(stroke) << " d=\"" << d << "\"/>\n";
}

void Canvas::polygon(const std::vector<Point>& points, const std::string& fill, double opacity) {
  std::string list;
  for (const Point& p : points) {
    if (!finite(p)) continue;
    list += number(p.x) + "," + number(p.y) + " ";
  }
  if (list.empty()) return;
  body_ << "<polygon fill=\"" << fill << "\" fill-opacity=\"" << opacity << "\" stroke=\"none\" points=\"" << list
        << "\"/>\n";
}

void Canvas::areas(const std::vector<Point>& outlines, const std::string& fill, double opacity) {
  std::string d;
  bool open = false;
  for (const Point& p : outlines) {
    if (!finite(p)) {
      if (open) d += 'Z';
      open = false;
      continue;
    }
    d += (open ? 'L' : 'M') + number(p.x) + ',' + number(p.y);
    open = true;
  }
  if (open) d += 'Z';
  if (d.empty()) return;
  body_ << "<path fill=\"" << fill << "\" fill-opacity=\"" << opacity << "\" stroke=\"none\" d=\"" << d << "\"/>\n";
}

void Canvas::circle(Point centre, double radius, const Stroke& stroke, const std::string& fill) {
  if (!finite(centre) || !std::isfinite(radius)) return;
  body_ << "<circle cx=\"" << number(centre.x) << "\" cy=\"" << number(centre.y) << "\" r=\"" << number(radius)
        << "\" fill=\"" << fill << "\"" << stroke_attributes(stroke) << "/>\n";
}

void Canvas::rect(double x, double y, double width, double height, const Stroke& stroke, const std::string& fill) {
  body_ << "<rect x=\"" << number(x) << "\" y=\"" << number(y) << "\" width=\"" << number(width) << "\" height=\""
        << number(height) << "\" fill=\"" << fill << "\"" << stroke_attributes(stroke) << "/>\n";
}

void Canvas::text(Point at, const std::string& content, const Text& style) {
  if (!finite(at)) return;
  body_ << "<text x=\"" << number(at.x) << "\" y=\"" << number(at.y) << "\" font-size=\"" << number(style.size)
        << "\" text-anchor=\"" << style.anchor << "\" fill=\"" << style.colour << "\"";
  if (style.bold) body_ << " font-weight=\"bold\"";
  if (style.halo) body_ << " stroke=\"#ffffff\" stroke-width=\"3\" stroke-linejoin=\"round\" paint-order=\"stroke\"";
  if (style.rotate != 0.0) {
    body_ << " transform=\"rotate(" << number(style.rotate) << " " << number(at.x) << " " << number(at.y) << ")\"";
  }
  body_ << ">" << escape(content) << "</text>\n";
}

void Canvas::begin_clip(double x, double y, double width, double height) {
  const std::string id = escape(id_prefix_) + "-clip" + std::to_string(++clips_);
  body_ << "<clipPath id=\"" << id << "\"><rect x=\"" << number(x) << "\" y=\"" << number(y) << "\" width=\""
        << number(width) << "\" height=\"" << number(height) << "\"/></clipPath>\n<g clip-path=\"url(#" << id
        << ")\">\n";
}

void Canvas::end_clip() { body_ << "</g>\n"; }

std::string Canvas::finish() const {
  std::ostringstream out;
  out << "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"" << number(width_) << "\" height=\"" << number(height_)
      << "\" viewBox=\"0 0 " << number(width_) << " " << number(height_) << "\" font-family=\"" << kFont
      << "\" role=\"img\">\n<title>" << escape(title_) << "</title>\n<rect width=\"100%\" height=\"100%\" fill=\"#ffffff\"/>\n"
      << body_.str() << "</svg>\n";
  return out.str();
}

void draw_frame(Canvas& canvas, const Panel& p, const AxisLabels& labels) {
  for (const Tick& t : labels.x_ticks) {
    const double x = p.x(t.value);
    canvas.line({x, p.top}, {x, p.bottom()}, {t.major || !t.label.empty() ? kGrid : kMinorGrid, 1.0});
    canvas.line({x, p.bottom()}, {x, p.bottom() + (t.major ? 5.0 : 3.0)}, {kInk, 1.0});
    if (!t.label.empty() && !labels.x_title.empty()) {
      canvas.text({x, p.bottom() + 17.0}, t.label, {t.major ? 11.0 : 9.5, "middle", t.major ? kInk : "#555b63"});
    }
  }
  for (const Tick& t : labels.y_ticks) {
    const double y = p.y(t.value);
    canvas.line({p.left, y}, {p.right(), y}, {t.major || !t.label.empty() ? kGrid : kMinorGrid, 1.0});
    canvas.line({p.left - 4.0, y}, {p.left, y}, {kInk, 1.0});
    if (!t.label.empty()) canvas.text({p.left - 7.0, y + 4.0}, t.label, {11.0, "end"});
  }
  canvas.rect(p.left, p.top, p.width, p.height, {kInk, 1.0}, "none");
  if (!labels.x_title.empty()) {
    canvas.text({p.left + p.width / 2.0, p.bottom() + 36.0}, labels.x_title, {12.0, "middle"});
  }
  if (!labels.y_title.empty()) {
    Text t{12.0, "middle"};
    t.rotate = -90.0;
    canvas.text({p.left - 48.0, p.top + p.height / 2.0}, labels.y_title, t);
  }
}

std::vector<Point> thin(const std::vector<Point>& points) {
  std::vector<Point> out;
  std::size_t k = 0;
  while (k < points.size()) {
    if (!finite(points[k])) {
      out.push_back(points[k++]);
      continue;
    }
    const double column = std::floor(points[k].x);
    std::size_t end = k;
    std::size_t low = k, high = k;
    while (end < points.size() && finite(points[end]) && std::floor(points[end].x) == column) {
      if (points[end].y < points[low].y) low = end;
      if (points[end].y > points[high].y) high = end;
      ++end;
    }
    std::vector<std::size_t> keep{k, low, high, end - 1};
    std::sort(keep.begin(), keep.end());
    keep.erase(std::unique(keep.begin(), keep.end()), keep.end());
    for (std::size_t i : keep) out.push_back(points[i]);
    k = end;
  }
  return out;
}

namespace {
std::vector<Point> spaced(const std::vector<Point>& points, double spacing) {
  const double spacing_squared = spacing * spacing;  // squares: thin_path calls this often, over every line
  const auto far_enough = [&](const Point& p, const Point& q) {
    return (p.x - q.x) * (p.x - q.x) + (p.y - q.y) * (p.y - q.y) >= spacing_squared;
  };
  std::vector<Point> out;
  for (std::size_t k = 0; k < points.size(); ++k) {
    const Point& p = points[k];
    if (!finite(p)) {
      if (!out.empty() && finite(out.back())) out.push_back(p);  // one break for a run of them
      continue;
    }
    const bool end = k + 1 == points.size() || !finite(points[k + 1]);
    if (out.empty() || !finite(out.back()) || end || far_enough(p, out.back())) {
      out.push_back(p);
    }
  }
  return out;
}
}  // namespace

namespace {
// Runs of finite points as [first, end) index ranges; those of two or more
// points when `drawn_only` (what Canvas::path writes).
std::vector<std::pair<std::size_t, std::size_t>> runs_of(const std::vector<Point>& points, bool drawn_only) {
  std::vector<std::pair<std::size_t, std::size_t>> runs;
  std::size_t k = 0;
  while (k < points.size()) {
    if (!finite(points[k])) {
      ++k;
      continue;
    }
    const std::size_t first = k;
    while (k < points.size() && finite(points[k])) ++k;
    if (!drawn_only || k - first >= 2) runs.push_back({first, k});
  }
  return runs;
}

std::size_t drawn_points(const std::vector<Point>& points) {
  std::size_t n = 0;
  for (const auto& [first, end] : runs_of(points, true)) n += end - first;
  return n;
}

// At most `most_runs` runs of two or more points: the longest on screen, in
// their order; the points of the others go to `left_out`.
std::vector<Point> longest_runs(const std::vector<Point>& points, std::size_t most_runs, std::vector<Point>* left_out) {
  const auto runs = runs_of(points, true);
  if (runs.size() <= most_runs) return points;
  std::vector<double> length(runs.size(), 0.0);
  for (std::size_t r = 0; r < runs.size(); ++r) {
    for (std::size_t k = runs[r].first + 1; k < runs[r].second; ++k) {
      length[r] += std::hypot(points[k].x - points[k - 1].x, points[k].y - points[k - 1].y);
    }
  }
  std::vector<std::size_t> order(runs.size());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return length[a] > length[b]; });
  std::vector<bool> kept(runs.size(), false);
  for (std::size_t i = 0; i < most_runs; ++i) kept[order[i]] = true;
  std::vector<Point> out;
  for (std::size_t r = 0; r < runs.size(); ++r) {
    if (!kept[r] && left_out == nullptr) continue;
    auto& to = kept[r] ? out : *left_out;
    to.insert(to.end(), points.begin() + static_cast<std::ptrdiff_t>(runs[r].first),
              points.begin() + static_cast<std::ptrdiff_t>(runs[r].second));
    if (kept[r]) out.push_back({NAN, NAN});
  }
  return out;
}

// The first `most_points` drawn points, for curves the widest spacing cannot
// thin (points far outside the view, each far from the last).
std::vector<Point> first_points(const std::vector<Point>& points, std::size_t most_points) {
  std::vector<Point> out;
  std::size_t used = 0;
  for (const auto& [first, end] : runs_of(points, true)) {
    const std::size_t take = std::min(end - first, most_points - used);
    if (take < 2) break;
    out.insert(out.end(), points.begin() + static_cast<std::ptrdiff_t>(first),
               points.begin() + static_cast<std::ptrdiff_t>(first + take));
    out.push_back({NAN, NAN});
    used += take;
  }
  return out;
}
}  // namespace

std::vector<Point> thin_path(const std::vector<Point>& points, double spacing, std::size_t most_points,
                             std::vector<Point>* left_out) {
  // Each run keeps its ends whatever the spacing: at most a quarter of the
  // budget in runs leaves room for them and for the points between.
  const std::vector<Point> runs = longest_runs(points, std::max<std::size_t>(most_points / 4, 1), left_out);
  std::vector<Point> out = spaced(runs, spacing);
  while (drawn_points(out) > most_points && spacing < 2000.0) {
    spacing *= 1.5;
    out = spaced(runs, spacing);
  }
  return drawn_points(out) > most_points ? first_points(out, most_points) : out;
}

}  // namespace loopaudit::svg
