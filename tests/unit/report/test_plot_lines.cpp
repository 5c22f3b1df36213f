// The lines the plots draw: which are trusted, where the axes go, the phase
// branch, and the ids that let several plots share one page.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <complex>
#include <cstdint>
#include <iterator>
#include <map>
#include <numbers>
#include <optional>
#include <set>
#include <string>
#include <vector>

#include "analysis/known_loops.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/report/html_report.hpp"
#include "loopaudit/report/plots.hpp"
#include "report/plot_parts.hpp"
#include "report/svg_reading.hpp"
#include "report/table_result.hpp"

using namespace loopaudit;
using loopaudit::table_result::result_of;
using svg_reading::Element;
using svg_reading::elements;
using svg_reading::subpaths;

namespace {

constexpr double kQuiet = 0.01;  // relative sigma of a trusted line
// Between the crossing limit (0.25, MarginOptions) and the Nyquist count's (0.5): noise to the eye.
constexpr double kNoisy = 0.4;
constexpr double kPixel = 1.0;  // coordinates are written to 0.1 px

// 1/(s(s+1)(s+2)) (data/reference/known_loops.csv), 401 lines over four
// decades, its top 60 lines noisy (sigma kNoisy) and wild: |L| alternately
// 1e4 and 1e-12 (+80 dB, -240 dB) at phases spread over the circle. Its first
// line is noisy too, with its phase a turn's worth from its neighbours' side
// of +-180 deg (as at the servo demo's low end).
Response noisy_ends() {
  auto lines = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 100);
  for (auto& s : lines.relative_sigma) s = kQuiet;
  const std::size_t n = lines.size();
  for (std::size_t k = n - 60; k < n; ++k) {
    lines.relative_sigma[k] = kNoisy;
    lines.value[k] = std::polar(k % 2 ? 1e4 : 1e-12, 2.0 * std::numbers::pi * std::fmod(0.37 * k, 1.0));
  }
  lines.relative_sigma[0] = 1.5;
  lines.value[0] = std::polar(std::abs(lines.value[0]), 170.0 * std::numbers::pi / 180.0);
  return lines;
}

// A value axis read back from its labelled ticks (right-aligned at the
// panes' left, 4 px below their grid line) on a pane from pixel rows top to
// bottom; low and high are the values at its edges.
struct ValueAxis {
  double low = 0.0, high = 0.0;
  double value_a = 0.0, px_a = 0.0, value_b = 0.0, px_b = 0.0;
  double value(double y) const { return value_a + (y - px_a) / (px_b - px_a) * (value_b - value_a); }
  double px(double v) const { return px_a + (v - value_a) / (value_b - value_a) * (px_b - px_a); }
  double px_per_unit() const { return std::abs(px_b - px_a) / std::abs(value_b - value_a); }
};

ValueAxis value_axis(const std::string& svg, double top, double bottom) {
  std::map<double, double> by_y;  // label y -> value
  for (const auto& t : elements(svg, "text")) {
    if (t.get("text-anchor") == "end" && std::abs(t.number("x") - (plotting::kLeft - 7.0)) < kPixel &&
        t.number("y") > top && t.number("y") < bottom + 5.0) {
      by_y[t.number("y") - 4.0] = std::stod(t.content);
    }
  }
  REQUIRE(by_y.size() >= 2);
  const auto first = by_y.begin();
  const auto last = std::prev(by_y.end());
  ValueAxis axis{0.0, 0.0, first->second, first->first, last->second, last->first};
  axis.low = axis.value(bottom);
  axis.high = axis.value(top);
  return axis;
}

// The subpaths of paths in `colour` with `width` inside the rows [top, bottom] (with a pixel's slack).
std::vector<std::vector<svg::Point>> drawn(const std::string& svg, const std::string& colour, const std::string& width,
                                           double top, double bottom) {
  std::vector<std::vector<svg::Point>> out;
  for (const auto& p : elements(svg, "path")) {
    if (p.get("stroke") != colour || p.get("stroke-width") != width) continue;
    for (auto& run : subpaths(p.get("d"))) {
      if (run.front().y >= top - kPixel && run.front().y <= bottom + kPixel) out.push_back(run);
    }
  }
  return out;
}

constexpr double kMagTop = 44.0, kMagBottom = 274.0, kPhaseTop = 300.0, kPhaseBottom = 530.0;  // bode_plot.cpp

// 131072 lines (as --segment 262144 gives) on a log grid from 0.1 Hz to 10
// kHz: L = K/s w0^2/(s^2 + s w0/Q + w0^2) with its gain crossover at 20 Hz
// and a resonance at 1 kHz, Q = 30, whose peak (-4.4 dB, 30 dB above the
// curve beside it) is under 2 px wide. `noisy_share` of the lines (picked at
// random) are too noisy to trust, and scattered: gain +-40 dB (one sigma),
// phase anywhere.
constexpr std::size_t kDenseLines = 131072;
constexpr double kResonanceHz = 1000.0;

std::uint64_t splitmix(std::uint64_t& state) {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}
double uniform(std::uint64_t& state) { return static_cast<double>(splitmix(state) >> 11) * 0x1.0p-53; }

Response dense_lines(double noisy_share) {
  const double w0 = 2.0 * std::numbers::pi * kResonanceHz, q = 30.0, k = 2.0 * std::numbers::pi * 20.0;
  std::uint64_t state = 11;
  Response r;
  for (std::size_t n = 0; n < kDenseLines; ++n) {
    const double f = 0.1 * std::pow(1e5, static_cast<double>(n) / (kDenseLines - 1));
    const std::complex<double> s{0.0, 2.0 * std::numbers::pi * f};
    std::complex<double> value = k / s * w0 * w0 / (s * s + s * w0 / q + w0 * w0);
    double sigma = kQuiet;
    if (uniform(state) < noisy_share) {
      sigma = kNoisy + uniform(state);
      const double radius = std::sqrt(-2.0 * std::log(1.0 - uniform(state)));
      const double normal = radius * std::cos(2.0 * std::numbers::pi * uniform(state));  // Box-Muller
      value = std::polar(std::abs(value) * std::pow(10.0, 2.0 * normal), 2.0 * std::numbers::pi * uniform(state));
    }
    r.frequency_hz.push_back(f);
    r.value.push_back(value);
    r.relative_sigma.push_back(sigma);
  }
  return r;
}

// The smallest distance from `at` to the polylines.
double distance_to(const std::vector<std::vector<svg::Point>>& runs, svg::Point at) {
  double nearest = 1e9;
  for (const auto& run : runs) {
    for (std::size_t k = 0; k + 1 < run.size(); ++k) {
      const svg::Point a = run[k], b = run[k + 1];
      const double dx = b.x - a.x, dy = b.y - a.y, length2 = dx * dx + dy * dy;
      const double t = length2 > 0.0 ? std::clamp(((at.x - a.x) * dx + (at.y - a.y) * dy) / length2, 0.0, 1.0) : 0.0;
      nearest = std::min(nearest, std::hypot(a.x + t * dx - at.x, a.y + t * dy - at.y));
    }
  }
  return nearest;
}

}  // namespace

TEST_CASE("a line is trusted when it and most of the five around it are quiet", "[report]") {
  // The limit is MarginOptions::max_line_sigma, the most a crossing is placed among.
  const double limit = MarginOptions{}.max_line_sigma;
  const std::vector<double> sigma{0.1, 0.1, 0.6, 0.1, 0.1, 0.6, 0.1, 0.6, 0.6, 0.1, 0.6, 0.0};
  const auto reliable = plotting::reliable_lines(sigma, limit);
  // One noisy line among quiet ones: only it; a quiet line among noisy ones: it too.
  CHECK(reliable == std::vector<bool>{true, true, false, true, true, false, false, false, false, false, false, true});
  CHECK(plotting::reliable_lines({0.0, 0.0, 0.0}, limit) == std::vector<bool>{true, true, true});  // unknown sigma
}

TEST_CASE("the Bode axes come from the trusted lines only and hold every one of them", "[report]") {
  const Response lines = noisy_ends();
  const AnalysisResult r = result_of(lines);
  const auto plots = draw_plots(r);
  const std::string& bode = plots[0].svg;
  const auto d = plotting::drawable(lines, MarginOptions{}.max_line_sigma);
  double most_db = -1e9, least_db = 1e9;
  for (std::size_t k = 0; k < d.f.size(); ++k) {
    if (!d.reliable[k]) continue;
    most_db = std::max(most_db, 20.0 * std::log10(std::abs(d.value[k])));
    least_db = std::min(least_db, 20.0 * std::log10(std::abs(d.value[k])));
  }
  const ValueAxis mag = value_axis(bode, kMagTop, kMagBottom);
  // The wild lines (+80 dB, -240 dB) would set the axis; the trusted ones reach 34 dB and -84 dB.
  CHECK(mag.high >= most_db);
  CHECK(mag.high < 60.0);
  CHECK(mag.low <= least_db);
  CHECK(mag.low > -150.0);
  // Every trusted line of the solid curve lies inside the magnitude pane.
  const auto solid_mag = drawn(bode, plotting::kCurve, "1.6", kMagTop, kMagBottom);
  REQUIRE(!solid_mag.empty());
  for (const auto& run : solid_mag) {
    for (const auto& p : run) CHECK((p.y >= kMagTop - kPixel && p.y <= kMagBottom + kPixel));
  }
  // The phase of the trusted lines runs from -91 to -263 deg: its axis reaches no further than a tick step past.
  const ValueAxis phase = value_axis(bode, kPhaseTop, kPhaseBottom);
  CHECK(phase.high <= -90.0 + 45.0);
  CHECK(phase.low >= -270.0 - 45.0);
  // The other plots that scale to the lines: |S| and the whole-band view.
  const ValueAxis s = value_axis(plots[4].svg, 44.0, 264.0);
  CHECK(s.low > -60.0);  // |S| of the trusted lines goes down to -34 dB; of the wild ones to -80 dB
  // The trusted lines reach |L| = 50: the grey circles go to 10, not to the wild lines' 1e4.
  CHECK(plots[2].svg.find("|L| = 100<") == std::string::npos);
  CHECK(plots[2].svg.find("|L| = 10<") != std::string::npos);
}

TEST_CASE("a few strong trusted lines stay in the magnitude frame", "[report]") {
  // The two lowest lines lifted by 40 dB: less than half a per cent of the
  // lines, but trusted, so the axis must hold them.
  auto lines = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 100);
  for (auto& s : lines.relative_sigma) s = kQuiet;
  lines.value[0] *= 100.0;
  lines.value[1] *= 100.0;
  const std::string bode = draw_plots(result_of(lines))[0].svg;
  const ValueAxis mag = value_axis(bode, kMagTop, kMagBottom);
  CHECK(mag.high >= 20.0 * std::log10(std::abs(lines.value[0])));
  for (const auto& run : drawn(bode, plotting::kCurve, "1.6", kMagTop, kMagBottom)) {
    for (const auto& p : run) CHECK(p.y >= kMagTop - kPixel);
  }
}

TEST_CASE("the phase branch is continuous and noisy lines sit by the trusted curve", "[report]") {
  const Response lines = noisy_ends();
  const auto d = plotting::drawable(lines, MarginOptions{}.max_line_sigma);
  REQUIRE(!d.reliable.front());
  REQUIRE(d.reliable[1]);
  const auto phase = plotting::unwrapped_phase_deg(d);
  // Each line, noisy or not, within half a turn of the trusted line before it (or the first one, before any).
  std::optional<double> last_trusted;
  const std::size_t first_trusted = 1;
  for (std::size_t k = 0; k < phase.size(); ++k) {
    const double reference = last_trusted ? *last_trusted : phase[first_trusted];
    INFO("line " << k << " at " << d.f[k] << " Hz");
    CHECK(std::abs(phase[k] - reference) <= 180.0);
    if (d.reliable[k]) last_trusted = phase[k];
  }
  // As drawn: no polyline in the phase pane jumps by half a turn between
  // neighbouring points, and each faint dot lies within half a turn of the solid curve.
  const std::string bode = draw_plots(result_of(lines))[0].svg;
  const ValueAxis axis = value_axis(bode, kPhaseTop, kPhaseBottom);
  const double half_turn_px = 180.0 * axis.px_per_unit();
  std::vector<svg::Point> solid;
  for (const auto& p : elements(bode, "path")) {
    if (p.get("stroke") != plotting::kCurve || p.get("d").find('L') == std::string::npos) continue;
    for (const auto& run : subpaths(p.get("d"))) {
      if (run.front().y < kPhaseTop - kPixel || run.front().y > kPhaseBottom + kPixel) continue;
      for (std::size_t k = 1; k < run.size(); ++k) CHECK(std::abs(run[k].y - run[k - 1].y) < half_turn_px);
      if (p.get("stroke-width") == "1.6") solid.insert(solid.end(), run.begin(), run.end());
    }
  }
  REQUIRE(!solid.empty());
  // The dots of the magnitude pane, then of the phase pane.
  std::vector<Element> dot_paths;
  for (const auto& p : elements(bode, "path")) {
    if (p.get("stroke") == plotting::kCurve && p.get("stroke-width") == "1.8") dot_paths.push_back(p);
  }
  REQUIRE(dot_paths.size() == 2);
  const auto dots = subpaths(dot_paths[1].get("d"));
  // A dot for each noisy line inside the pane, up to those that share a
  // pixel (the top lines are 0.4 px apart); none for one outside it, which
  // the clip would hide.
  std::vector<double> drawn_phase = phase;
  plotting::place_phase_branch(drawn_phase, d, result_of(lines).margins);
  std::size_t inside = 0;
  for (std::size_t k = 0; k < d.f.size(); ++k) {
    inside += !d.reliable[k] && axis.low <= drawn_phase[k] && drawn_phase[k] <= axis.high;
  }
  INFO(inside << " noisy lines inside the phase pane");
  CHECK(dots.size() <= inside);
  CHECK(dots.size() >= inside * 9 / 10);
  for (const auto& dot : dots) {
    const auto nearest = std::min_element(solid.begin(), solid.end(), [&](const svg::Point& a, const svg::Point& b) {
      return std::abs(a.x - dot.front().x) < std::abs(b.x - dot.front().x);
    });
    CHECK(std::abs(dot.front().y - nearest->y) <= half_turn_px + kPixel);
  }
}

TEST_CASE("the ids of the plots are unique in a page and each reference finds its own plot's id", "[report]") {
  auto lines = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 100);
  AnalysisResult r = result_of(lines);
  r.loop.convention = Convention::kSeriesInjection;  // all six plots
  const auto plots = draw_plots(r);
  REQUIRE(plots.size() == 6);
  const auto ids_in = [](const std::string& text) {
    std::vector<std::string> ids;
    for (auto at = text.find(" id=\""); at != std::string::npos; at = text.find(" id=\"", at + 1)) {
      ids.push_back(text.substr(at + 5, text.find('"', at + 5) - at - 5));
    }
    return ids;
  };
  for (const auto& p : plots) {
    INFO(p.name);
    const auto ids = ids_in(p.svg);
    const std::set<std::string> own(ids.begin(), ids.end());
    for (auto at = p.svg.find("url(#"); at != std::string::npos; at = p.svg.find("url(#", at + 1)) {
      CHECK(own.count(p.svg.substr(at + 5, p.svg.find(')', at) - at - 5)) == 1);
    }
  }
  const auto page_ids = ids_in(html_report(r, plots, {}));
  std::map<std::string, int> seen;
  for (const auto& id : page_ids) ++seen[id];
  for (const auto& [id, n] : seen) {
    INFO(id);
    CHECK(n == 1);
  }
  CHECK(page_ids.size() > 6 * 2);  // the figures' ids and each plot's clip paths
}

TEST_CASE("plots of 131072 lines stay within their size limit whatever the noise", "[report]") {
  // All noisy, and a random mixture (most crossings there are noise, each
  // with its marks): the faint dots, the runs of the solid curve and the
  // marks must be bounded by the plots' pixels, not by the line count.
  for (const double noisy_share : {1.0, 0.5}) {
    AnalysisResult r = result_of(dense_lines(noisy_share));
    r.loop.convention = Convention::kSeriesInjection;  // all six plots
    const auto plots = draw_plots(r);
    REQUIRE(plots.size() == 6);
    for (const auto& p : plots) {
      INFO(p.name << " with " << noisy_share << " of the lines noisy: " << p.svg.size() << " bytes");
      CHECK(p.svg.size() < kMostPlotBytes);
    }
  }
}

TEST_CASE("plots of 131072 lines keep the resonance peak and the crossover", "[report]") {
  const Response lines = dense_lines(0.0);
  const AnalysisResult r = result_of(lines);
  REQUIRE(r.margins.gain_crossovers.size() == 1);
  const auto plots = draw_plots(r);
  const std::string& bode = plots[0].svg;
  CHECK(bode.size() < kMostPlotBytes);
  const ValueAxis mag = value_axis(bode, kMagTop, kMagBottom);
  const auto solid = drawn(bode, plotting::kCurve, "1.6", kMagTop, kMagBottom);
  const svg::Scale fx = plotting::frequency_scale(lines.frequency_hz);
  // The peak's pixel column holds the peak's own height (to the 0.1 px the file writes).
  double peak_db = -1e9;
  for (std::size_t k = 0; k < lines.size(); ++k) {
    if (std::abs(lines.frequency_hz[k] / kResonanceHz - 1.0) < 0.05) {
      peak_db = std::max(peak_db, 20.0 * std::log10(std::abs(lines.value[k])));
    }
  }
  const double peak_x = fx(kResonanceHz);
  double top_y = 1e9;
  for (const auto& run : solid) {
    for (const auto& p : run) {
      if (std::abs(p.x - peak_x) <= 2.0) top_y = std::min(top_y, p.y);
    }
  }
  CHECK(mag.value(top_y) == Approx(peak_db).margin(0.15 / mag.px_per_unit()));
  // The curve meets 0 dB at the gain crossover, on the Bode plot and on the unit circle.
  const auto& crossover = r.margins.gain_crossovers.front();
  CHECK(distance_to(solid, {fx(crossover.frequency_hz.value), mag.px(0.0)}) < kPixel);
  const std::string& near = plots[1].svg;
  std::vector<std::vector<svg::Point>> plane;
  for (const auto& p : elements(near, "path")) {
    if (p.get("stroke") != plotting::kCurve || p.get("stroke-width") != "1.6") continue;
    for (auto& run : subpaths(p.get("d"))) plane.push_back(run);
  }
  // The phase-margin mark: the hollow circle on the unit circle.
  std::vector<svg::Point> pm_marks;
  for (const auto& c : elements(near, "circle")) {
    if (c.get("stroke") == plotting::kMarker && c.get("fill") == "#ffffff") {
      pm_marks.push_back({c.number("cx"), c.number("cy")});
    }
  }
  REQUIRE(pm_marks.size() == 1);
  CHECK(distance_to(plane, pm_marks.front()) < kPixel);
}
