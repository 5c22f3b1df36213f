// What the plots share, private to src/report: the look (defined at the top
// of plots.cpp), the lines that can be drawn, the phase as drawn, the
// frequency axis, the curve and its interval band, and the plot functions
// that draw_plots calls (bode_plot.cpp, plane_plots.cpp,
// coherence_sensitivity_plots.cpp).
#pragma once

#include <complex>
#include <cstddef>
#include <functional>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "loopaudit/pipeline/result.hpp"
#include "loopaudit/report/plots.hpp"
#include "report/svg.hpp"

namespace loopaudit::plotting {

// ---- the look (plots.cpp)
extern const char* const kCurve;
extern const char* const kMarker;
extern const char* const kReference;
extern const char* const kModulus;
extern const char* const kInk;
extern const char* const kPaper;
extern const svg::Stroke kCurveStroke;
extern const svg::Stroke kNoiseDots;
extern const svg::Stroke kReferenceStroke;
extern const svg::Stroke kMarkerLine;
extern const double kLeft;
extern const double kPlotWidth;
extern const double kWidth;
extern const double kMostDecibels;

// ---- numbers as the plots write them
std::string fixed(double v, int digits);
std::string signed_db(double v);
std::string deg(double v);
std::string tick_number(double v);
std::string tick_hz(double v);
std::string one_decimal(double v);
// " [low, high]" in `format`; "" when there is no interval.
std::string interval_suffix(const std::optional<Interval>& i, std::string (*format)(double));

// ---- margin values, read only through these (one place to follow their types)
struct Reading {
  double value = 0.0;
  std::optional<Interval> interval;
};
inline Reading crossover_frequency(const GainCrossover& c) { return {c.frequency_hz.value, c.frequency_hz.interval}; }
inline Reading crossover_frequency(const PhaseCrossover& c) { return {c.frequency_hz.value, c.frequency_hz.interval}; }
inline Reading phase_margin(const GainCrossover& c) { return {c.phase_margin_deg.value, c.phase_margin_deg.interval}; }
inline Reading gain_margin(const PhaseCrossover& c) { return {c.gain_margin_db.value, c.gain_margin_db.interval}; }
inline Reading modulus_frequency(const ModulusPoint& m) { return {m.frequency_hz, std::nullopt}; }
inline Reading modulus_margin(const ModulusPoint& m) { return {m.modulus_margin.value, m.modulus_margin.interval}; }
inline Reading peak_sensitivity(const ModulusPoint& m) { return {m.peak_sensitivity_db.value, m.peak_sensitivity_db.interval}; }

// ---- the lines that can be drawn: positive frequency and a finite, non-zero value
struct Drawable {
  std::vector<double> f;
  std::vector<double> log_f;  // log10 of f, which the frequency axes map (svg::Scale::at_log10)
  std::vector<std::complex<double>> value;
  std::vector<double> sigma;      // relative; 0 when unknown
  std::vector<double> coherence;  // may be empty
  std::vector<double> snr_db;     // a stepped sine's; may be empty
  std::vector<bool> reliable;     // see reliable_lines
  double most_trusted_sigma = 0.0;
  std::size_t left_out = 0;
};

// Reliable: the line's relative sigma and the median of its own and its
// four nearest neighbours' are at most `most_sigma` (an unknown sigma, 0,
// counts as reliable). Only reliable lines set axes, bands and solid curves.
std::vector<bool> reliable_lines(const std::vector<double>& sigma, double most_sigma);
Drawable drawable(const Response& r, double most_trusted_sigma);
// Runs of reliable lines, as [first, last] index pairs: adjacent reliable
// lines always join; a run goes on across noisy lines when
// `bridges(last reliable, next reliable)` allows.
inline constexpr std::size_t kMostBridgedLines = 2;  // across this many noisy lines at most, unless unseen
inline constexpr double kUnseenPixels = 1.5;         // a gap of at most this many px: across any number
std::vector<std::pair<std::size_t, std::size_t>> reliable_runs(
    const std::vector<bool>& reliable, const std::function<bool(std::size_t, std::size_t)>& bridges);
std::vector<double> unwrapped_phase_deg(const Drawable& d);
void place_phase_branch(std::vector<double>& phase, const Drawable& d, const Margins& margins);
std::pair<double, double> value_range(const std::vector<double>& values, const std::vector<bool>& reliable);

// ---- drawing against frequency
// `log_f`: log10 of the lines' frequencies, on the panel's (logarithmic) x scale.
void draw_band(svg::Canvas& canvas, const svg::Panel& p, const std::vector<double>& log_f,
               const std::vector<double>& values, const std::vector<double>& half_width,
               const std::vector<bool>& reliable);
void draw_curve(svg::Canvas& canvas, const svg::Panel& p, const std::vector<double>& log_f,
                const std::vector<double>& values, const std::vector<bool>& reliable);
svg::Scale frequency_scale(const std::vector<double>& f);
std::vector<svg::Tick> frequency_ticks(const svg::Scale& fx);
void empty_message(svg::Canvas& canvas, const svg::Panel& p, const std::string& message);
svg::Text marker_text(const std::string& anchor);
void side_label(svg::Canvas& canvas, const svg::Panel& p, double x, double y, const std::string& content);

// ---- the plots
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

Plot bode(const AnalysisResult& result, const Drawable& d, const BodeView& view);
Plot nyquist_near(const AnalysisResult& result, const Drawable& d);
Plot nyquist_whole(const Drawable& d);
Plot coherence(const Drawable& d);
Plot dwell_snr(const Drawable& d);
Plot sensitivity(const AnalysisResult& result, const Drawable& d);

}  // namespace loopaudit::plotting
