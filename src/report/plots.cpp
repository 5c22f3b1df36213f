#include "loopaudit/report/plots.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <functional>
#include <optional>

#include "loopaudit/format.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/units.hpp"
#include "report/plot_parts.hpp"
#include "report/svg.hpp"

namespace loopaudit {
namespace plotting {

using svg::Canvas;
using svg::Panel;
using svg::Point;
using svg::Stroke;
using svg::Text;

// The project's look: one deep teal for the measurement, a burnt orange for
// what the analysis marks on it, grey for references, violet for the
// modulus margin. Each also differs in line style, for greyscale print; the
// margin marks differ in shape (round, square), fill and id as well.
const char* const kCurve = "#0b5d7a";
const char* const kMarker = "#b8440f";
const char* const kReference = "#6b6f76";
const char* const kModulus = "#6d3fb5";
const char* const kInk = "#222831";
const char* const kPaper = "#ffffff";  // the background: hollow marks, and the id on a filled tag
const Stroke kCurveStroke{kCurve, 1.6};
const Stroke kNoiseDots{kCurve, 1.8, "", 0.3};  // a line too noisy to trust: a faint dot, no line to it
const Stroke kReferenceStroke{kReference, 1.0, "6 4"};
const Stroke kMarkerLine{kMarker, 1.2, "2 3"};
const double kLeft = 78.0;
const double kPlotWidth = 640.0;
const double kWidth = 760.0;
const double kMostDecibels = 160.0;  // span of a magnitude axis; lower lines are clipped and said so

std::string fixed(double v, int digits) { return format_fixed(v, digits); }
std::string signed_db(double v) { return format_signed(v, 1) + " dB"; }
std::string deg(double v) { return fixed(v, 1) + "°"; }
std::string tick_number(double v) { return fixed(v, std::abs(v - std::round(v)) < 1e-9 ? 0 : 1); }
std::string tick_hz(double v) { return format_frequency(v); }
std::string one_decimal(double v) { return fixed(v, 1); }

std::string interval_suffix(const std::optional<Interval>& i, std::string (*format)(double)) {
  if (!i) return "";
  return " [" + format(i->low) + ", " + format(i->high) + "]";
}


namespace {
constexpr std::size_t kSigmaMedianHalfWidth = 2;  // the line and two on each side
constexpr double kMostBridgedPixels = 6.0;
constexpr std::size_t kMostDottedLines = 80;
}  // namespace

// A line is reliable when its relative sigma, and the median sigma of the
// five lines around it, are at most `most_sigma`: where the coherence is low
// the sigma estimate is itself noisy, and a line that looks quiet among noisy
// neighbours is luck, not signal.
std::vector<bool> reliable_lines(const std::vector<double>& sigma, double most_sigma) {
  std::vector<bool> out;
  for (std::size_t k = 0; k < sigma.size(); ++k) {
    const std::size_t first = k > kSigmaMedianHalfWidth ? k - kSigmaMedianHalfWidth : 0;
    const std::size_t end = std::min(sigma.size(), k + kSigmaMedianHalfWidth + 1);
    std::array<double, 2 * kSigmaMedianHalfWidth + 1> around{};
    std::copy(sigma.begin() + static_cast<std::ptrdiff_t>(first), sigma.begin() + static_cast<std::ptrdiff_t>(end),
              around.begin());
    const auto middle = around.begin() + static_cast<std::ptrdiff_t>((end - first) / 2);
    std::nth_element(around.begin(), middle, around.begin() + static_cast<std::ptrdiff_t>(end - first));
    out.push_back(!(sigma[k] > most_sigma) && !(*middle > most_sigma));
  }
  return out;
}

Drawable drawable(const Response& r, double most_trusted_sigma) {
  Drawable d;
  d.most_trusted_sigma = most_trusted_sigma;
  for (std::size_t k = 0; k < r.size(); ++k) {
    const auto v = r.value[k];
    if (!(r.frequency_hz[k] > 0.0) || !std::isfinite(r.frequency_hz[k]) || !std::isfinite(v.real()) ||
        !std::isfinite(v.imag()) || std::abs(v) == 0.0) {
      ++d.left_out;
      continue;
    }
    d.f.push_back(r.frequency_hz[k]);
    d.log_f.push_back(std::log10(r.frequency_hz[k]));
    d.value.push_back(v);
    const double s = k < r.relative_sigma.size() ? r.relative_sigma[k] : 0.0;
    d.sigma.push_back(std::isfinite(s) ? s : 0.0);
    if (k < r.coherence.size()) d.coherence.push_back(r.coherence[k]);
    if (k < r.snr_db.size()) d.snr_db.push_back(r.snr_db[k]);
  }
  d.reliable = reliable_lines(d.sigma, most_trusted_sigma);
  if (d.coherence.size() != d.f.size()) d.coherence.clear();
  return d;
}

// Phase unwrapped along the reliable lines; a noisy line takes the branch
// nearest the last reliable one (the first, for noisy lines before it), so
// that noise can neither shift what follows nor sit a turn away.
std::vector<double> unwrapped_phase_deg(const Drawable& d) {
  std::vector<double> out;
  std::optional<double> reference;
  std::size_t before = 0;  // noisy lines before the first reliable one
  for (std::size_t k = 0; k < d.value.size(); ++k) {
    const double angle = deg_from_rad(std::arg(d.value[k]));
    out.push_back(reference ? *reference + wrap_deg(angle - *reference) : angle);
    if (!d.reliable[k]) {
      if (!reference) ++before;
      continue;
    }
    if (!reference) {
      for (std::size_t i = 0; i < before; ++i) out[i] = angle + wrap_deg(out[i] - angle);
    }
    reference = out[k];
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
    const double first = crossover_frequency(margins.gain_crossovers.front()).value;
    at = std::lower_bound(d.f.begin(), d.f.end(), first) - d.f.begin();
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

// The range of the reliable values. With fewer than two reliable lines, of
// all of them, without the outermost half per cent of each end when there
// are hundreds: a few wild lines must not squash the rest.
std::pair<double, double> value_range(const std::vector<double>& values, const std::vector<bool>& reliable) {
  const bool use_all = std::count(reliable.begin(), reliable.end(), true) < 2;
  std::vector<double> kept;
  for (std::size_t k = 0; k < values.size(); ++k) {
    if (use_all || reliable[k]) kept.push_back(values[k]);
  }
  const std::size_t trim = use_all && kept.size() >= 200 ? kept.size() / 200 : 0;
  const auto low = kept.begin() + static_cast<std::ptrdiff_t>(trim);
  const auto high = kept.end() - 1 - static_cast<std::ptrdiff_t>(trim);
  // In linear time (plots of many lines call this often): the low end, then the high end among the rest.
  std::nth_element(kept.begin(), low, kept.end());
  const double low_value = *low;
  std::nth_element(low, high, kept.end());
  return {low_value, *high};
}

std::vector<std::pair<std::size_t, std::size_t>> reliable_runs(
    const std::vector<bool>& reliable, const std::function<bool(std::size_t, std::size_t)>& bridges) {
  std::vector<std::pair<std::size_t, std::size_t>> runs;
  std::optional<std::size_t> last;
  for (std::size_t k = 0; k < reliable.size(); ++k) {
    if (!reliable[k]) continue;
    if (last && (*last + 1 == k || bridges(*last, k))) {
      runs.back().second = k;
    } else {
      runs.push_back({k, k});
    }
    last = k;
  }
  return runs;
}

namespace {
// Against frequency, a run goes on across the noisy lines reliable_runs
// allows only while they span at most kMostBridgedPixels, and across any
// number of them that span at most kUnseenPixels (a gap no eye would see).
std::vector<std::pair<std::size_t, std::size_t>> frequency_runs(const Panel& p, const std::vector<double>& log_f,
                                                                const std::vector<bool>& reliable) {
  return reliable_runs(reliable, [&](std::size_t a, std::size_t b) {
    const double gap = p.x.at_log10(log_f[b]) - p.x.at_log10(log_f[a]);
    return gap <= kUnseenPixels || (b - a - 1 <= kMostBridgedLines && gap <= kMostBridgedPixels);
  });
}
}  // namespace

// The interval band of a curve over the reliable lines, one area a run.
void draw_band(Canvas& canvas, const Panel& p, const std::vector<double>& log_f, const std::vector<double>& values,
               const std::vector<double>& half_width, const std::vector<bool>& reliable) {
  const double far_low = p.y.low - (p.y.high - p.y.low), far_high = p.y.high + (p.y.high - p.y.low);
  std::vector<Point> bands;
  for (const auto& [first, last] : frequency_runs(p, log_f, reliable)) {
    std::vector<Point> upper, lower;
    for (std::size_t k = first; k <= last; ++k) {
      if (!reliable[k] || !(half_width[k] > 0.0)) continue;
      const double x = p.x.at_log10(log_f[k]);
      upper.push_back({x, p.y(std::clamp(values[k] + half_width[k], far_low, far_high))});
      lower.push_back({x, p.y(std::clamp(values[k] - half_width[k], far_low, far_high))});
    }
    if (upper.size() < 2) continue;
    const auto high_side = svg::thin(upper);
    const auto low_side = svg::thin(lower);
    bands.insert(bands.end(), high_side.begin(), high_side.end());
    bands.insert(bands.end(), low_side.rbegin(), low_side.rend());
    bands.push_back({NAN, NAN});
  }
  canvas.areas(bands, kCurve, 0.2);
}

// The curve: the reliable lines solid (through a noisy line or two, broken
// where a noisy stretch is longer or wide), each noisy line a faint dot.
void draw_curve(Canvas& canvas, const Panel& p, const std::vector<double>& log_f, const std::vector<double>& values,
                const std::vector<bool>& reliable) {
  const double far_low = p.y.low - (p.y.high - p.y.low), far_high = p.y.high + (p.y.high - p.y.low);
  const auto at = [&](std::size_t k) {
    return Point{p.x.at_log10(log_f[k]), p.y(std::clamp(values[k], far_low, far_high))};
  };
  std::vector<Point> trusted, noisy;
  for (const auto& [first, last] : frequency_runs(p, log_f, reliable)) {
    for (std::size_t k = first; k <= last; ++k) {
      if (reliable[k]) trusted.push_back(at(k));
    }
    trusted.push_back({NAN, NAN});
  }
  const bool few = log_f.size() <= kMostDottedLines;
  const auto shows = [&](const Point& q) { return q.y >= p.top - 1.0 && q.y <= p.bottom() + 1.0; };
  for (std::size_t k = 0; k < log_f.size() && !few; ++k) {
    if (reliable[k]) continue;
    const Point q = at(k);
    if (shows(q)) noisy.push_back(q);
  }
  canvas.begin_clip(p.left, p.top, p.width, p.height);
  canvas.dots(noisy, kNoiseDots);
  canvas.path(svg::thin(trusted), kCurveStroke);
  // Few lines (a stepped sine): a dot on each, so that the measured points show; hollow and faint when noisy.
  for (std::size_t k = 0; k < log_f.size() && few; ++k) {
    canvas.circle(at(k), 2.2, {kCurve, 1.0, "", reliable[k] ? 1.0 : 0.5}, reliable[k] ? kCurve : kPaper);
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
Text marker_text(const std::string& anchor) {
  Text t{11.0, anchor, kMarker, true, true};
  return t;
}

// A label beside a vertical marker line, on the side with room, clear of a
// mark up to 6 px either side of the line.
void side_label(Canvas& canvas, const Panel& p, double x, double y, const std::string& content) {
  const bool room_right = x + 11.0 + 7.0 * static_cast<double>(content.size()) < p.right();
  canvas.text({room_right ? x + 9.0 : x - 9.0, y}, content, marker_text(room_right ? "start" : "end"));
}

}  // namespace plotting

std::vector<Plot> draw_plots(const AnalysisResult& result) {
  using namespace plotting;
  // Lines the analysis would not place a crossing among are, for the plots, too noisy to trust.
  const double most_sigma = result.options.margins.max_line_sigma;
  const Drawable d = drawable(result.loop.lines, most_sigma);
  const bool stepped = d.snr_db.size() == d.f.size() && !d.snr_db.empty();
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
    plots.push_back(bode(result, drawable(measured_ratio(result.loop), most_sigma),
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
