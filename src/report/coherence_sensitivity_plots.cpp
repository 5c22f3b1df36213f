// The plots of one pane against frequency: the coherence (or a stepped
// sine's SNR per dwell) and the sensitivity |S|.
#include <algorithm>
#include <cmath>
#include <utility>

#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"
#include "report/plot_parts.hpp"
#include "report/svg.hpp"

namespace loopaudit::plotting {
namespace {

using svg::Canvas;
using svg::Panel;
using svg::Point;

constexpr double kCoherenceThreshold = 0.5;  // as the low-coherence finding uses

}  // namespace

Plot coherence(const Drawable& d) {
  Plot plot{"coherence", "Coherence of each line, with the threshold below which lines are reported as uncertain", "", {}};
  Canvas canvas(kWidth, 330.0, "Coherence against frequency", plot.name);
  canvas.text({kLeft, 24.0}, "Coherence of the measurement", {14.0, "start", kInk, true});
  const svg::Scale fx = frequency_scale(d.f);
  Panel p{kLeft, 44.0, kPlotWidth, 220.0, fx, {0.0, 1.0, 264.0, 44.0}};
  svg::draw_frame(canvas, p, {frequency_ticks(fx),
                              svg::linear_ticks(0.0, 1.0, 5, [](double v) { return fixed(v, 1); }), "frequency",
                              "coherence"});
  if (d.coherence.empty()) {
    empty_message(canvas, p, "this estimate gives no coherence (see the per-line sigma instead)");
    plot.notes.push_back("No coherence: the estimator (or a table) does not give one.");
    plot.svg = canvas.finish();
    return plot;
  }
  canvas.line(p.at(fx.low, kCoherenceThreshold), p.at(fx.high, kCoherenceThreshold), {kMarker, 1.2, "8 3 2 3"});
  canvas.text({p.right() - 4.0, p.y(kCoherenceThreshold) - 5.0}, "threshold 0.5", marker_text("end"));
  draw_curve(canvas, p, d.log_f, d.coherence, std::vector<bool>(d.f.size(), true));
  plot.svg = canvas.finish();
  return plot;
}

// A stepped sine's lines carry an SNR (the fit's signal over its residual,
// the worse of x and y); its coherence is 1 / (1 + 1/SNR). Shown as SNR.
Plot dwell_snr(const Drawable& d) {
  Plot plot{"coherence", "Signal-to-noise ratio of each dwell's sine fit (the worse of x and y), with the 0 dB level "
                         "that corresponds to coherence 0.5", "", {}};
  Canvas canvas(kWidth, 330.0, "Signal-to-noise ratio of each dwell against frequency", plot.name);
  canvas.text({kLeft, 24.0}, "Signal-to-noise ratio of each dwell", {14.0, "start", kInk, true});
  const svg::Scale fx = frequency_scale(d.f);
  const std::vector<double>& snr_db = d.snr_db;
  auto [low, high] = value_range(snr_db, std::vector<bool>(snr_db.size(), true));
  low = std::min(low, -10.0);
  high = std::max(high, 20.0);
  svg::round_out(low, high, 6);
  Panel p{kLeft, 44.0, kPlotWidth, 220.0, fx, {low, high, 264.0, 44.0}};
  svg::draw_frame(canvas, p, {frequency_ticks(fx), svg::linear_ticks(low, high, 6, tick_number), "frequency", "SNR (dB)"});
  canvas.line(p.at(fx.low, 0.0), p.at(fx.high, 0.0), {kMarker, 1.2, "8 3 2 3"});
  canvas.text({p.right() - 4.0, p.y(0.0) - 5.0}, "0 dB: coherence 0.5", marker_text("end"));
  draw_curve(canvas, p, d.log_f, snr_db, std::vector<bool>(d.f.size(), true));
  plot.svg = canvas.finish();
  return plot;
}

Plot sensitivity(const AnalysisResult& result, const Drawable& d) {
  Plot plot{"sensitivity", "Sensitivity |S| = |1/(1 + L)| with its peak, the inverse of the modulus margin", "", {}};
  Canvas canvas(kWidth, 330.0, "Sensitivity magnitude against frequency", plot.name);
  canvas.text({kLeft, 24.0}, "Sensitivity |S| = |1 / (1 + L)|", {14.0, "start", kInk, true});
  const svg::Scale fx = frequency_scale(d.f);
  Panel p{kLeft, 44.0, kPlotWidth, 220.0, fx, {}};
  const double z = two_sided_z(result.margins.confidence);
  std::vector<double> s_db, s_sigma;
  for (std::size_t k = 0; k < d.f.size(); ++k) {
    const auto one_plus = 1.0 + d.value[k];
    s_db.push_back(-db_from_ratio(std::abs(one_plus)));
    s_sigma.push_back(z * db_from_nepers(d.sigma[k] * std::abs(d.value[k] / one_plus)));
  }
  auto [low, high] = s_db.empty() ? std::pair{-20.0, 10.0} : value_range(s_db, d.reliable);
  low = std::min(std::max(low, high - kMostDecibels), -10.0);
  high = std::max(high + 3.0, 10.0);
  svg::round_out(low, high, 6);
  p.y = {low, high, p.bottom(), p.top};
  svg::draw_frame(canvas, p, {frequency_ticks(fx), svg::linear_ticks(low, high, 6, tick_number), "frequency", "|S| (dB)"});
  if (d.f.empty()) {
    empty_message(canvas, p, "no finite lines to draw");
    plot.svg = canvas.finish();
    return plot;
  }
  canvas.line(p.at(fx.low, 0.0), p.at(fx.high, 0.0), kReferenceStroke);
  canvas.begin_clip(p.left, p.top, p.width, p.height);
  draw_band(canvas, p, d.log_f, s_db, s_sigma, d.reliable);
  canvas.end_clip();
  draw_curve(canvas, p, d.log_f, s_db, d.reliable);
  if (const auto& m = result.margins.modulus) {
    const Reading peak = peak_sensitivity(*m);
    const double at_hz = modulus_frequency(*m).value;
    const Point at = p.at(at_hz, peak.value);
    canvas.line({at.x, at.y - 12.0}, {at.x, p.bottom()}, kMarkerLine);
    canvas.polygon({{at.x, at.y - 3.0}, {at.x - 5.5, at.y - 12.5}, {at.x + 5.5, at.y - 12.5}}, kMarker, 1.0);
    side_label(canvas, p, at.x, at.y - 4.0,
               "peak " + fixed(peak.value, 1) + " dB" + interval_suffix(peak.interval, one_decimal) + " at " +
                   format_frequency(at_hz) +
                   (m->at_band_edge ? " (band edge)" : ""));
  }
  plot.svg = canvas.finish();
  return plot;
}

}  // namespace loopaudit::plotting
