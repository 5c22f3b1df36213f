// The report's pieces: the settings hash, the axis ticks, the thinning of
// curves, and plots of awkward responses.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numbers>
#include <string>
#include <vector>

#include "analysis/known_loops.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/report/html_report.hpp"
#include "loopaudit/report/plots.hpp"
#include "report/sha256.hpp"
#include "report/svg.hpp"
#include "report/tag_placement.hpp"
#include "report/svg_reading.hpp"
#include "report/table_result.hpp"

using namespace loopaudit;
using loopaudit::table_result::result_of;
using svg_reading::Element;
using svg_reading::elements;
using svg_reading::texts_of;

namespace {

std::size_t count(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (auto at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
  return n;
}

// The points Canvas::path draws: those in runs of two or more.
std::size_t drawn_points(const std::vector<svg::Point>& points) {
  std::size_t n = 0, run = 0;
  for (const auto& p : points) {
    if (std::isfinite(p.x) && std::isfinite(p.y)) {
      ++run;
      continue;
    }
    n += run >= 2 ? run : 0;
    run = 0;
  }
  return n + (run >= 2 ? run : 0);
}

// A text's box, from its size and length: DejaVu Sans averages under 0.62
// em a character (its digits are 0.636 em; bold adds a little), ascent 0.78 em.
struct Box {
  double left, top, right, bottom;
  bool overlaps(const Box& o) const { return left < o.right && o.left < right && top < o.bottom && o.top < bottom; }
};

Box text_box(const Element& t) {
  const double size = t.number("font-size");
  std::size_t characters = 0;
  for (unsigned char c : t.content) characters += (c & 0xC0) != 0x80;  // UTF-8 lead bytes
  const double width = (t.get("font-weight") == "bold" ? 0.66 : 0.62) * size * static_cast<double>(characters);
  const std::string anchor = t.get("text-anchor");
  const double left = t.number("x") - (anchor == "middle" ? width / 2.0 : anchor == "end" ? width : 0.0);
  return {left, t.number("y") - 0.78 * size, left + width, t.number("y") + 0.22 * size};
}

// Every pair of unrotated texts whose boxes overlap, as "a / b".
std::vector<std::string> overlapping_texts(const std::string& svg) {
  std::vector<Element> texts;
  for (const auto& t : elements(svg, "text")) {
    if (t.get("transform").empty()) texts.push_back(t);
  }
  std::vector<std::string> out;
  for (std::size_t i = 0; i < texts.size(); ++i) {
    for (std::size_t j = i + 1; j < texts.size(); ++j) {
      if (text_box(texts[i]).overlaps(text_box(texts[j]))) out.push_back(texts[i].content + " / " + texts[j].content);
    }
  }
  return out;
}

// A mark or tag: a circle, or a square rect, with its centre and half size.
struct Shape {
  bool round;
  double x, y, half;
  std::string fill;
};

std::vector<Shape> shapes(const std::string& svg, const std::string& colour) {
  std::vector<Shape> out;
  for (const auto& c : elements(svg, "circle")) {
    if (c.get("stroke") == colour) out.push_back({true, c.number("cx"), c.number("cy"), c.number("r"), c.get("fill")});
  }
  for (const auto& r : elements(svg, "rect")) {
    if (r.get("stroke") != colour || r.number("width") != r.number("height")) continue;
    const double half = r.number("width") / 2.0;
    out.push_back({false, r.number("x") + half, r.number("y") + half, half, r.get("fill")});
  }
  return out;
}

// A linear map from two labelled ticks (their labels sit 4 px below a
// value-axis tick, 17 px below the panes for the frequency axis).
struct TickAxis {
  double value_a, px_a, value_b, px_b;
  double operator()(double v) const { return px_a + (v - value_a) / (value_b - value_a) * (px_b - px_a); }
};

// Three gain crossovers and two phase crossovers: the three-crossover loop of
// REFERENCES section 5 (known::table()[7]) behind a lag of our own,
// 2 (s/0.2 + 1)/(s/0.1 + 1), which adds a phase crossover below the first
// gain crossover. A sigma of 0.006 (about 0.05 dB) gives every value an interval.
Response five_crossovers(double sigma = 0.006) {
  const auto base = known::table()[7].loop;
  const auto loop = [&](double f) {
    const auto s = known::s_of(f);
    return base(f) * 2.0 * (s / 0.2 + 1.0) / (s / 0.1 + 1.0);
  };
  auto lines = known::sample(loop, known::hz(0.05), known::hz(50.0), 300);
  for (auto& v : lines.relative_sigma) v = sigma;
  return lines;
}

// A magnitude rippling around 0 dB and a phase around -180 deg: more gain and
// phase crossovers than the plot tags.
Response many_crossovers() {
  Response r;
  for (int k = 0; k <= 1500; ++k) {
    const double f = std::pow(10.0, 3.0 * k / 1500.0);
    const double decades = std::log10(f);
    const double mag_db = 3.0 * std::sin(2.0 * std::numbers::pi * 2.2 * decades) - 3.0 * std::log10(f / 30.0);
    const double phase_deg = -185.0 + 25.0 * std::sin(2.0 * std::numbers::pi * 1.7 * decades + 0.5);
    r.frequency_hz.push_back(f);
    r.value.push_back(std::polar(std::pow(10.0, mag_db / 20.0), phase_deg * std::numbers::pi / 180.0));
    r.relative_sigma.push_back(0.002);
  }
  return r;
}

const std::string kMarkerColour = "#b8440f";  // the marks' colour in src/report/plots.cpp
constexpr double kPanesBottom = 530.0;        // the phase pane's lower edge on the Bode plot
constexpr double kTableTop = 575.0;           // below the frequency axis and its title
constexpr double kPixel = 1.0;                // coordinates are written to 0.1 px; marks sit on exact values

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
  CHECK_THAT(bode, Catch::Contains("phase margin 53.4°"));
  CHECK_THAT(bode, Catch::Contains("gain margin +15.6 dB"));
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
  const auto huge_notes = draw_plots(result_of(huge))[0].notes;
  REQUIRE_FALSE(huge_notes.empty());
  CHECK_THAT(huge_notes.front(), Catch::Contains("clipped"));
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
  CHECK(drawn_points(thin) <= 3000);
  std::vector<svg::Point> smooth;
  for (int i = 0; i < 50000; ++i) smooth.push_back({i * 0.01, 100.0 * std::sin(i * 1e-4)});
  const auto thin_smooth = svg::thin_path(smooth, 0.75, 3000);
  CHECK(thin_smooth.size() <= 3000);
  CHECK(thin_smooth.front().x == smooth.front().x);
  CHECK(thin_smooth.back().x == smooth.back().x);
}

TEST_CASE("complex-plane thinning keeps the longest runs when short ones are too many and hands back the rest",
          "[report]") {
  // 20000 runs of three points 0.9 px apart (a trusted line among noisy ones,
  // over and over) and one long run: the runs' ends alone are over the budget.
  std::vector<svg::Point> runs;
  for (int r = 0; r < 20000; ++r) {
    for (int i = 0; i < 3; ++i) runs.push_back({10.0 + (r % 400) + 0.9 * i, 10.0 + (r / 400) * 4.0});
    runs.push_back({NAN, NAN});
  }
  for (int i = 0; i < 400; ++i) runs.push_back({i * 1.0, 300.0 + 50.0 * std::sin(i * 0.05)});
  std::vector<svg::Point> left_out;
  const auto thin = svg::thin_path(runs, 0.75, 3000, &left_out);
  CHECK(drawn_points(thin) <= 3000);
  // The long run is drawn, end to end; every run not drawn is handed back whole.
  CHECK(std::any_of(thin.begin(), thin.end(), [](const svg::Point& p) { return p.y > 299.0 && p.x == 0.0; }));
  CHECK(std::any_of(thin.begin(), thin.end(), [](const svg::Point& p) { return p.y > 200.0 && p.x == 399.0; }));
  std::size_t drawn_runs = 0;
  for (std::size_t k = 1; k < thin.size(); ++k) drawn_runs += std::isfinite(thin[k].x) && !std::isfinite(thin[k - 1].x);
  drawn_runs += std::isfinite(thin.front().x);
  CHECK(left_out.size() == 3 * (20001 - drawn_runs));
}

TEST_CASE("faint dots stay one a pixel and at most their budget in a dense cloud", "[report]") {
  // A cloud of 200000 points over a 640 x 230 px pane: one a pixel would be
  // 147200 dots; the cells widen until at most kMostDots remain.
  std::vector<svg::Point> cloud;
  for (int i = 0; i < 200000; ++i) {
    cloud.push_back({78.0 + std::fmod(i * 0.6180339887, 640.0), 44.0 + std::fmod(i * 0.7548776662, 230.0)});
  }
  svg::Canvas dense(760.0, 330.0, "cloud", "cloud");
  dense.dots(cloud, {"#0b5d7a", 1.8, "", 0.3});
  const auto dense_dots = count(dense.finish(), "h0");
  CHECK(dense_dots <= svg::kMostDots);
  CHECK(dense_dots > svg::kMostDots / 3);  // the cell widens by 1.5 at a time, so the cloud keeps a fair share
  // Few points: one a pixel, as before (two points in one pixel give one dot).
  svg::Canvas sparse(760.0, 330.0, "few", "few");
  sparse.dots({{100.2, 50.2}, {100.4, 50.3}, {120.0, 50.0}, {NAN, 1.0}}, {"#0b5d7a", 1.8, "", 0.3});
  CHECK(count(sparse.finish(), "h0") == 2);
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
  // Margins are marked on L only: no table, no tags, no marks' key.
  CHECK(plots[5].svg.find("phase margin") == std::string::npos);
  CHECK(plots[5].svg.find("gain margin") == std::string::npos);
  CHECK(plots[5].svg.find("tagged") == std::string::npos);
  CHECK(shapes(plots[5].svg, kMarkerColour).empty());
  CHECK(measured_ratio(r.loop).value[10] == -lines.value[10]);
}

TEST_CASE("every crossover of a loop with several gets its own marks and tags and table row", "[report]") {
  const AnalysisResult r = result_of(five_crossovers());
  const auto& m = r.margins;
  REQUIRE(m.gain_crossovers.size() == 3);
  REQUIRE(m.phase_crossovers.size() == 2);
  const std::string bode = draw_plots(r)[0].svg;
  // The scales, read back from the tick labels.
  const auto label = [&](const std::string& text, double low_y, double high_y) {
    for (const auto& t : texts_of(bode, text)) {
      if (t.number("y") > low_y && t.number("y") < high_y) return t;
    }
    FAIL("no tick label " << text);
    return Element{};
  };
  const double axis_y = kPanesBottom + 17.0;
  const TickAxis fx{-1.0, label("100 mHz", axis_y - 1, axis_y + 1).number("x"), 0.0,
                    label("1 Hz", axis_y - 1, axis_y + 1).number("x")};
  const TickAxis mag_y{0.0, label("0", 40, 280).number("y") - 4.0, 50.0, label("50", 40, 280).number("y") - 4.0};
  const TickAxis phase_y{-180.0, label("-180", 290, 540).number("y") - 4.0, -90.0,
                         label("-90", 290, 540).number("y") - 4.0};
  const auto marks = shapes(bode, kMarkerColour);
  const auto lines = elements(bode, "line");
  // The mark a tag's leader runs to, from the tag's text.
  const auto led_to = [&](const Element& id) -> std::optional<Shape> {
    const double tx = id.number("x"), ty = id.number("y") - 3.8;
    for (const auto& l : lines) {
      if (l.get("stroke") != kMarkerColour) continue;
      const double x1 = l.number("x1"), y1 = l.number("y1"), x2 = l.number("x2"), y2 = l.number("y2");
      if (std::hypot(x2 - tx, y2 - ty) > 8.0 * std::sqrt(2.0) + kPixel) continue;
      for (const auto& s : marks) {
        if (s.half < 4.0 && std::hypot(s.x - x1, s.y - y1) < kPixel) return s;
      }
    }
    return std::nullopt;
  };
  struct Expected {
    std::string id;
    bool round;
    double frequency_hz;
    double crossing_y, reading_y;
    std::string margin, interval, frequency_interval;
  };
  std::vector<Expected> expected;
  const auto hz_interval = [](const std::optional<Interval>& i) {
    return format_frequency(i->low) + " to " + format_frequency(i->high);
  };
  for (std::size_t k = 0; k < 3; ++k) {
    const auto& c = m.gain_crossovers[k];
    REQUIRE(c.phase_margin_deg.interval);
    expected.push_back({std::to_string(k + 1), true, c.frequency_hz.value, mag_y(0.0), phase_y(-180.0 + c.phase_margin_deg.value),
                        "phase margin " + format_fixed(c.phase_margin_deg.value, 1) + "°",
                        format_fixed(c.phase_margin_deg.interval->low, 1) + "° to " +
                            format_fixed(c.phase_margin_deg.interval->high, 1) + "°",
                        hz_interval(c.frequency_hz.interval)});
  }
  for (std::size_t k = 0; k < 2; ++k) {
    const auto& c = m.phase_crossovers[k];
    REQUIRE(c.gain_margin_db.interval);
    expected.push_back({std::string(1, static_cast<char>('A' + k)), false, c.frequency_hz.value, phase_y(-180.0),
                        mag_y(-c.gain_margin_db.value), "gain margin " + format_signed(c.gain_margin_db.value, 1) + " dB",
                        format_signed(c.gain_margin_db.interval->low, 1) + " dB to " +
                            format_signed(c.gain_margin_db.interval->high, 1) + " dB",
                        hz_interval(c.frequency_hz.interval)});
  }
  for (const auto& e : expected) {
    INFO("crossover " << e.id << " at " << e.frequency_hz << " Hz");
    std::vector<Element> tags, rows;
    for (const auto& t : texts_of(bode, e.id)) {
      if (t.number("y") < kPanesBottom) tags.push_back(t);
      if (t.number("y") > kTableTop) rows.push_back(t);
    }
    // Two tags on the panes, each led to its own mark: hollow where the curve
    // meets its reference, filled where the margin is read, both at its frequency.
    REQUIRE(tags.size() == 2);
    std::vector<Shape> reached;
    for (const auto& t : tags) {
      const auto mark = led_to(t);
      REQUIRE(mark);
      CHECK(mark->round == e.round);
      CHECK(mark->x == Approx(fx(std::log10(e.frequency_hz))).margin(kPixel));
      reached.push_back(*mark);
    }
    const auto& hollow = reached[0].fill == "#ffffff" ? reached[0] : reached[1];
    const auto& filled = reached[0].fill == "#ffffff" ? reached[1] : reached[0];
    CHECK(hollow.fill == "#ffffff");
    CHECK(filled.fill == kMarkerColour);
    CHECK(hollow.y == Approx(e.crossing_y).margin(kPixel));
    CHECK(filled.y == Approx(e.reading_y).margin(kPixel));
    // One table row with its frequency, margin and both intervals.
    REQUIRE(rows.size() == 1);
    const double row_y = rows[0].number("y");
    std::map<double, std::string> by_x;
    for (const auto& t : elements(bode, "text")) {
      if (std::abs(t.number("y") - row_y) < kPixel && t.content != e.id) by_x[t.number("x")] = t.content;
    }
    std::vector<std::string> row;
    for (const auto& [x, text] : by_x) row.push_back(text);
    const std::vector<std::string> wanted{format_frequency(e.frequency_hz), e.frequency_interval, e.margin, e.interval};
    CHECK(row == wanted);
  }
}

TEST_CASE("no text or tag on the Bode plot overlaps another", "[report]") {
  auto known_lines = known::sample(known::table()[0].loop, known::hz(0.01), known::hz(100.0), 2000);
  for (const Response& lines : {known_lines, five_crossovers(), five_crossovers(0.0), many_crossovers()}) {
    const std::string bode = draw_plots(result_of(lines))[0].svg;
    CHECK(overlapping_texts(bode) == std::vector<std::string>{});
    std::vector<Shape> tags;
    for (const auto& s : shapes(bode, kMarkerColour)) {
      if (s.half == 8.0) tags.push_back(s);
    }
    CHECK(!tags.empty());
    for (std::size_t i = 0; i < tags.size(); ++i) {
      for (std::size_t j = i + 1; j < tags.size(); ++j) {
        INFO("tags at " << tags[i].x << "," << tags[i].y << " and " << tags[j].x << "," << tags[j].y);
        CHECK(std::max(std::abs(tags[i].x - tags[j].x), std::abs(tags[i].y - tags[j].y)) >= 16.0);
      }
    }
  }
}

TEST_CASE("the Bode table says when there are no intervals and the notes when tags run out", "[report]") {
  const std::string exact = draw_plots(result_of(five_crossovers(0.0)))[0].svg;
  CHECK_THAT(exact, Catch::Contains("no intervals: the lines carry no uncertainty"));
  CHECK(exact.find(" to ") == std::string::npos);
  const auto many = draw_plots(result_of(many_crossovers()))[0];
  const Margins m = find_margins(many_crossovers());
  REQUIRE(m.gain_crossovers.size() == 9);
  REQUIRE(m.phase_crossovers.size() == 10);
  CHECK(texts_of(many.svg, "9").size() == 3);  // the ninth gain crossover's two tags and its row
  CHECK(texts_of(many.svg, "I").size() == 3);  // and the ninth phase crossover's
  CHECK(texts_of(many.svg, "J").empty());      // the tenth is not tagged
  REQUIRE_FALSE(many.notes.empty());
  CHECK_THAT(many.notes.front(), Catch::Contains("Only the first 9 of 10 phase crossovers are marked"));
}

TEST_CASE("tags placed around a cluster of marks keep clear of each other and of the curve", "[report]") {
  // Four marks 4 px apart on a steep line: the tags must spread out.
  plotting::TagPlacer placer(400.0, 300.0);
  std::vector<svg::Point> curve;
  for (int i = 0; i <= 100; ++i) curve.push_back({100.0 + 2.0 * i, 50.0 + 2.0 * i});
  placer.block_path(curve);
  std::vector<svg::Point> anchors;
  for (int i = 0; i < 4; ++i) anchors.push_back({180.0 + 4.0 * i, 130.0 + 4.0 * i});
  for (const auto& a : anchors) placer.block(plotting::Box::around(a, 4.0));
  const plotting::Box area{10.0, 10.0, 390.0, 290.0};
  std::vector<plotting::Box> tags;
  for (const auto& a : anchors) tags.push_back(plotting::Box::around(placer.place(a, 8.0, area), 8.0));
  for (std::size_t i = 0; i < tags.size(); ++i) {
    CHECK(area.holds(tags[i]));
    for (const auto& a : anchors) CHECK(!tags[i].overlaps(plotting::Box::around(a, 4.0)));
    for (const auto& p : curve) CHECK(!tags[i].grown(1.0).holds(p));
    for (std::size_t j = i + 1; j < tags.size(); ++j) CHECK(!tags[i].overlaps(tags[j]));
  }
}
