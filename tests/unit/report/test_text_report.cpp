#include <catch2/catch.hpp>
#include <cmath>
#include <sstream>
#include <string>

#include "analysis/known_loops.hpp"
#include "loopaudit/report/text_report.hpp"

using namespace loopaudit;

namespace {

Estimate with_interval(double value, double low, double high) { return {value, Interval{low, high}}; }

// A result with `gains` gain and `phases` phase crossovers, 1 kHz apart from
// 1 kHz up; the smallest phase and delay margins, which the summary takes, at
// the gain crossover `worst`.
AnalysisResult many_crossovers(std::size_t gains, std::size_t phases, std::size_t worst) {
  AnalysisResult r;
  r.origin = "bench.csv";
  r.margins.band_low_hz = 100.0;
  r.margins.band_high_hz = 1e6;
  r.margins.line_count = 2000;
  for (std::size_t i = 0; i < gains; ++i) {
    const double f = 1000.0 * static_cast<double>(i + 1);
    const double pm = i == worst ? 20.0 : 60.0;
    r.margins.gain_crossovers.push_back({with_interval(f, f - 300.0, f + 300.0), with_interval(pm, pm - 2.0, pm + 2.0),
                                         with_interval(pm / 360.0 / f, 0.9 * pm / 360.0 / f, 1.1 * pm / 360.0 / f)});
  }
  if (worst < gains) {
    const GainCrossover& w = r.margins.gain_crossovers[worst];
    r.margins.summary.gain_crossover_hz = w.frequency_hz;
    r.margins.summary.phase_margin_deg = w.phase_margin_deg;
    r.margins.summary.delay_margin_s = w.delay_margin_s;
  }
  for (std::size_t i = 0; i < phases; ++i) {
    const double f = 1500.0 + 1000.0 * static_cast<double>(i);
    r.margins.phase_crossovers.push_back({with_interval(f, f - 300.0, f + 300.0), with_interval(10.0, 9.0, 11.0)});
  }
  return r;
}

std::string text_of(const AnalysisResult& r, const FullLists& lists = {},
                    const std::optional<MarginSummary>& truth = std::nullopt) {
  std::ostringstream out;
  write_text_report(out, r, truth, "measured", lists);
  return out.str();
}

std::size_t count_of(const std::string& text, const std::string& part) {
  std::size_t n = 0;
  for (std::size_t at = text.find(part); at != std::string::npos; at = text.find(part, at + part.size())) ++n;
  return n;
}

}  // namespace

TEST_CASE("long crossover lists show their first entries and say where the rest are", "[report][text]") {
  const AnalysisResult r = many_crossovers(40, 300, 30);
  const std::string text = text_of(r, {"out/bench.json"});
  // The first kListedCrossovers and the one with the smallest phase margin.
  CHECK(count_of(text, " deg   delay margin ") == kListedCrossovers + 1);
  CHECK(count_of(text, "    limits gain ") == kListedCrossovers);
  CHECK_THAT(text, Catch::Contains("    31.0 kHz     phase margin    20.0 deg"));
  CHECK_THAT(text, Catch::Contains("    ... 22 more from 9 kHz to 30 kHz\n"));
  CHECK_THAT(text, Catch::Contains("    ... 9 more from 32 kHz to 40 kHz\n"));
  CHECK_THAT(text,
             Catch::Contains("9 of 40 gain crossovers shown; all are in out/bench.json under \"gain_crossovers\""));
  CHECK_THAT(text,
             Catch::Contains("8 of 300 phase crossovers shown; all are in out/bench.json under \"phase_crossovers\""));
  // Without a JSON file the option that writes one is named.
  CHECK_THAT(text_of(r), Catch::Contains("8 of 300 phase crossovers shown; --json FILE writes them all"));
}

TEST_CASE("short crossover lists are shown whole", "[report][text]") {
  const std::string text = text_of(many_crossovers(kListedCrossovers, 2, 0), {"out/bench.json"});
  CHECK(count_of(text, " deg   delay margin ") == kListedCrossovers);
  CHECK(count_of(text, " more from ") == 0);
  CHECK(count_of(text, " shown;") == 0);
}

TEST_CASE("long findings lists show errors and warnings first and count the rest by code", "[report][text]") {
  AnalysisResult r = many_crossovers(1, 1, 0);
  for (int i = 0; i < 20; ++i) r.findings.push_back(make_note("test.note", "note " + std::to_string(i)));
  for (int i = 0; i < 6; ++i) r.findings.push_back(make_warning("test.warning", "warning " + std::to_string(i)));
  r.findings.push_back(make_note("test.other", "other"));
  const std::string text = text_of(r, {"out/bench.json"});
  CHECK(count_of(text, "    warning [test.warning]") == 6);
  CHECK(count_of(text, "    note [test.note]") == kListedFindings - 6);
  CHECK_THAT(text, Catch::Contains("note [test.note] note 3\n"));
  CHECK_THAT(
      text,
      Catch::Contains("    ... 17 more (16 test.note, 1 test.other); all are in out/bench.json under \"diagnostics\""));
  // Where no file holds the findings, all of them are printed.
  const std::string whole = text_of(r, {"out/bench.truth.json", false});
  CHECK(count_of(whole, "    note [test.") == 21);
  CHECK(count_of(whole, " more (") == 0);
}

TEST_CASE("an interval in the table has one unit and the digits to place the truth", "[report][text]") {
  AnalysisResult r = many_crossovers(1, 1, 0);
  r.margins.gain_crossovers[0].delay_margin_s = with_interval(1.04e-3, 981e-6, 1.1e-3);
  MarginSummary& s = r.margins.summary;
  // The stepped demo's case: the truth lies just below an interval whose ends print as 149 Hz and 151 Hz.
  s.gain_crossover_hz = with_interval(149.9, 149.13, 150.77);
  s.delay_margin_s = with_interval(1.04e-3, 981e-6, 1.1e-3);
  MarginSummary truth;
  truth.gain_crossover_hz = Estimate{148.66, {}};
  truth.delay_margin_s = Estimate{1.09e-3, {}};
  const std::string text = text_of(r, {}, truth);
  CHECK_THAT(text, Catch::Contains("gain crossover     149.9 Hz        149.1 Hz to 150.8 Hz        148.7 Hz\n"));
  CHECK_THAT(text, Catch::Contains("delay margin       1.04 ms         0.98 ms to 1.10 ms          1.09 ms\n"));
  // The crossing's own line too.
  CHECK_THAT(text, Catch::Contains("delay margin 1.04 ms\n"));
  CHECK(count_of(text, "0.98 ms to 1.10 ms") == 2);
}

TEST_CASE("the disk margin reads as a symmetric gain change and its interval", "[report][text]") {
  AnalysisResult r = many_crossovers(1, 1, 0);
  DiskMargin d;
  d.alpha = with_interval(0.775, 0.757, 0.793);
  d.frequency_hz = 51e3;
  d.gain_low_db = -7.1;
  d.gain_high_db = with_interval(7.1, 6.9, 7.3);
  d.phase_deg = with_interval(42.3, 41.5, 43.3);
  r.margins.disk = d;
  const std::string text = text_of(r);
  CHECK_THAT(text, Catch::Contains("alpha 0.775: the loop tolerates a gain change of up to +-7.1 dB together with a "
                                   "phase change of up to +-42.3 deg (worst at 51 kHz)"));
  CHECK_THAT(text, Catch::Contains("95 %: alpha 0.757 to 0.793, gain change +-6.9 dB to +-7.3 dB, phase change "
                                   "+-41.5 deg to +-43.3 deg\n"));
  // alpha of 2 or more: any gain, and an unbounded end is not given a sign.
  d.alpha = with_interval(2.5, 1.5, 3.5);
  d.gain_low_db = -INFINITY;
  d.gain_high_db = with_interval(INFINITY, 16.9, INFINITY);
  r.margins.disk = d;
  const std::string wide = text_of(r);
  CHECK_THAT(wide, Catch::Contains("the loop tolerates any gain change together with"));
  CHECK_THAT(wide, Catch::Contains("gain change +-16.9 dB to unbounded"));
}

TEST_CASE("findings about one crossing speak of it in the singular", "[report][text]") {
  // Every line too noisy: the one gain and the one phase crossing of the
  // known loop are not placed, and the findings say so.
  const auto k = known::table()[0];
  Response lines = known::sample(k.loop, k.low_hz, k.high_hz, 200);
  for (double& s : lines.relative_sigma) s = 1.0;
  AnalysisResult r;
  r.origin = "table.csv";
  r.margins = find_margins(lines);
  r.findings = r.margins.findings;
  const std::string text = text_of(r);
  REQUIRE(count_of(text, "[margins.unresolved-crossings] 1 ") >= 1);
  CHECK(count_of(text, "1 gain crossing from") + count_of(text, "1 phase crossing from") ==
        count_of(text, " is not listed: the lines there are too noisy to place it "));
  CHECK(count_of(text, "1 gain crossing from") + count_of(text, "1 phase crossing from") >= 1);
  CHECK(count_of(text, " are not listed") == count_of(text, "crossings from"));
}
