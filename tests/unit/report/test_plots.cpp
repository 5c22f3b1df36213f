// The report's pieces: the settings hash, the axis ticks, the thinning of
// curves, and plots of awkward responses.
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>

#include "analysis/known_loops.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/report/html_report.hpp"
#include "loopaudit/report/plots.hpp"
#include "report/sha256.hpp"
#include "report/svg.hpp"

using namespace loopaudit;

namespace {

AnalysisResult result_of(const Response& lines) {
  AnalysisResult r;
  r.origin = "table.csv";
  r.options.convention = Convention::kDirect;
  r.loop = {lines, Convention::kDirect};
  r.margins = find_margins(lines);
  r.findings = r.margins.findings;
  return r;
}

std::size_t count(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (auto at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
  return n;
}

}  // namespace

TEST_CASE("SHA-256 matches the FIPS 180-2 examples", "[report]") {
  // FIPS PUB 180-2, appendix B.1 and B.2; the empty string from common practice.
  CHECK(detail::sha256_hex("abc") == "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  CHECK(detail::sha256_hex("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq") ==
        "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  CHECK(detail::sha256_hex("") == "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

TEST_CASE("log ticks fall on decades and their 2 and 5 subdivisions", "[report]") {
  const auto ticks = svg::log_ticks(30.0, 2000.0, [](double v) { return std::to_string(static_cast<int>(v)); }, true);
  std::vector<double> labelled;
  for (const auto& t : ticks) {
    if (!t.label.empty()) labelled.push_back(t.value);
  }
  CHECK(labelled == std::vector<double>{50.0, 100.0, 200.0, 500.0, 1000.0, 2000.0});
  CHECK(ticks.front().value == Approx(30.0));
  CHECK(ticks.back().value == Approx(2000.0));
  CHECK(ticks.size() == 7 + 9 + 2);  // 30..90, 100..900, 1000 and 2000
}

TEST_CASE("thinning keeps each pixel column's first, lowest, highest and last point", "[report]") {
  std::vector<svg::Point> points;
  for (int i = 0; i < 1000; ++i) points.push_back({i / 100.0, std::sin(i * 0.37)});
  const auto thin = svg::thin(points);
  CHECK(thin.size() <= 4 * 10);
  double low = 0.0, high = 0.0;
  for (const auto& p : points) {
    low = std::min(low, p.y);
    high = std::max(high, p.y);
  }
  double thin_low = 0.0, thin_high = 0.0;
  for (const auto& p : thin) {
    thin_low = std::min(thin_low, p.y);
    thin_high = std::max(thin_high, p.y);
  }
  CHECK(thin_low == low);
  CHECK(thin_high == high);
  CHECK(thin.front().x == points.front().x);
  CHECK(thin.back().x == points.back().x);
}

TEST_CASE("plots of a known loop mark its margins and stay small", "[report]") {
  // 1/(s(s+1)(s+2)), data/reference/known_loops.csv: PM 53.41 deg, GM 15.56 dB (6x).
  auto lines = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 2000);
  const auto plots = draw_plots(result_of(lines));
  REQUIRE(plots.size() == 5);
  const std::string& bode = plots[0].svg;
  CHECK_THAT(bode, Catch::Contains("PM 53.4°"));
  CHECK_THAT(bode, Catch::Contains("GM +15.6 dB"));
  CHECK_THAT(plots[1].svg, Catch::Contains("PM 53.4°"));
  // 8000 lines drawn into 640 px: the drawing is thinned, the file stays small.
  CHECK(bode.size() < 200000);
  for (const auto& p : plots) {
    INFO(p.name);
    CHECK(p.svg.rfind("<svg xmlns=\"http://www.w3.org/2000/svg\"", 0) == 0);
    CHECK(p.svg.find("nan") == std::string::npos);
    CHECK(p.svg.find("inf") == std::string::npos);
  }
}

TEST_CASE("awkward responses still draw and say what is missing", "[report]") {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  Response single;
  single.frequency_hz = {100.0};
  single.value = {{0.5, -0.2}};
  single.relative_sigma = {0.0};
  Response with_nan = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 50);
  with_nan.value[40] = {nan, nan};
  Response huge;
  for (int k = 0; k <= 300; ++k) {
    const double f = std::pow(10.0, k / 50.0);
    const auto s = known::s_of(f);
    huge.frequency_hz.push_back(f);
    huge.value.push_back(1e12 / (s * std::pow(s / 1e5 + 1.0, 3)));
    huge.relative_sigma.push_back(0.0);
  }
  Response empty;
  for (const Response* r : {&single, &with_nan, &huge, &empty}) {
    AnalysisResult result;
    result.origin = "awkward.csv";
    result.loop = {*r, Convention::kDirect};
    result.margins = r == &with_nan ? Margins{} : find_margins(*r);
    const auto plots = draw_plots(result);
    REQUIRE(plots.size() == 5);
    for (const auto& p : plots) {
      INFO(p.name);
      CHECK(p.svg.find("nan") == std::string::npos);
      CHECK(p.svg.find("inf") == std::string::npos);
    }
    const std::string html = html_report(result, plots, {});
    CHECK(count(html, "<figure") == 5);
    CHECK(count(html, "</svg>") == 5);
  }
  CHECK_THAT(draw_plots(result_of(huge))[0].notes.front(), Catch::Contains("clipped"));
  AnalysisResult nan_result;
  nan_result.loop = {with_nan, Convention::kDirect};
  CHECK_THAT(draw_plots(nan_result)[0].notes.back(), Catch::Contains("1 lines are not finite"));
  AnalysisResult empty_result;
  CHECK_THAT(draw_plots(empty_result)[0].svg, Catch::Contains("no finite lines to draw"));
}

TEST_CASE("complex-plane thinning keeps within its point budget even between many breaks", "[report]") {
  // A noisy scribble in a 20 px square, broken every 50th point: the breaks and
  // the ends of runs always stay, so the budget is 3000 plus three a run, and
  // the widening of the spacing must stop rather than loop for ever.
  std::vector<svg::Point> scribble;
  for (int i = 0; i < 50000; ++i) {
    scribble.push_back(i % 50 == 49 ? svg::Point{NAN, NAN}
                                    : svg::Point{10.0 + 10.0 * std::sin(i * 1.7), 10.0 + 10.0 * std::cos(i * 2.3)});
  }
  const auto thin = svg::thin_path(scribble, 0.75, 3000);
  CHECK(thin.size() <= 3000 + 3 * 1000);
  std::vector<svg::Point> smooth;
  for (int i = 0; i < 50000; ++i) smooth.push_back({i * 0.01, 100.0 * std::sin(i * 1e-4)});
  const auto thin_smooth = svg::thin_path(smooth, 0.75, 3000);
  CHECK(thin_smooth.size() <= 3000);
  CHECK(thin_smooth.front().x == smooth.front().x);
  CHECK(thin_smooth.back().x == smooth.back().x);
}

TEST_CASE("a series-injection result also shows the ratio as measured and labels it", "[report]") {
  // Y/X = -L across a series injection point (DESIGN.md sign conventions):
  // the measured view has its phase reference at 0 deg, not -180 deg.
  auto lines = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 100);
  AnalysisResult r = result_of(lines);
  r.loop.convention = Convention::kSeriesInjection;
  const auto plots = draw_plots(r);
  REQUIRE(plots.size() == 6);
  CHECK(plots[5].name == "bode-measured");
  CHECK_THAT(plots[5].svg, Catch::Contains("Measured ratio Y/X (not L)"));
  CHECK_THAT(plots[5].svg, Catch::Contains("0 dB and 0° (mod 360°)"));
  CHECK_THAT(plots[0].svg, Catch::Contains("0 dB and -180° (mod 360°)"));
  CHECK(plots[5].svg.find("PM ") == std::string::npos);  // margins are marked on L only
  CHECK(measured_ratio(r.loop).value[10] == -lines.value[10]);
}
