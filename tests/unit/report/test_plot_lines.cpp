// The lines the plots draw: which are trusted, where the axes go, the phase
// branch, and the ids that let several plots share one page.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <complex>
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
  CHECK(dots.size() > 50);  // the first line and most of the top 60 (some share a pixel)
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
