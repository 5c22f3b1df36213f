// The Bode plots: L with its margins marked, and the ratio as measured.
#include <algorithm>
#include <cmath>
#include <string>
#include <tuple>
#include <utility>

#include "loopaudit/units.hpp"
#include "report/margin_marks.hpp"
#include "report/plot_parts.hpp"
#include "report/svg.hpp"

namespace loopaudit::plotting {
namespace {

using svg::Canvas;
using svg::Panel;

// Where the table and the key go: below the panes, the table only when
// there are marks (an unmarked view keeps the plain layout).
struct BodeLayout {
  double table_top;   // the table header's baseline
  double key_y;       // the key line of the curve and references
  double mark_key_y;  // the first key line of the marks
  double height;
};

BodeLayout bode_layout(const std::vector<CrossoverMark>& marks) {
  if (marks.empty()) return {0.0, 585.0, 600.0, 600.0};
  const double table_top = 592.0;
  const double key_y = table_top + margin_table_height(marks.size()) + 12.0;
  const double mark_key_y = key_y + 18.0;
  return {table_top, key_y, mark_key_y, mark_key_y + mark_key_height(marks) - 3.0};
}

// The curve, its band and the references; the marks' own key lines follow it.
void bode_key(Canvas& canvas, const BodeView& view, double confidence, double y) {
  canvas.line({kLeft, y - 4.0}, {kLeft + 26.0, y - 4.0}, kCurveStroke);
  canvas.text({kLeft + 32.0, y}, view.curve_label, {11.0});
  canvas.rect(kLeft + 120.0, y - 10.0, 26.0, 10.0, {kCurve, 0.0}, "rgba(11,93,122,0.2)");
  canvas.text({kLeft + 152.0, y}, fixed(100.0 * confidence, 0) + " % interval of each line", {11.0});
  canvas.line({kLeft + 330.0, y - 4.0}, {kLeft + 356.0, y - 4.0}, kReferenceStroke);
  canvas.text({kLeft + 362.0, y},
              view.phase_reference_deg ? "0 dB and " + tick_number(*view.phase_reference_deg) + "° (mod 360°)" : "0 dB",
              {11.0});
}

// The two panes of a Bode plot, sharing the frequency axis.
struct BodePanes {
  Panel mag;
  Panel phase;
};

BodePanes bode_panes(const svg::Scale& fx) {
  return {{kLeft, 44.0, kPlotWidth, 230.0, fx, {}}, {kLeft, 300.0, kPlotWidth, 230.0, fx, {}}};
}

// The frame and the reason when there is nothing to draw.
void draw_empty_bode(Canvas& canvas, BodePanes& panes, Plot& plot) {
  const auto x_ticks = frequency_ticks(panes.mag.x);
  panes.mag.y = {-20.0, 20.0, panes.mag.bottom(), panes.mag.top};
  panes.phase.y = {-270.0, 0.0, panes.phase.bottom(), panes.phase.top};
  svg::draw_frame(canvas, panes.mag, {x_ticks, {}, "", "magnitude (dB)"});
  svg::draw_frame(canvas, panes.phase, {x_ticks, {}, "frequency", "phase (°)"});
  empty_message(canvas, panes.mag, "no finite lines to draw");
  plot.notes.push_back("The response has no finite lines: nothing to draw.");
}

// The curves as drawn: gain and phase with the half widths of their intervals.
struct BodeCurves {
  std::vector<double> gain, gain_sigma, phase, phase_sigma;
};

BodeCurves bode_curves(const Drawable& d, const Margins& marks, double confidence) {
  const double z = two_sided_z(confidence);
  BodeCurves c;
  c.phase = unwrapped_phase_deg(d);
  place_phase_branch(c.phase, d, marks);
  for (std::size_t k = 0; k < d.f.size(); ++k) {
    c.gain.push_back(db_from_ratio(std::abs(d.value[k])));
    c.gain_sigma.push_back(z * db_from_nepers(d.sigma[k]));
    c.phase_sigma.push_back(z * deg_from_rad(d.sigma[k]));
  }
  return c;
}

// The value axes of both panes (the magnitude clipped to kMostDecibels, said in
// the notes), drawn with their frames.
void draw_bode_axes(Canvas& canvas, BodePanes& panes, const BodeCurves& c, const Drawable& d, const BodeView& view,
                    Plot& plot) {
  auto [g_low, g_high] = value_range(c.gain, d.reliable);
  if (g_low < g_high - kMostDecibels) {
    g_low = g_high - kMostDecibels;
    plot.notes.push_back("Lines more than " + fixed(kMostDecibels, 0) +
                         " dB below the highest are clipped at the bottom of the magnitude plot.");
  }
  g_low = std::min(g_low, -10.0);
  g_high = std::max(g_high, 10.0);
  svg::round_out(g_low, g_high, 6);
  auto [p_low, p_high] = value_range(c.phase, d.reliable);
  if (view.phase_reference_deg) p_low = std::min(p_low, *view.phase_reference_deg);
  p_high = std::max(p_high, p_low + 90.0);
  svg::round_out(p_low, p_high, 6, 45.0);
  Panel& mag = panes.mag;
  Panel& phase = panes.phase;
  mag.y = {g_low, g_high, mag.bottom(), mag.top};
  phase.y = {p_low, p_high, phase.bottom(), phase.top};
  const auto x_ticks = frequency_ticks(mag.x);
  svg::draw_frame(canvas, mag, {x_ticks, svg::linear_ticks(g_low, g_high, 6, tick_number), "", "magnitude (dB)"});
  svg::draw_frame(canvas, phase, {x_ticks, svg::linear_ticks(p_low, p_high, 6, tick_number, 45.0), "frequency",
                                  "phase (°)"});
}

// Bands, references (0 dB; the phase reference mod 360) and the curves.
void draw_bode_curves(Canvas& canvas, const BodePanes& panes, const BodeCurves& c, const Drawable& d,
                      const BodeView& view) {
  const Panel& mag = panes.mag;
  const Panel& phase = panes.phase;
  for (const auto& [panel, values, widths] :
       {std::tuple{&mag, &c.gain, &c.gain_sigma}, std::tuple{&phase, &c.phase, &c.phase_sigma}}) {
    canvas.begin_clip(panel->left, panel->top, panel->width, panel->height);
    draw_band(canvas, *panel, d.log_f, *values, *widths, d.reliable);
    canvas.end_clip();
  }
  const svg::Scale& fx = mag.x;
  canvas.line(mag.at(fx.low, 0.0), mag.at(fx.high, 0.0), kReferenceStroke);
  if (const auto reference = view.phase_reference_deg) {
    const double p_low = phase.y.low, p_high = phase.y.high;
    for (double level = std::ceil((p_low - *reference) / 360.0) * 360.0 + *reference; level <= p_high; level += 360.0) {
      canvas.line(phase.at(fx.low, level), phase.at(fx.high, level), kReferenceStroke);
    }
  }
  draw_curve(canvas, mag, d.log_f, c.gain, d.reliable);
  draw_curve(canvas, phase, d.log_f, c.phase, d.reliable);
}

void bode_notes(const Drawable& d, const BodeView& view, Plot& plot) {
  for (const auto& [count, kind] : {std::pair{view.marks.gain_crossovers.size(), "gain crossovers"},
                                    std::pair{view.marks.phase_crossovers.size(), "phase crossovers"}}) {
    if (view.marked && count > kMostMarkedEach) {
      plot.notes.push_back("Only the first " + std::to_string(kMostMarkedEach) + " of " + std::to_string(count) + " " +
                           kind + " are marked; the margins table lists them all.");
    }
  }
  if (std::find(d.reliable.begin(), d.reliable.end(), false) != d.reliable.end()) {
    plot.notes.push_back("Faint dots are lines too noisy to trust: relative standard deviation above " +
                         fixed(d.most_trusted_sigma, 2) +
                         " (the most a crossing is placed among), on the line or on most of the five around it. They "
                         "do not set the axes and the curve is not drawn through them.");
  }
  if (view.marked && view.marks.gain_crossovers.empty()) {
    plot.notes.push_back("No gain crossover in the band: no phase margin to mark.");
  }
  if (view.marked && view.marks.phase_crossovers.empty()) {
    plot.notes.push_back("No phase crossover in the band: no gain margin to mark.");
  }
}

}  // namespace

Plot bode(const AnalysisResult& result, const Drawable& d, const BodeView& view) {
  Plot plot{view.name, view.caption, "", {}};
  const std::vector<CrossoverMark> marks =
      view.marked && !d.f.empty() ? crossover_marks(view.marks) : std::vector<CrossoverMark>{};
  const BodeLayout layout = bode_layout(marks);
  Canvas canvas(kWidth, layout.height, view.title, plot.name);
  canvas.text({kLeft, 24.0}, view.title, {14.0, "start", kInk, true});
  BodePanes panes = bode_panes(frequency_scale(d.f));
  if (d.f.empty()) {
    draw_empty_bode(canvas, panes, plot);
    plot.svg = canvas.finish();
    return plot;
  }
  const BodeCurves curves = bode_curves(d, view.marks, result.margins.confidence);
  draw_bode_axes(canvas, panes, curves, d, view, plot);
  draw_bode_curves(canvas, panes, curves, d, view);
  draw_crossover_marks(canvas, {panes.mag, panes.phase, d.f, d.log_f, curves.gain, curves.phase}, marks, kWidth,
                       layout.height);
  draw_margin_table(canvas, layout.table_top, marks, result.margins.confidence);
  bode_key(canvas, view, result.margins.confidence, layout.key_y);
  draw_mark_key(canvas, layout.mark_key_y, marks);
  bode_notes(d, view, plot);
  plot.svg = canvas.finish();
  return plot;
}

}  // namespace loopaudit::plotting
