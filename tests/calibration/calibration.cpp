// Calibration of the intervals: over many simulated recordings of loops whose
// response is known exactly, how far each reported value lies from the truth
// in units of its own standard error, z = (value - truth) / (half-width /
// 1.96). Honest intervals give z a mean near 0 and a scatter (standard
// deviation) near 1, and hold the truth about 95 % of the time; an interval
// can cover often enough and still be too wide, which only the scatter shows.
//
// Loops (the project's own designs, each held by a zero-order hold at 8 kHz;
// the truth is the exact response of that discrete loop, as synth computes it):
//   damped       1/(s(s+1)(s+2)) with its unit frequency at 200 Hz (a well-damped
//                loop: one gain and one phase crossover)
//   conditional  640 (1 + s/8)^2 / (s (1 + s)^2) with its unit at 40 Hz (the phase
//                dips 12 deg below -180 deg and comes back: two phase
//                crossovers, at 58 and 222 Hz, below the gain crossover)
//   resonant     an integrator at 100 Hz times a resonance at 300 Hz with Q = 2
//                (a lightly damped pole pair three times above crossover that
//                sets the gain margin and the modulus margin)
// each with noise, multisine and stepped-sine injection, sensor noise on x
// and y and a disturbance inside the loop that drifts slowly (red, with a
// 2 Hz corner). Every recording has its own seed.
//
//   calibration_check [--per-cell N] [--limits slow|ci|none] [--cells LOOP/EXCITATION,...] [--markdown yes]
//
// prints, per cell and quantity, the count, the mean and the scatter of z and
// the coverage, and for the lines themselves the rms of z (magnitude and
// phase) in the lower, middle and upper third of the band around the
// crossovers. --limits slow
// holds every cell to a scatter of 0.85 to 1.15, a mean under 0.25 in size
// and a coverage of 92 to 98 % (the criteria the project set itself for 200
// or more recordings a cell); --limits ci widens each limit by three of its
// own standard errors at N recordings (sqrt((kappa - 1)/N)/2 for the scatter,
// kappa the kurtosis of z, 1/sqrt(2N) when z is normal; 1/sqrt(N) for the
// mean, sqrt(0.95 * 0.05 / N) for the coverage). Exits 1 when a limit is
// missed. --limits none prints the same and fails only when a recording
// could not be analysed (the sanitizer build's run: too few recordings for
// statistics, enough to take every path of the analysis).
#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <map>
#include <mutex>
#include <numbers>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "loopaudit/error.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/synth/simulate.hpp"
#include "loopaudit/units.hpp"

using namespace loopaudit;

namespace {

constexpr double kSampleRateHz = 8000.0;
constexpr double kNominalZ = 1.959963984540054;  // two-sided 95 % normal quantile
constexpr double kMatchDecades = 0.05;           // a measured crossover this near the truth's is the same one

struct LoopDesign {
  const char* name;
  std::vector<Stage> stages;
  double sensor_rms = 0.02;           // on the recorded x and y
  std::size_t segment = 4096;         // Welch segment and multisine period, samples
  std::size_t stepped_points = 80;    // log-spaced from 40 Hz to 1.5 kHz, each held
  double dwell_s = 0.2;               // this long or kDwellCycles, whichever is longer
};

std::vector<LoopDesign> loops() {
  const auto rad = [](double hz) { return 2.0 * std::numbers::pi * hz; };
  const auto real = [](double hz) { return Factor{hz, std::nullopt}; };
  // 1/(s(s+1)(s+2)) = (1/2) / (s (1 + s)(1 + s/2)); with s -> s/a the gain is a/2.
  const double damped_unit = 200.0;
  const double conditional_unit = 40.0;
  const double conditional_zero = 8.0;
  return {
      {"damped", {{"damped", rad(damped_unit) / 2.0, 1, {}, {real(damped_unit), real(2.0 * damped_unit)},
                   Discretization::kZeroOrderHold}}},
      // |L| is 44 dB at the lower phase crossover, so x holds a 160th of the
      // injection there: quiet probes (as such a measurement needs).
      {"conditional",
       {{"conditional", 10.0 * conditional_zero * conditional_zero * rad(conditional_unit), 1,
         {real(conditional_zero * conditional_unit), real(conditional_zero * conditional_unit)},
         {real(conditional_unit), real(conditional_unit)}, Discretization::kZeroOrderHold}},
       0.0003},
      // The resonance is sharp against 2 Hz lines: with 4096-sample segments
      // the window's smoothing of the sensitivity alone reads the modulus
      // margin 0.2 % high, a third of its standard error at this noise; a
      // bench engineer resolves it with longer segments and a denser sweep.
      {"resonant", {{"resonant", rad(100.0), 1, {}, {Factor{300.0, 2.0}}, Discretization::kZeroOrderHold}}, 0.02,
       8192, 200},
  };
}

enum class Excitation { kNoise, kMultisine, kStepped };
const char* excitation_label(Excitation e) {
  return e == Excitation::kNoise ? "noise" : e == Excitation::kMultisine ? "multisine" : "stepped";
}

// A stepped sine holds each frequency for 30 cycles (or dwell_s), of which
// the analysis drops the first 8 as settling.
constexpr double kDwellCycles = 30.0;
constexpr double kSettleCycles = 8.0;

// Records of 16 whole segments (or periods, the first dropped) at 50 % overlap.
double record_s(const LoopDesign& loop) { return 16.0 * static_cast<double>(loop.segment) / kSampleRateHz; }

Scenario scenario(const LoopDesign& loop, Excitation excitation, std::uint64_t seed) {
  Scenario s;
  s.name = loop.name;
  s.sample_rate_hz = kSampleRateHz;
  s.seed = seed;
  s.stages = loop.stages;
  s.noise = {loop.sensor_rms, loop.sensor_rms, 0.2, 2.0};
  s.injection.rms = 1.0;
  switch (excitation) {
    case Excitation::kNoise:
      s.injection.kind = InjectionKind::kNoise;
      s.injection.high_hz = 2000.0;
      s.duration_s = record_s(loop);
      break;
    case Excitation::kMultisine:
      s.injection.kind = InjectionKind::kMultisine;
      s.injection.period_samples = loop.segment;
      s.injection.low_hz = 20.0;
      s.injection.high_hz = 1200.0;
      s.duration_s = record_s(loop);
      break;
    case Excitation::kStepped:
      s.injection.kind = InjectionKind::kStepped;
      s.injection.rms = 0.5;
      s.injection.low_hz = 40.0;
      s.injection.high_hz = 1500.0;
      s.injection.points = loop.stepped_points;
      s.injection.dwell_s = loop.dwell_s;
      s.injection.dwell_cycles = kDwellCycles;
      s.duration_s = 0.0;
      for (std::size_t i = 0; i < loop.stepped_points; ++i) {  // the sweep's log-spaced frequencies, as synth makes them
        const double f = 40.0 * std::pow(1500.0 / 40.0, static_cast<double>(i) / static_cast<double>(loop.stepped_points - 1));
        s.duration_s += std::max(loop.dwell_s, kDwellCycles / f);
      }
      break;
  }
  return s;
}

AnalysisOptions analysis_options(const LoopDesign& loop, Excitation excitation) {
  AnalysisOptions o;
  o.welch.segment_length = loop.segment;
  if (excitation == Excitation::kNoise) o.excitation = ExcitationKind::kBroadband;
  if (excitation == Excitation::kMultisine) {
    o.excitation = ExcitationKind::kPeriodic;
    o.period_samples = loop.segment;
  }
  if (excitation == Excitation::kStepped) o.excitation = ExcitationKind::kStepped;
  // The resonant loop's closed loop rings for a few cycles after each step:
  // with the default 3 cycles of settling its phase crossover came out a
  // standard error off; 8 cycles make the dwell's transient negligible.
  if (excitation == Excitation::kStepped) o.settle_cycles = kSettleCycles;
  return o;
}

// z scores of one quantity in one cell.
struct Scores {
  std::vector<double> z;
  int covered = 0;
  int missed = 0;  // the truth has it, the measurement did not list it
  void add(const Estimate& e, double truth, bool logarithmic) {
    if (!e.interval) {
      ++missed;
      return;
    }
    const auto f = [&](double v) { return logarithmic ? std::log10(v) : v; };
    const double half = 0.5 * (f(e.interval->high) - f(e.interval->low));
    if (!(half > 0.0)) {
      ++missed;
      return;
    }
    z.push_back((f(e.value) - f(truth)) / (half / kNominalZ));
    covered += e.interval->low <= truth && truth <= e.interval->high;
  }
  double mean() const {
    double s = 0.0;
    for (double v : z) s += v;
    return z.empty() ? 0.0 : s / static_cast<double>(z.size());
  }
  double scatter() const {
    if (z.size() < 2) return 0.0;
    const double m = mean();
    double s = 0.0;
    for (double v : z) s += (v - m) * (v - m);
    return std::sqrt(s / static_cast<double>(z.size() - 1));
  }
  double coverage() const { return z.empty() ? 0.0 : static_cast<double>(covered) / static_cast<double>(z.size()); }
  // The sample kurtosis of z, at least 3 (the normal's).
  double kurtosis() const {
    if (z.size() < 4) return 3.0;
    const double m = mean();
    double m2 = 0.0, m4 = 0.0;
    for (double v : z) {
      m2 += (v - m) * (v - m);
      m4 += std::pow(v - m, 4);
    }
    return m2 > 0.0 ? std::max(3.0, m4 * static_cast<double>(z.size()) / (m2 * m2)) : 3.0;
  }
};

// rms of the lines' z in thirds of the band (log frequency), magnitude and phase.
struct LineScores {
  double sum_sq[3][2] = {};
  long count[3] = {};
  double rms(int third, int part) const { return count[third] ? std::sqrt(sum_sq[third][part] / count[third]) : 0.0; }
};

struct Cell {
  const LoopDesign* loop;
  Excitation excitation;
  std::size_t index = 0;  // in the list of every cell
  std::map<std::string, Scores> scores;  // by quantity, in name order
  std::vector<std::string> order;        // quantities in the order first seen
  LineScores lines;
  int runs = 0;
  int failed = 0;
  std::string first_error;

  Scores& at(const std::string& name) {
    if (!scores.count(name)) order.push_back(name);
    return scores[name];
  }
  std::string name() const { return std::string(loop->name) + "/" + excitation_label(excitation); }
};

// The listed crossover nearest the truth's (in log frequency), if near enough.
template <typename Crossover>
const Crossover* match(const std::vector<Crossover>& listed, double truth_hz) {
  const Crossover* best = nullptr;
  for (const Crossover& c : listed) {
    const double d = std::abs(std::log10(c.frequency_hz.value / truth_hz));
    if (d <= kMatchDecades && (!best || d < std::abs(std::log10(best->frequency_hz.value / truth_hz)))) best = &c;
  }
  return best;
}

// The lines are scored over the band the margins come from: from half the
// lowest to twice the highest crossover or peak of the truth. All lines
// there, whatever their sigma: choosing lines by their own sigma would choose
// those whose noise happened to make them look reliable.
void score_lines(const AnalysisResult& result, const Margins& truth, const DiscreteLoop& loop, LineScores& out) {
  double low_hz = INFINITY, high_hz = 0.0;
  const auto widen = [&](double f) {
    low_hz = std::min(low_hz, f / 2.0);
    high_hz = std::max(high_hz, 2.0 * f);
  };
  for (const auto& c : truth.gain_crossovers) widen(c.frequency_hz.value);
  for (const auto& c : truth.phase_crossovers) widen(c.frequency_hz.value);
  if (truth.modulus) widen(truth.modulus->frequency_hz);
  if (!(high_hz > low_hz)) return;
  const double low = std::log10(low_hz), high = std::log10(high_hz);
  const Response& l = result.loop.lines;
  for (std::size_t k = 0; k < l.size(); ++k) {
    const double sigma = l.relative_sigma[k];
    const double u = std::log10(l.frequency_hz[k]);
    if (!(sigma > 0.0) || u < low || u > high) continue;
    const std::complex<double> ratio = std::log(l.value[k] / loop(l.frequency_hz[k]));
    const int third = std::min(2, static_cast<int>(3.0 * (u - low) / (high - low)));
    out.sum_sq[third][0] += ratio.real() * ratio.real() / (sigma * sigma);
    out.sum_sq[third][1] += ratio.imag() * ratio.imag() / (sigma * sigma);
    ++out.count[third];
  }
}

// One recording of a cell, scored.
void run_one(Cell& cell, std::uint64_t seed, std::mutex& lock) {
  const Scenario s = scenario(*cell.loop, cell.excitation, seed);
  const Synthesis synthesis = synthesize(s);
  const AnalysisResult result =
      analyze([&] { return std::make_unique<RecordSource>(synthesis.record, "simulated"); }, analysis_options(*cell.loop, cell.excitation));
  const Margins& m = result.margins;
  const Margins& truth = synthesis.truth;
  const std::lock_guard guard(lock);
  ++cell.runs;
  for (std::size_t i = 0; i < truth.gain_crossovers.size(); ++i) {
    const GainCrossover& t = truth.gain_crossovers[i];
    const std::string n = "gain crossover " + std::to_string(i + 1);
    if (const GainCrossover* c = match(m.gain_crossovers, t.frequency_hz.value)) {
      cell.at(n + " frequency").add(c->frequency_hz, t.frequency_hz.value, true);
      cell.at(n + " phase margin").add(c->phase_margin_deg, t.phase_margin_deg.value, false);
      cell.at(n + " delay margin").add(c->delay_margin_s, t.delay_margin_s.value, false);
    } else {
      for (const char* q : {" frequency", " phase margin", " delay margin"}) ++cell.at(n + q).missed;
    }
  }
  for (std::size_t i = 0; i < truth.phase_crossovers.size(); ++i) {
    const PhaseCrossover& t = truth.phase_crossovers[i];
    const std::string n = "phase crossover " + std::to_string(i + 1);
    if (const PhaseCrossover* c = match(m.phase_crossovers, t.frequency_hz.value)) {
      cell.at(n + " frequency").add(c->frequency_hz, t.frequency_hz.value, true);
      cell.at(n + " gain margin").add(c->gain_margin_db, t.gain_margin_db.value, false);
    } else {
      for (const char* q : {" frequency", " gain margin"}) ++cell.at(n + q).missed;
    }
  }
  if (truth.modulus && m.modulus) cell.at("modulus margin").add(m.modulus->modulus_margin, truth.modulus->modulus_margin.value, false);
  if (truth.disk && m.disk) cell.at("disk margin alpha").add(m.disk->alpha, truth.disk->alpha.value, false);
  score_lines(result, truth, DiscreteLoop(s), cell.lines);
}

struct Limits {
  double scatter_low, scatter_high, mean, coverage_low, coverage_high;
};

// The slow run's limits, or (ci) those widened by three standard errors of
// each statistic at the cell's count: the scatter's from the variance of a
// sample variance, var(s^2)/sigma^4 = (kappa - 1)/n for z of kurtosis kappa
// (1/sqrt(2n) for the scatter when z is normal; Kendall and Stuart, from
// memory), since one wide miss among 40 makes z's tails heavy.
Limits limits_for(bool slow, const Scores& s) {
  const Limits slow_limits{0.85, 1.15, 0.25, 0.92, 0.98};
  const std::size_t n = s.z.size();
  if (slow || n == 0) return slow_limits;
  const double count = static_cast<double>(n);
  const double scatter_se = 0.5 * std::sqrt((s.kurtosis() - 1.0) / count);
  const double mean_se = 1.0 / std::sqrt(count);
  const double coverage_se = std::sqrt(0.95 * 0.05 / count);
  return {slow_limits.scatter_low - 3.0 * scatter_se, slow_limits.scatter_high + 3.0 * scatter_se,
          slow_limits.mean + 3.0 * mean_se, slow_limits.coverage_low - 3.0 * coverage_se,
          std::min(1.0, slow_limits.coverage_high + 3.0 * coverage_se)};
}

// Crossovers missed in more than this share of a cell's recordings fail it:
// the designs keep their crossings resolvable at these noise levels.
constexpr double kMostMissed = 0.05;
// The lines' rms z per third of the band: the per-line sigma must be neither
// far too small nor far too large anywhere (a band where the lines are
// biased, by leakage at a resonance, shows here too).
constexpr double kLinesLow = 0.75;
constexpr double kLinesHigh = 1.3;

bool within(const Scores& s, const Limits& l, int runs) {
  return s.z.size() >= 2 && s.scatter() >= l.scatter_low && s.scatter() <= l.scatter_high &&
         std::abs(s.mean()) <= l.mean && s.coverage() >= l.coverage_low && s.coverage() <= l.coverage_high &&
         s.missed <= kMostMissed * runs;
}

// The cells as a Markdown table (README.md, "Uncertainty"): a row per cell
// and crossover number, a column per quantity, each entry the scatter of z
// and the coverage, in bold when a limit is missed, and the mean of z where
// it passes 0.2 in size.
void print_markdown(const std::vector<Cell>& cells, bool slow) {
  const char* columns[][2] = {{"gain crossover", "frequency"}, {"gain crossover", "phase margin"},
                              {"gain crossover", "delay margin"}, {"phase crossover", "frequency"},
                              {"phase crossover", "gain margin"}};
  std::printf("\n| cell | crossover | gain crossover | phase margin | delay margin | phase crossover | gain margin | "
              "modulus margin | disk margin |\n| --- | --- | --- | --- | --- | --- | --- | --- | --- |\n");
  const auto entry = [&](const Cell& cell, const std::string& q) {
    if (!cell.scores.count(q)) return std::string();
    const Scores& s = cell.scores.at(q);
    const bool ok = within(s, limits_for(slow, s), cell.runs);
    char text[80];
    std::snprintf(text, sizeof text, "%s%.2f / %.1f %%%s", ok ? "" : "**", s.scatter(), 100.0 * s.coverage(), ok ? "" : "**");
    std::string out = text;
    if (std::abs(s.mean()) > 0.2) {
      std::snprintf(text, sizeof text, " (mean %+.2f)", s.mean());
      out += text;
    }
    return out;
  };
  for (const Cell& cell : cells) {
    for (int n = 1; n <= 3; ++n) {
      std::string row = "| " + cell.name() + " | " + std::to_string(n);
      bool any = false;
      for (const auto& [what, quantity] : columns) {
        const std::string e = entry(cell, std::string(what) + " " + std::to_string(n) + " " + quantity);
        any = any || !e.empty();
        row += " | " + e;
      }
      if (!any) break;
      row += " | " + (n == 1 ? entry(cell, "modulus margin") : "") + " | " + (n == 1 ? entry(cell, "disk margin alpha") : "") + " |";
      std::printf("%s\n", row.c_str());
    }
  }
}

bool report(const Cell& cell, bool slow) {
  bool ok = true;
  std::printf("%s (%d recordings%s)\n", cell.name().c_str(), cell.runs,
              cell.failed ? (", " + std::to_string(cell.failed) + " failed: " + cell.first_error).c_str() : "");
  ok = ok && cell.failed == 0;
  for (const std::string& q : cell.order) {
    const Scores& s = cell.scores.at(q);
    const bool pass = within(s, limits_for(slow, s), cell.runs);
    ok = ok && pass;
    std::printf("  %-34s n %4zu  missed %3d  mean z %+5.2f  scatter %4.2f  coverage %5.1f %%  %s\n", q.c_str(),
                s.z.size(), s.missed, s.mean(), s.scatter(), 100.0 * s.coverage(), pass ? "ok" : "MISS");
  }
  const char* thirds[3] = {"lower", "middle", "upper"};
  for (int t = 0; t < 3; ++t) {
    const bool pass = cell.lines.count[t] == 0 ||
                      (cell.lines.rms(t, 0) >= kLinesLow && cell.lines.rms(t, 0) <= kLinesHigh &&
                       cell.lines.rms(t, 1) >= kLinesLow && cell.lines.rms(t, 1) <= kLinesHigh);
    ok = ok && pass;
    std::printf("  lines, %-6s third of the band      n %6ld  rms z magnitude %4.2f  phase %4.2f  %s\n", thirds[t],
                cell.lines.count[t], cell.lines.rms(t, 0), cell.lines.rms(t, 1), pass ? "ok" : "MISS");
  }
  return ok;
}

}  // namespace

int main(int argc, char** argv) {
  int per_cell = 40;
  bool slow = false;
  std::string only;
  bool markdown = false;
  bool statistics = true;  // --limits none: only a recording that could not be analysed fails
  for (int i = 1; i + 1 < argc; i += 2) {
    if (!std::strcmp(argv[i], "--per-cell")) per_cell = std::max(2, std::atoi(argv[i + 1]));
    else if (!std::strcmp(argv[i], "--limits")) {
      slow = !std::strcmp(argv[i + 1], "slow");
      statistics = std::strcmp(argv[i + 1], "none") != 0;
    }
    else if (!std::strcmp(argv[i], "--cells")) only = argv[i + 1];
    else if (!std::strcmp(argv[i], "--markdown")) markdown = !std::strcmp(argv[i + 1], "yes");
    else {
      std::fprintf(stderr, "calibration_check: unknown option %s\n", argv[i]);
      return 2;
    }
  }
  const auto designs = loops();
  std::vector<Cell> cells;
  std::size_t index = 0;  // of the cell in the whole list: its seeds are the same when run alone
  for (const LoopDesign& d : designs) {
    for (Excitation e : {Excitation::kNoise, Excitation::kMultisine, Excitation::kStepped}) {
      Cell c{&d, e};
      c.index = index++;
      if (only.empty() || ("," + only + ",").find("," + c.name() + ",") != std::string::npos) cells.push_back(c);
    }
  }
  // Every recording is independent: two threads (the machine's cores) take them in turn.
  std::vector<std::pair<std::size_t, int>> jobs;
  for (std::size_t c = 0; c < cells.size(); ++c) {
    for (int r = 0; r < per_cell; ++r) jobs.emplace_back(c, r);
  }
  std::atomic<std::size_t> next{0};
  std::mutex lock;
  const auto work = [&] {
    for (std::size_t j; (j = next++) < jobs.size();) {
      Cell& cell = cells[jobs[j].first];
      const std::uint64_t seed = 100000 * (cell.index + 1) + static_cast<std::uint64_t>(jobs[j].second);
      try {
        run_one(cell, seed, lock);
      } catch (const std::exception& e) {
        const std::lock_guard guard(lock);
        if (cell.failed++ == 0) cell.first_error = "seed " + std::to_string(seed) + ": " + e.what();
      }
    }
  };
  std::vector<std::thread> threads;
  const unsigned cores = std::clamp(std::thread::hardware_concurrency(), 1u, 2u);
  for (unsigned t = 0; t < cores; ++t) threads.emplace_back(work);
  for (auto& t : threads) t.join();
  std::printf("calibration of the nominal 95 %% intervals, %d recordings a cell, %s limits\n", per_cell,
              slow ? "slow-run" : "widened");
  bool ok = true;
  for (const Cell& c : cells) ok = (report(c, slow) || (!statistics && c.failed == 0)) && ok;
  std::printf("%s\n", ok ? "pass: every cell within its limits" : "FAIL: a cell is outside its limits");
  if (markdown) print_markdown(cells, slow);
  return ok ? 0 : 1;
}
