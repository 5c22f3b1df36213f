#include "loopaudit/report/plots.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdio>
#include <numbers>
#include <optional>

#include "loopaudit/format.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/units.hpp"
#include "report/svg.hpp"

namespace loopaudit {
namespace {

using svg::Canvas;
using svg::Panel;
using svg::Point;
using svg::Stroke;
using svg::Text;

// The project's look: one deep teal for the measurement, a burnt orange for
// what the analysis marks on it, grey for references, violet for the
// modulus margin. Each also differs in line style, for greyscale print.
const char* kCurve = "#0b5d7a";
const char* kMarker = "#b8440f";
const char* kReference = "#6b6f76";
const char* kModulus = "#6d3fb5";
const char* kInk = "#222831";
const Stroke kCurveStroke{kCurve, 1.6};
const Stroke kReferenceStroke{kReference, 1.0, "6 4"};
const Stroke kMarkerLine{kMarker, 1.2, "2 3"};
constexpr double kLeft = 78.0;
constexpr double kPlotWidth = 640.0;
constexpr double kWidth = 760.0;
constexpr double kMostDecibels = 160.0;  // span of a magnitude axis; lower lines are clipped and said so
// Lines whose relative sigma (nepers, rad) exceeds this are drawn faint and
// do not set the axes: their phase is noise, as the Nyquist count treats them.
const double kMostTrustedSigma = StabilityOptions{}.max_relative_sigma;

std::string fixed(double v, int digits) { return format_fixed(v, digits); }
std::string signed_db(double v) { return format_signed(v, 1) + " dB"; }
std::string deg(double v) { return fixed(v, 1) + "°"; }
std::string tick_number(double v) { return fixed(v, std::abs(v - std::round(v)) < 1e-9 ? 0 : 1); }
std::string tick_hz(double v) { return format_frequency(v); }

// The lines that can be drawn: positive frequency and a finite, non-zero value.
struct Drawable {
  std::vector<double> f;
  std::vector<std::complex<double>> value;
  std::vector<double> sigma;      // relative; 0 when unknown
  std::vector<double> coherence;  // may be empty
  std::vector<double> snr_db;     // a stepped sine's; may be empty
  std::vector<bool> reliable;     // relative sigma at most kMostTrustedSigma (or unknown)
  std::size_t left_out = 0;
};

Drawable drawable(const Response& r) {
  Drawable d;
  for (std::size_t k = 0; k < r.size(); ++k) {
    const auto v = r.value[k];
    if (!(r.frequency_hz[k] > 0.0) || !std::isfinite(r.frequency_hz[k]) || !std::isfinite(v.real()) ||
        !std::isfinite(v.imag()) || std::abs(v) == 0.0) {
      ++d.left_out;
      continue;
    }
    d.f.push_back(r.frequency_hz[k]);
    d.value.push_back(v);
    const double s = k < r.relative_sigma.size() ? r.relative_sigma[k] : 0.0;
    d.sigma.push_back(std::isfinite(s) ? s : 0.0);
    d.reliable.push_back(!(d.sigma.back() > kMostTrustedSigma));
    if (k < r.coherence.size()) d.coherence.push_back(r.coherence[k]);
    if (k < r.snr_db.size()) d.snr_db.push_back(r.snr_db[k]);
  }
  if (d.coherence.size() != d.f.size()) d.coherence.clear();
  if (d.snr_db.size() != d.f.size()) d.snr_db.clear();
  return d;
}

// Phase unwrapped along the reliable lines; a noisy line takes the branch
// nearest the last reliable one, so that noise cannot shift what follows.
std::vector<double> unwrapped_phase_deg(const Drawable& d) {
  std::vector<double> out;
  double reference = 0.0;
  bool anchored = false;
  for (std::size_t k = 0; k < d.value.size(); ++k) {
    const double angle = deg_from_rad(std::arg(d.value[k]));
    const double unwrapped = anchored ? reference + wrap_deg(angle - reference) : angle;
    out.push_back(unwrapped);
    if (d.reliable[k]) {
      reference = unwrapped;
      anchored = true;
    }
  }
  return out;
}

// Shifts an unwrapped phase by whole turns so that it lies in [-360, 0) deg at
// the first gain crossover (where PM = 180 + phase), or else at the median of
// the reliable lines: the branch a loop's phase is read in.
void place_phase_branch(std::vector<double>& phase, const Drawable& d, const Margins& margins) {
  if (phase.empty()) return;
  std::size_t at = 0;
  if (!margins.gain_crossovers.empty()) {
    at = std::lower_bound(d.f.begin(), d.f.end(), margins.gain_crossovers.front().frequency_hz.value) - d.f.begin();
  } else {
    std::vector<std::size_t> trusted;
    for (std::size_t k = 0; k < phase.size(); ++k) {
      if (d.reliable[k]) trusted.push_back(k);
    }
    if (!trusted.empty()) at = trusted[trusted.size() / 2];
  }
  at = std::min(at, phase.size() - 1);
  const double shift = -360.0 * std::floor(phase[at] / 360.0 + 1.0);
  for (double& p : phase) p += shift;
}

// The range of the reliable values (all of them when fewer than two are),
// without the outermost half per cent of each end when there are hundreds:
// a few wild lines must not squash the rest.
std::pair<double, double> value_range(const std::vector<double>& values, const std::vector<bool>& reliable) {
  const bool use_all = std::count(reliable.begin(), reliable.end(), true) < 2;
  std::vector<double> kept;
  for (std::size_t k = 0; k < values.size(); ++k) {
    if (use_all || reliable[k]) kept.push_back(values[k]);
  }
  std::sort(kept.begin(), kept.end());
  const std::size_t trim = kept.size() >= 200 ? kept.size() / 200 : 0;
  return {kept[trim], kept[kept.size() - 1 - trim]};
}

// Runs of reliable lines, as [first, last] index pairs: adjacent reliable
// lines always join; a run goes on across noisy lines while the gap they
// leave spans at most kMostBridgedPixels.
constexpr double kMostBridgedPixels = 6.0;
constexpr std::size_t kMostDottedLines = 80;
std::vector<std::pair<std::size_t, std::size_t>> reliable_runs(const Panel& p, const std::vector<double>& f,
                                                               const std::vector<bool>& reliable) {
  std::vector<std::pair<std::size_t, std::size_t>> runs;
  std::optional<std::size_t> last;
  for (std::size_t k = 0; k < f.size(); ++k) {
    if (!reliable[k]) continue;
    if (last && (*last + 1 == k || p.x(f[k]) - p.x(f[*last]) <= kMostBridgedPixels)) {
      runs.back().second = k;
    } else {
      runs.push_back({k, k});
    }
    last = k;
  }
  return runs;
}

// The interval band of a curve over the reliable lines, one polygon a run.
void draw_band(Canvas& canvas, const Panel& p, const std::vector<double>& f, const std::vector<double>& values,
               const std::vector<double>& half_width, const std::vector<bool>& reliable) {
  const double far_low = p.y.low - (p.y.high - p.y.low), far_high = p.y.high + (p.y.high - p.y.low);
  for (const auto& [first, last] : reliable_runs(p, f, reliable)) {
    std::vector<Point> upper, lower;
    for (std::size_t k = first; k <= last; ++k) {
      if (!reliable[k] || !(half_width[k] > 0.0)) continue;
      upper.push_back(p.at(f[k], std::clamp(values[k] + half_width[k], far_low, far_high)));
      lower.push_back(p.at(f[k], std::clamp(values[k] - half_width[k], far_low, far_high)));
    }
    if (upper.size() < 2) continue;
    std::vector<Point> band = svg::thin(upper);
    const auto low_side = svg::thin(lower);
    band.insert(band.end(), low_side.rbegin(), low_side.rend());
    canvas.polygon(band, kCurve, 0.2);
  }
}

// The curve: every line faint, and the reliable ones solid over it (through
// isolated noisy lines, broken where a noisy stretch is wide).
void draw_curve(Canvas& canvas, const Panel& p, const std::vector<double>& f, const std::vector<double>& values,
                const std::vector<bool>& reliable) {
  const double far_low = p.y.low - (p.y.high - p.y.low), far_high = p.y.high + (p.y.high - p.y.low);
  const auto at = [&](std::size_t k) { return p.at(f[k], std::clamp(values[k], far_low, far_high)); };
  std::vector<Point> all, trusted;
  for (std::size_t k = 0; k < f.size(); ++k) all.push_back(at(k));
  for (const auto& [first, last] : reliable_runs(p, f, reliable)) {
    for (std::size_t k = first; k <= last; ++k) {
      if (reliable[k]) trusted.push_back(at(k));
    }
    trusted.push_back({NAN, NAN});
  }
  canvas.begin_clip(p.left, p.top, p.width, p.height);
  if (std::find(reliable.begin(), reliable.end(), false) != reliable.end()) {
    canvas.path(svg::thin(all), {kCurve, 1.0, "", 0.35});
  }
  canvas.path(svg::thin(trusted), kCurveStroke);
  // Few lines (a stepped sine): a dot on each, so that the measured points show.
  if (f.size() <= kMostDottedLines) {
    for (std::size_t k = 0; k < f.size(); ++k) canvas.circle(at(k), 2.2, {kCurve, 1.0}, reliable[k] ? kCurve : "#ffffff");
  }
  canvas.end_clip();
}

// The frequency axis of a set of lines: their range, widened by a factor of
// two when there is a single line.
svg::Scale frequency_scale(const std::vector<double>& f) {
  double low = f.empty() ? 1.0 : f.front();
  double high = f.empty() ? 10.0 : f.back();
  if (!(high > low)) {
    low /= 2.0;
    high *= 2.0;
  }
  return {low, high, kLeft, kLeft + kPlotWidth, true};
}

std::vector<svg::Tick> frequency_ticks(const svg::Scale& fx) {
  const double px_per_decade = std::abs(fx.to_px - fx.from_px) / std::log10(fx.high / fx.low);
  return svg::log_ticks(fx.low, fx.high, tick_hz, px_per_decade >= 110.0);
}

void empty_message(Canvas& canvas, const Panel& p, const std::string& message) {
  canvas.text({p.left + p.width / 2.0, p.top + p.height / 2.0}, message, {13.0, "middle", kMarker, true});
}

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

Text marker_text(const std::string& anchor) {
  Text t{11.0, anchor, kMarker, true, true};
  return t;
}

// A label beside a vertical marker line, on the side with room.
void side_label(Canvas& canvas, const Panel& p, double x, double y, const std::string& content) {
  const bool room_right = x + 8.0 + 7.0 * static_cast<double>(content.size()) < p.right();
  canvas.text({room_right ? x + 6.0 : x - 6.0, y}, content, marker_text(room_right ? "start" : "end"));
}

std::string interval_suffix(const std::optional<Interval>& i, std::string (*format)(double)) {
  if (!i) return "";
  return " [" + format(i->low) + ", " + format(i->high) + "]";
}

std::string one_decimal(double v) { return fixed(v, 1); }

// ---------------------------------------------------------------- Bode
// What a Bode plot shows: L with the margins marked, or the measured ratio alone.
struct BodeView {
  std::string name;
  std::string caption;
  std::string title;
  const Margins& marks;  // sets the phase branch; its margins are drawn when `marked`
  bool marked;
  std::optional<double> phase_reference_deg;  // drawn mod 360 with 0 dB: where the ratio meets the critical point
  std::string curve_label;
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
    if (!mag.x.contains(c.frequency_hz.value)) continue;
    const double x = mag.x(c.frequency_hz.value);
    canvas.line({x, mag.top}, {x, phase.bottom()}, kMarkerLine);
    canvas.circle(mag.at(c.frequency_hz.value, 0.0), 4.0, {kMarker, 1.5}, "#ffffff");
    const double level = level_at(c.frequency_hz.value);
    const double at = level + c.phase_margin_deg.value;
    canvas.line(phase.at(c.frequency_hz.value, level), phase.at(c.frequency_hz.value, at), {kMarker, 2.4});
    canvas.circle(phase.at(c.frequency_hz.value, at), 3.0, {kMarker, 1.2}, kMarker);
    side_label(canvas, phase, x, phase.y(level) + (at >= level ? 17.0 : -8.0) + 15.0 * phase_rows.take(x),
               "PM " + deg(c.phase_margin_deg.value) + interval_suffix(c.phase_margin_deg.interval, one_decimal));
  }
  for (const auto& c : marks.phase_crossovers) {
    if (!mag.x.contains(c.frequency_hz.value)) continue;
    const double x = mag.x(c.frequency_hz.value);
    canvas.line({x, mag.top}, {x, phase.bottom()}, kMarkerLine);
    canvas.rect(x - 3.5, phase.y(level_at(c.frequency_hz.value)) - 3.5, 7.0, 7.0, {kMarker, 1.5}, "#ffffff");
    canvas.line(mag.at(c.frequency_hz.value, 0.0), mag.at(c.frequency_hz.value, -c.gain_margin_db.value), {kMarker, 2.4});
    canvas.circle(mag.at(c.frequency_hz.value, -c.gain_margin_db.value), 3.0, {kMarker, 1.2}, kMarker);
    side_label(canvas, mag, x, mag.y(0.0) + (c.gain_margin_db.value >= 0.0 ? -8.0 : 17.0) - 15.0 * gain_rows.take(x),
               "GM " + signed_db(c.gain_margin_db.value) + interval_suffix(c.gain_margin_db.interval, one_decimal));
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

Plot bode(const AnalysisResult& result, const Drawable& d, const BodeView& view) {
  Plot plot{view.name, view.caption, "", {}};
  Canvas canvas(kWidth, 600.0, view.title);
  canvas.text({kLeft, 24.0}, view.title, {14.0, "start", kInk, true});
  const svg::Scale fx = frequency_scale(d.f);
  Panel mag{kLeft, 44.0, kPlotWidth, 230.0, fx, {}};
  Panel phase{kLeft, 300.0, kPlotWidth, 230.0, fx, {}};
  if (d.f.empty()) {
    mag.y = {-20.0, 20.0, mag.bottom(), mag.top};
    phase.y = {-270.0, 0.0, phase.bottom(), phase.top};
    svg::draw_frame(canvas, mag, {frequency_ticks(fx), {}, "", "magnitude (dB)"});
    svg::draw_frame(canvas, phase, {frequency_ticks(fx), {}, "frequency", "phase (°)"});
    empty_message(canvas, mag, "no finite lines to draw");
    plot.notes.push_back("The response has no finite lines: nothing to draw.");
    plot.svg = canvas.finish();
    return plot;
  }
  const double z = two_sided_z(result.margins.confidence);
  std::vector<double> gain, gain_sigma, ph = unwrapped_phase_deg(d), phase_sigma;
  place_phase_branch(ph, d, view.marks);
  for (std::size_t k = 0; k < d.f.size(); ++k) {
    gain.push_back(db_from_ratio(std::abs(d.value[k])));
    gain_sigma.push_back(z * db_from_nepers(d.sigma[k]));
    phase_sigma.push_back(z * deg_from_rad(d.sigma[k]));
  }
  auto [g_low, g_high] = value_range(gain, d.reliable);
  if (g_low < g_high - kMostDecibels) {
    g_low = g_high - kMostDecibels;
    plot.notes.push_back("Lines more than " + fixed(kMostDecibels, 0) +
                         " dB below the highest are clipped at the bottom of the magnitude plot.");
  }
  g_low = std::min(g_low, -10.0);
  g_high = std::max(g_high, 10.0);
  svg::round_out(g_low, g_high, 6);
  auto [p_low, p_high] = value_range(ph, d.reliable);
  if (view.phase_reference_deg) p_low = std::min(p_low, *view.phase_reference_deg);
  p_high = std::max(p_high, p_low + 90.0);
  svg::round_out(p_low, p_high, 6, 45.0);
  mag.y = {g_low, g_high, mag.bottom(), mag.top};
  phase.y = {p_low, p_high, phase.bottom(), phase.top};
  const auto x_ticks = frequency_ticks(fx);
  svg::draw_frame(canvas, mag, {x_ticks, svg::linear_ticks(g_low, g_high, 6, tick_number), "", "magnitude (dB)"});
  svg::draw_frame(canvas, phase, {x_ticks, svg::linear_ticks(p_low, p_high, 6, tick_number, 45.0), "frequency",
                                  "phase (°)"});
  for (const auto& [panel, values, widths] :
       {std::tuple{&mag, &gain, &gain_sigma}, std::tuple{&phase, &ph, &phase_sigma}}) {
    canvas.begin_clip(panel->left, panel->top, panel->width, panel->height);
    draw_band(canvas, *panel, d.f, *values, *widths, d.reliable);
    canvas.end_clip();
  }
  canvas.line(mag.at(fx.low, 0.0), mag.at(fx.high, 0.0), kReferenceStroke);
  if (const auto reference = view.phase_reference_deg) {
    for (double level = std::ceil((p_low - *reference) / 360.0) * 360.0 + *reference; level <= p_high; level += 360.0) {
      canvas.line(phase.at(fx.low, level), phase.at(fx.high, level), kReferenceStroke);
    }
  }
  draw_curve(canvas, mag, d.f, gain, d.reliable);
  draw_curve(canvas, phase, d.f, ph, d.reliable);
  if (view.marked) mark_margins(canvas, mag, phase, view.marks, d.f, ph);
  bode_key(canvas, view, result.margins.confidence);
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
  plot.svg = canvas.finish();
  return plot;
}

// ---------------------------------------------------------------- Nyquist

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

// L in the complex plane: every line faint, the reliable ones solid.
void draw_plane_curve(Canvas& canvas, const Panel& p, const std::vector<Point>& points,
                      const std::vector<bool>& reliable) {
  std::vector<Point> trusted;
  for (std::size_t k = 0; k < points.size(); ++k) {
    if (reliable[k]) trusted.push_back(points[k]);
  }
  if (trusted.size() < points.size()) canvas.path(svg::thin_path(in_view(p, points), 1.5), {kCurve, 1.0, "", 0.35});
  canvas.path(svg::thin_path(in_view(p, trusted)), kCurveStroke);
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
    const double decade = std::pow(10.0, std::floor(std::log10(d.f[k])));
    if (!(d.f[k - 1] < decade && d.f[k] >= decade)) continue;
    const Point at = points[k];
    if (at.x < p.left || at.x > p.right() || at.y < p.top || at.y > p.bottom()) continue;
    canvas.circle(at, 2.6, {kCurve, 1.0}, kCurve);
    canvas.text({at.x + 5.0, at.y - 5.0}, format_frequency(decade), {10.0, "start", kCurve, false, true});
  }
}

Plot nyquist_near(const AnalysisResult& result, const Drawable& d) {
  Plot plot{"nyquist-near", "L in the complex plane around the critical point -1", "", {}};
  Canvas canvas(560.0, 560.0, "Loop gain L in the complex plane, near -1");
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
    canvas.circle(p.at(-1.0, 0.0), m.modulus->modulus_margin.value * unit_px, {kModulus, 1.4, "1 3"});
  }
  std::vector<Point> points;
  for (const auto& v : d.value) points.push_back(p.at(v.real(), v.imag()));
  draw_plane_curve(canvas, p, points, d.reliable);
  // Phase margin: the ray to the crossover on the unit circle and the arc from -1 to it.
  for (const auto& c : m.gain_crossovers) {
    const double angle = rad_from_deg(c.phase_margin_deg.value - 180.0);  // of L at the crossover
    const Point on_circle = p.at(std::cos(angle), std::sin(angle));
    canvas.line(p.at(0.0, 0.0), on_circle, {kMarker, 1.2});
    std::vector<Point> arc;
    for (int i = 0; i <= 40; ++i) {
      const double a = -std::numbers::pi + (angle + std::numbers::pi) * i / 40.0;
      arc.push_back(p.at(0.55 * std::cos(a), 0.55 * std::sin(a)));
    }
    canvas.path(arc, {kMarker, 2.0});
    canvas.circle(on_circle, 3.5, {kMarker, 1.5}, "#ffffff");
    canvas.text({on_circle.x + 6.0, on_circle.y + 14.0}, "PM " + deg(c.phase_margin_deg.value), marker_text("start"));
  }
  for (const auto& c : m.phase_crossovers) {
    const double re = -ratio_from_db(-c.gain_margin_db.value);  // the crossing lies on the negative real axis
    if (re < -2.5) continue;
    const Point at = p.at(re, 0.0);
    canvas.line(p.at(-1.0, 0.0), at, {kMarker, 2.4});
    canvas.rect(at.x - 3.5, at.y - 3.5, 7.0, 7.0, {kMarker, 1.5}, "#ffffff");
    canvas.text({0.5 * (at.x + p.x(-1.0)), at.y + 18.0}, "GM " + signed_db(c.gain_margin_db.value), marker_text("middle"));
  }
  canvas.end_clip();
  decade_marks(canvas, p, d, points);
  // The critical point, drawn last so that nothing hides it.
  const Point critical = p.at(-1.0, 0.0);
  canvas.line({critical.x - 6.0, critical.y - 6.0}, {critical.x + 6.0, critical.y + 6.0}, {kInk, 2.0});
  canvas.line({critical.x - 6.0, critical.y + 6.0}, {critical.x + 6.0, critical.y - 6.0}, {kInk, 2.0});
  canvas.text({critical.x - 8.0, critical.y + 18.0}, "-1", {12.0, "end", kInk, true, true});
  // Key.
  double y = p.bottom() + 52.0;
  canvas.line({kLeft, y - 4.0}, {kLeft + 24.0, y - 4.0}, kReferenceStroke);
  canvas.text({kLeft + 30.0, y}, "|L| = 1", {11.0});
  canvas.line({kLeft + 100.0, y - 4.0}, {kLeft + 124.0, y - 4.0}, {kModulus, 1.4, "1 3"});
  canvas.text({kLeft + 130.0, y}, m.modulus ? "modulus margin " + fixed(m.modulus->modulus_margin.value, 3) + " around -1"
                                            : "no modulus margin",
              {11.0});
  if (d.f.empty()) empty_message(canvas, p, "no finite lines to draw");
  plot.svg = canvas.finish();
  return plot;
}

Plot nyquist_whole(const Drawable& d) {
  Plot plot{"nyquist-whole", "L over the whole band, radius drawn as log10(1 + |L|) so that every decade shows", "", {}};
  Canvas canvas(560.0, 560.0, "Loop gain L in the complex plane, whole band");
  canvas.text({kLeft, 24.0}, "L over the whole band (radius compressed)", {14.0, "start", kInk, true});
  const auto squash = [](std::complex<double> v) { return std::polar(std::log10(1.0 + std::abs(v)), std::arg(v)); };
  double reach = std::log10(2.0) * 1.3;
  for (const auto& v : d.value) reach = std::max(reach, std::abs(squash(v)) * 1.05);
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
  canvas.path(svg::thin_path(in_view(p, mirror), 1.5), {kCurve, 1.0, "3 3", 0.5});
  draw_plane_curve(canvas, p, points, d.reliable);
  canvas.end_clip();
  decade_marks(canvas, p, d, points);
  const Point critical = p.at(-std::log10(2.0), 0.0);
  canvas.line({critical.x - 5.0, critical.y - 5.0}, {critical.x + 5.0, critical.y + 5.0}, {kInk, 2.0});
  canvas.line({critical.x - 5.0, critical.y + 5.0}, {critical.x + 5.0, critical.y - 5.0}, {kInk, 2.0});
  canvas.text({critical.x - 7.0, critical.y + 16.0}, "-1", {12.0, "end", kInk, true, true});
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

// ---------------------------------------------------------------- coherence
constexpr double kCoherenceThreshold = 0.5;  // as the low-coherence finding uses

Plot coherence(const Drawable& d) {
  Plot plot{"coherence", "Coherence of each line, with the threshold below which lines are reported as uncertain", "", {}};
  Canvas canvas(kWidth, 330.0, "Coherence against frequency");
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
  draw_curve(canvas, p, d.f, d.coherence, std::vector<bool>(d.f.size(), true));
  plot.svg = canvas.finish();
  return plot;
}

// A stepped sine's lines carry an SNR (the fit's signal over its residual,
// the worse of x and y); shown as SNR, with 0 dB where the coherence it
// implies, 1 / (1 + 1/SNR), is 0.5.
Plot dwell_snr(const Drawable& d) {
  Plot plot{"coherence", "Signal-to-noise ratio of each dwell's sine fit (the worse of x and y), with the 0 dB level "
                         "that corresponds to coherence 0.5", "", {}};
  Canvas canvas(kWidth, 330.0, "Signal-to-noise ratio of each dwell against frequency");
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
  draw_curve(canvas, p, d.f, snr_db, std::vector<bool>(d.f.size(), true));
  plot.svg = canvas.finish();
  return plot;
}

// ---------------------------------------------------------------- sensitivity
Plot sensitivity(const AnalysisResult& result, const Drawable& d) {
  Plot plot{"sensitivity", "Sensitivity |S| = |1/(1 + L)| with its peak, the inverse of the modulus margin", "", {}};
  Canvas canvas(kWidth, 330.0, "Sensitivity magnitude against frequency");
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
  draw_band(canvas, p, d.f, s_db, s_sigma, d.reliable);
  canvas.end_clip();
  draw_curve(canvas, p, d.f, s_db, d.reliable);
  if (const auto& m = result.margins.modulus) {
    const Point at = p.at(m->frequency_hz, m->peak_sensitivity_db.value);
    canvas.line({at.x, at.y - 12.0}, {at.x, p.bottom()}, kMarkerLine);
    canvas.polygon({{at.x, at.y - 3.0}, {at.x - 5.5, at.y - 12.5}, {at.x + 5.5, at.y - 12.5}}, kMarker, 1.0);
    side_label(canvas, p, at.x + 4.0, at.y - 4.0,
               "peak " + fixed(m->peak_sensitivity_db.value, 1) + " dB" +
                   interval_suffix(m->peak_sensitivity_db.interval, one_decimal) + " at " + format_frequency(m->frequency_hz) +
                   (m->at_band_edge ? " (band edge)" : ""));
  }
  plot.svg = canvas.finish();
  return plot;
}

}  // namespace

std::vector<Plot> draw_plots(const AnalysisResult& result) {
  const Drawable d = drawable(result.loop.lines);
  const bool stepped = !d.snr_db.empty();
  const BodeView loop_view{"bode", "Bode plot of L: magnitude and phase against frequency, margins marked",
                           std::string("Loop gain ") + convention_formula(result.loop.convention) + ": magnitude and phase",
                           result.margins, true, -180.0, "measured L"};
  std::vector<Plot> plots{bode(result, d, loop_view), nyquist_near(result, d), nyquist_whole(d),
                          stepped ? dwell_snr(d) : coherence(d),
                          sensitivity(result, d)};
  if (result.loop.convention != Convention::kDirect) {
    const Margins none;
    const bool series = result.loop.convention == Convention::kSeriesInjection;
    const std::string ratio = series ? "Y/X" : "T";
    plots.push_back(bode(result, drawable(measured_ratio(result.loop)),
                         {"bode-measured",
                          "The ratio as measured, " + ratio + ", before the loop convention (" +
                              convention_formula(result.loop.convention) + ") is applied; margins are read on L only",
                          "Measured ratio " + ratio + " (not L): magnitude and phase", none, false,
                          series ? std::optional(0.0) : std::nullopt, "measured " + ratio}));
  }
  if (d.left_out > 0) {
    plots.front().notes.push_back(std::to_string(d.left_out) + " lines are not finite (or not above 0 Hz) and are left out of every plot.");
  }
  return plots;
}

}  // namespace loopaudit
