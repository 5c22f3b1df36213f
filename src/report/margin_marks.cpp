#include "report/margin_marks.hpp"

#include <algorithm>
#include <cmath>

#include "loopaudit/format.hpp"
#include "report/interval_text.hpp"
#include "report/tag_placement.hpp"

namespace loopaudit::plotting {
namespace {

using svg::Canvas;
using svg::Panel;
using svg::Point;

constexpr double kMarkHalf = 3.0;                            // a mark on a curve
constexpr double kTagHalf = 8.0;                             // a tag with an id
constexpr double kTableRow = 16.0;                           // px between the table's rows
constexpr double kKeyRow = 18.0;                             // px between key lines
const double kColumns[] = {8.0, 26.0, 104.0, 252.0, 404.0};  // from kLeft: mark, frequency, interval, margin, interval

// One mark's shape: round for a gain crossover, square for a phase
// crossover; hollow where the curve meets its reference, filled where the
// margin is read. With an id inside when it is a tag.
void draw_shape(Canvas& canvas, Point centre, double half, bool round, bool filled, const std::string& id = "") {
  const svg::Stroke outline{kMarker, id.empty() ? 1.5 : 1.4};
  const std::string fill = filled ? kMarker : kPaper;
  if (round) {
    canvas.circle(centre, half, outline, fill);
  } else {
    canvas.rect(centre.x - half, centre.y - half, 2.0 * half, 2.0 * half, outline, fill);
  }
  if (!id.empty()) {
    canvas.text({centre.x, centre.y + 3.8}, id, {10.5, "middle", filled ? kPaper : kMarker, true});
  }
}

// Where a mark's two points lie: where the curve meets its reference, and
// where its margin is read on the other pane.
struct MarkPoints {
  const Panel* crossing_pane;
  Point crossing;
  const Panel* reading_pane;
  Point reading;
};

MarkPoints mark_points(const BodeGeometry& g, const CrossoverMark& m) {
  // The -180 deg level (mod 360) nearest the drawn phase at the crossover.
  const std::size_t k =
      std::min<std::size_t>(std::lower_bound(g.f.begin(), g.f.end(), m.frequency.value) - g.f.begin(), g.f.size() - 1);
  const double level = std::round((g.phase_deg[k] + 180.0) / 360.0) * 360.0 - 180.0;
  const double f = m.frequency.value;
  if (m.gain_crossover) return {&g.mag, g.mag.at(f, 0.0), &g.phase, g.phase.at(f, level + m.margin.value)};
  return {&g.phase, g.phase.at(f, level), &g.mag, g.mag.at(f, -m.margin.value)};
}

bool inside(const Panel& p, Point at) {
  return at.x >= p.left && at.x <= p.right() && at.y >= p.top && at.y <= p.bottom();
}

Box pane_box(const Panel& p) { return {p.left + 1.0, p.top + 1.0, p.right() - 1.0, p.bottom() - 1.0}; }

std::vector<Point> curve_points(const Panel& p, const std::vector<double>& log_f, const std::vector<double>& values) {
  const double far_low = p.y.low - (p.y.high - p.y.low), far_high = p.y.high + (p.y.high - p.y.low);
  std::vector<Point> points;
  for (std::size_t k = 0; k < log_f.size(); ++k) {
    points.push_back({p.x.at_log10(log_f[k]), p.y(std::clamp(values[k], far_low, far_high))});
  }
  return svg::thin(points);
}

// A tag for the mark at `at`, joined to it by a leader that ends at the
// mark's centre, so that marks a few px apart still show which is whose.
void draw_tag(Canvas& canvas, TagPlacer& placer, const Panel& pane, Point at, const CrossoverMark& m, bool filled) {
  const Point centre = placer.place(at, kTagHalf, pane_box(pane));
  const double dx = centre.x - at.x, dy = centre.y - at.y, length = std::hypot(dx, dy);
  if (length > kTagHalf) {
    const double to = length - kTagHalf;
    canvas.line(at, {at.x + dx * to / length, at.y + dy * to / length}, {kMarker, 1.0});
  }
  draw_shape(canvas, centre, kTagHalf, m.gain_crossover, filled, m.id);
}

std::string frequency_text(double hz) { return format_frequency(hz); }
std::string margin_text(const CrossoverMark& m, double v) { return m.gain_crossover ? deg(v) : signed_db(v); }

}  // namespace

std::vector<CrossoverMark> crossover_marks(const Margins& margins) {
  std::vector<CrossoverMark> marks;
  for (std::size_t k = 0; k < std::min(margins.gain_crossovers.size(), kMostMarkedEach); ++k) {
    const auto& c = margins.gain_crossovers[k];
    marks.push_back({true, std::to_string(k + 1), crossover_frequency(c), phase_margin(c)});
  }
  for (std::size_t k = 0; k < std::min(margins.phase_crossovers.size(), kMostMarkedEach); ++k) {
    const auto& c = margins.phase_crossovers[k];
    marks.push_back({false, std::string(1, static_cast<char>('A' + k)), crossover_frequency(c), gain_margin(c)});
  }
  return marks;
}

void draw_crossover_marks(Canvas& canvas, const BodeGeometry& g, const std::vector<CrossoverMark>& marks,
                          double canvas_width, double canvas_height) {
  if (g.f.empty()) return;
  TagPlacer placer(canvas_width, canvas_height);
  placer.block_path(curve_points(g.mag, g.log_f, g.gain_db));
  placer.block_path(curve_points(g.phase, g.log_f, g.phase_deg));
  std::vector<std::pair<const CrossoverMark*, MarkPoints>> shown;
  for (const auto& m : marks) {
    if (!g.mag.x.contains(m.frequency.value)) continue;
    const MarkPoints at = mark_points(g, m);
    shown.push_back({&m, at});
    for (const Point p : {at.crossing, at.reading}) placer.block(Box::around(p, kMarkHalf + 1.0));
  }
  for (const auto& [m, at] : shown) {
    draw_shape(canvas, at.crossing, kMarkHalf, m->gain_crossover, false);
    if (inside(*at.reading_pane, at.reading)) draw_shape(canvas, at.reading, kMarkHalf - 0.5, m->gain_crossover, true);
  }
  for (const auto& [m, at] : shown) {
    if (inside(*at.crossing_pane, at.crossing)) draw_tag(canvas, placer, *at.crossing_pane, at.crossing, *m, false);
    if (inside(*at.reading_pane, at.reading)) draw_tag(canvas, placer, *at.reading_pane, at.reading, *m, true);
  }
}

double margin_table_height(std::size_t rows) { return rows == 0 ? 0.0 : kTableRow * (static_cast<double>(rows) + 1.0); }

void draw_margin_table(Canvas& canvas, double top, const std::vector<CrossoverMark>& marks, double confidence) {
  if (marks.empty()) return;
  const bool intervals = std::any_of(marks.begin(), marks.end(), [](const auto& m) {
    return m.frequency.interval.has_value() || m.margin.interval.has_value();
  });
  const std::string level = fixed(100.0 * confidence, 0) + " % interval";
  const svg::Text head{10.0, "start", kReference};
  // Without intervals the margin takes the frequency interval's column.
  const double margin_x = kLeft + kColumns[intervals ? 3 : 2];
  canvas.text({kLeft + kColumns[1], top}, "crossover at", head);
  canvas.text({margin_x, top}, "margin", head);
  if (intervals) {
    canvas.text({kLeft + kColumns[2], top}, level, head);
    canvas.text({kLeft + kColumns[4], top}, level, head);
  } else {
    canvas.text({kLeft + kColumns[3], top}, "no intervals: the lines carry no uncertainty", head);
  }
  double y = top;
  for (const auto& m : marks) {
    y += kTableRow;
    draw_shape(canvas, {kLeft + kColumns[0], y - 4.0}, 7.0, m.gain_crossover, false, m.id);
    canvas.text({kLeft + kColumns[1], y}, format_frequency(m.frequency.value), {11.0});
    canvas.text({margin_x, y}, (m.gain_crossover ? "phase margin " : "gain margin ") + margin_text(m, m.margin.value),
                {11.0, "start", kInk, true});
    if (!intervals) continue;
    const auto with_unit = [&](double v) { return margin_text(m, v); };
    const std::string f_interval = detail::interval_text(m.frequency.interval, frequency_text);
    const std::string m_interval = detail::interval_text(m.margin.interval, with_unit);
    canvas.text({kLeft + kColumns[2], y}, f_interval.empty() ? "none" : f_interval,
                {11.0, "start", f_interval.empty() ? kReference : kInk});
    canvas.text({kLeft + kColumns[4], y}, m_interval.empty() ? "none" : m_interval,
                {11.0, "start", m_interval.empty() ? kReference : kInk});
  }
}

double mark_key_height(const std::vector<CrossoverMark>& marks) {
  const bool gain = std::any_of(marks.begin(), marks.end(), [](const auto& m) { return m.gain_crossover; });
  const bool phase = std::any_of(marks.begin(), marks.end(), [](const auto& m) { return !m.gain_crossover; });
  return kKeyRow * ((gain ? 1.0 : 0.0) + (phase ? 1.0 : 0.0));
}

void draw_mark_key(Canvas& canvas, double y, const std::vector<CrossoverMark>& marks) {
  const auto line = [&](bool round, const std::string& crossing, const std::string& reading) {
    draw_shape(canvas, {kLeft + 6.0, y - 4.0}, 4.0, round, false);
    canvas.text({kLeft + 16.0, y}, crossing, {11.0});
    draw_shape(canvas, {kLeft + 384.0, y - 4.0}, 3.5, round, true);
    canvas.text({kLeft + 394.0, y}, reading, {11.0});
    y += kKeyRow;
  };
  if (std::any_of(marks.begin(), marks.end(), [](const auto& m) { return m.gain_crossover; })) {
    line(true, "|L| = 1 here: gain crossovers, tagged 1, 2, ...", "where each one's phase margin is read");
  }
  if (std::any_of(marks.begin(), marks.end(), [](const auto& m) { return !m.gain_crossover; })) {
    line(false, "phase -180° here: phase crossovers, tagged A, B, ...", "where each one's gain margin is read");
  }
}

}  // namespace loopaudit::plotting
