// The Bode plots: L with its margins marked, and the ratio as measured.
#include <algorithm>
#include <cmath>
#include <tuple>

#include "loopaudit/units.hpp"
#include "report/plot_parts.hpp"
#include "report/svg.hpp"

namespace loopaudit::plotting {
namespace {

using svg::Canvas;
using svg::Panel;

// Label placement that keeps labels of neighbouring markers from overlapping:
// each label takes the next free row when one already sits within `gap` px.
class LabelRows {
 public:
  explicit LabelRows(double gap) : gap_(gap) {}
  int take(double x) {
    int row = 0;
    while (std::any_of(taken_.begin(), taken_.end(),
                       [&](const auto& t) { return t.second == row && std::abs(t.first - x) < gap_; })) {
      ++row;
    }
    taken_.push_back({x, row});
    return row;
  }

 private:
  double gap_;
  std::vector<std::pair<double, int>> taken_;
};

// The phase and gain margins marked on a Bode plot: a dotted vertical at each
// crossover and a thick segment from the reference to the curve, labelled.
void mark_margins(Canvas& canvas, const Panel& mag, const Panel& phase, const Margins& marks,
                  const std::vector<double>& f, const std::vector<double>& ph) {
  LabelRows phase_rows(150.0), gain_rows(150.0);
  // The -180 deg level (mod 360) nearest the drawn phase at f.
  const auto level_at = [&](double frequency) {
    const std::size_t k = std::min<std::size_t>(std::lower_bound(f.begin(), f.end(), frequency) - f.begin(), f.size() - 1);
    return std::round((ph[k] + 180.0) / 360.0) * 360.0 - 180.0;
  };
  for (const auto& c : marks.gain_crossovers) {
    const double fc = crossover_frequency(c).value;
    const auto pm = phase_margin(c);
    if (!mag.x.contains(fc)) continue;
    const double x = mag.x(fc);
    canvas.line({x, mag.top}, {x, phase.bottom()}, kMarkerLine);
    canvas.circle(mag.at(fc, 0.0), 4.0, {kMarker, 1.5}, "#ffffff");
    const double level = level_at(fc);
    const double at = level + pm.value;
    canvas.line(phase.at(fc, level), phase.at(fc, at), {kMarker, 2.4});
    canvas.circle(phase.at(fc, at), 3.0, {kMarker, 1.2}, kMarker);
    side_label(canvas, phase, x, phase.y(level) + (at >= level ? 17.0 : -8.0) + 15.0 * phase_rows.take(x),
               "PM " + deg(pm.value) + interval_suffix(pm.interval, one_decimal));
  }
  for (const auto& c : marks.phase_crossovers) {
    const double fc = crossover_frequency(c).value;
    const auto gm = gain_margin(c);
    if (!mag.x.contains(fc)) continue;
    const double x = mag.x(fc);
    canvas.line({x, mag.top}, {x, phase.bottom()}, kMarkerLine);
    canvas.rect(x - 3.5, phase.y(level_at(fc)) - 3.5, 7.0, 7.0, {kMarker, 1.5}, "#ffffff");
    canvas.line(mag.at(fc, 0.0), mag.at(fc, -gm.value), {kMarker, 2.4});
    canvas.circle(mag.at(fc, -gm.value), 3.0, {kMarker, 1.2}, kMarker);
    side_label(canvas, mag, x, mag.y(0.0) + (gm.value >= 0.0 ? -8.0 : 17.0) - 15.0 * gain_rows.take(x),
               "GM " + signed_db(gm.value) + interval_suffix(gm.interval, one_decimal));
  }
}

void bode_key(Canvas& canvas, const BodeView& view, double confidence) {
  const double y = 585.0;
  canvas.line({kLeft, y - 4.0}, {kLeft + 26.0, y - 4.0}, kCurveStroke);
  canvas.text({kLeft + 32.0, y}, view.curve_label, {11.0});
  canvas.rect(kLeft + 120.0, y - 10.0, 26.0, 10.0, {kCurve, 0.0}, "rgba(11,93,122,0.2)");
  canvas.text({kLeft + 152.0, y}, fixed(100.0 * confidence, 0) + " % interval of each line", {11.0});
  canvas.line({kLeft + 330.0, y - 4.0}, {kLeft + 356.0, y - 4.0}, kReferenceStroke);
  canvas.text({kLeft + 362.0, y},
              view.phase_reference_deg ? "0 dB and " + tick_number(*view.phase_reference_deg) + "° (mod 360°)" : "0 dB",
              {11.0});
  if (view.marked) {
    canvas.line({kLeft + 530.0, y - 4.0}, {kLeft + 556.0, y - 4.0}, {kMarker, 2.4});
    canvas.text({kLeft + 562.0, y}, "margins", {11.0});
  }
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
    draw_band(canvas, *panel, d.f, *values, *widths, d.reliable);
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
  draw_curve(canvas, mag, d.f, c.gain, d.reliable);
  draw_curve(canvas, phase, d.f, c.phase, d.reliable);
}

void bode_notes(const Drawable& d, const BodeView& view, Plot& plot) {
  if (std::find(d.reliable.begin(), d.reliable.end(), false) != d.reliable.end()) {
    plot.notes.push_back("Faint parts of the curve are lines too noisy to trust (relative standard deviation above " +
                         fixed(kMostTrustedSigma, 1) + "); they do not set the axes.");
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
  Canvas canvas(kWidth, 600.0, view.title);
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
  if (view.marked) mark_margins(canvas, panes.mag, panes.phase, view.marks, d.f, curves.phase);
  bode_key(canvas, view, result.margins.confidence);
  bode_notes(d, view, plot);
  plot.svg = canvas.finish();
  return plot;
}

}  // namespace loopaudit::plotting
