// Coverage of the margin intervals: how often the nominal interval holds the
// true value, over many simulated recordings of one known loop.
//
// The loop is 2/(s(s+1)(s+2)) of data/reference/known_loops.csv, time-scaled
// so that its unit frequency is 100 Hz and held by a zero-order hold at 8 kHz;
// the truth is the exact response of that discrete loop (as `synth` computes
// it).
// Cells: two excitations (random noise through Welch, periodic multisine)
// times two noise levels, each with its own run of seeds.
//
//   coverage_check [--per-cell N] [--low 0.90] [--high 0.99]
// prints the coverage seen for the gain crossover frequency, the phase margin
// and the gain margin in every cell and over all, and exits 1 when an overall
// coverage lies outside [low, high].
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <numbers>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/error.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/synth/simulate.hpp"

using namespace loopaudit;

namespace {

constexpr double kUnitHz = 100.0;

struct Cell {
  const char* name;
  InjectionKind kind;
  double sensor_rms;
  double disturbance_rms;
};

Scenario known_loop(const Cell& cell, std::uint64_t seed) {
  // 2/(s(s+1)(s+2)) = 1/(s (1+s)(1+s/2)); with s -> s/a the gain becomes a.
  const double a = 2.0 * std::numbers::pi * kUnitHz;
  Scenario s;
  s.name = "coverage";
  s.sample_rate_hz = 8000.0;
  s.duration_s = 8.0;
  s.seed = seed;
  s.injection.kind = cell.kind;
  s.injection.rms = 1.0;
  s.injection.period_samples = 4096;
  s.injection.high_hz = 2000.0;
  s.noise = {cell.sensor_rms, cell.sensor_rms, cell.disturbance_rms, 50.0};
  s.stages = {{"2/(s(s+1)(s+2)) at 100 Hz", a, 1, {}, {{kUnitHz, std::nullopt}, {2.0 * kUnitHz, std::nullopt}},
               Discretization::kZeroOrderHold}};
  return s;
}

// Error over the interval's half-width, in standard deviations: its mean
// shows bias, its rms whether the width is right (both 0 and 1 when honest).
struct Scores {
  double sum = 0.0, sum_sq = 0.0;
  int n = 0;
  void add(const std::optional<Estimate>& estimate, const std::optional<Estimate>& truth, double z) {
    if (!estimate || !truth || !estimate->interval) return;
    const Interval& i = *estimate->interval;
    if (!(i.high > i.low)) return;
    const double score = (estimate->value - truth->value) / ((i.high - i.low) / (2.0 * z));
    sum += score;
    sum_sq += score * score;
    ++n;
  }
  double mean() const { return n ? sum / n : 0.0; }
  double rms() const { return n ? std::sqrt(sum_sq / n) : 0.0; }
};

struct Tally {
  int runs = 0;
  int crossover = 0, phase_margin = 0, gain_margin = 0;
  Scores crossover_z, phase_margin_z, gain_margin_z, modulus_z;
  int modulus = 0;
  double fraction(int hits) const { return runs ? static_cast<double>(hits) / runs : 0.0; }
};

bool holds(const std::optional<Estimate>& e, const std::optional<Estimate>& truth) {
  if (!e || !e->interval || !truth) return false;
  return e->interval->low <= truth->value && truth->value <= e->interval->high;
}

// The crossover frequency's error is scored in log frequency, where its
// interval is symmetric.
std::optional<Estimate> log_e(const std::optional<Estimate>& e) {
  if (!e) return std::nullopt;
  Estimate out{std::log(e->value), std::nullopt};
  if (e->interval) out.interval = Interval{std::log(e->interval->low), std::log(e->interval->high)};
  return out;
}

void run_cell(const Cell& cell, int runs, std::uint64_t first_seed, Tally& cell_tally, Tally& all) {
  for (int r = 0; r < runs; ++r) {
    const Scenario scenario = known_loop(cell, first_seed + static_cast<std::uint64_t>(r));
    const Synthesis synthesis = synthesize(scenario);
    RecordSource source(synthesis.record, "simulated");
    const MarginSummary& truth = synthesis.truth.summary;
    const AnalysisResult result = analyze_recording(source, AnalysisOptions{});
    const MarginSummary m = result.margins.summary;
    for (Tally* t : {&cell_tally, &all}) {
      ++t->runs;
      t->crossover += holds(m.gain_crossover_hz, truth.gain_crossover_hz);
      t->phase_margin += holds(m.phase_margin_deg, truth.phase_margin_deg);
      t->gain_margin += holds(m.gain_margin_db, truth.gain_margin_db);
      const double z = two_sided_z(0.95);
      t->crossover_z.add(log_e(m.gain_crossover_hz), log_e(truth.gain_crossover_hz), z);
      t->phase_margin_z.add(m.phase_margin_deg, truth.phase_margin_deg, z);
      t->gain_margin_z.add(m.gain_margin_db, truth.gain_margin_db, z);
      t->modulus += holds(m.modulus_margin, truth.modulus_margin);
      t->modulus_z.add(m.modulus_margin, truth.modulus_margin, z);
    }
  }
}

void print(const char* name, const Tally& t) {
  std::printf("  %-26s %5d  %6.1f %%  %6.1f %%  %6.1f %%   z mean/rms %+.2f/%.2f %+.2f/%.2f %+.2f/%.2f\n", name, t.runs,
              100.0 * t.fraction(t.crossover), 100.0 * t.fraction(t.phase_margin), 100.0 * t.fraction(t.gain_margin),
              t.crossover_z.mean(), t.crossover_z.rms(), t.phase_margin_z.mean(), t.phase_margin_z.rms(),
              t.gain_margin_z.mean(), t.gain_margin_z.rms());
  std::printf("  %-26s        modulus margin (not held to the limits) %6.1f %%   z mean/rms %+.2f/%.2f\n", "",
              100.0 * t.fraction(t.modulus), t.modulus_z.mean(), t.modulus_z.rms());
}

}  // namespace

int main(int argc, char** argv) {
  int per_cell = 50;
  double low = 0.90, high = 0.99;
  for (int i = 1; i + 1 < argc; i += 2) {
    if (!std::strcmp(argv[i], "--per-cell")) per_cell = std::atoi(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--low")) low = std::atof(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--high")) high = std::atof(argv[i + 1]);
    else {
      std::fprintf(stderr, "coverage_check: unknown option %s\n", argv[i]);
      return 2;
    }
  }
  const Cell cells[] = {{"noise, quiet sensors", InjectionKind::kNoise, 0.02, 0.05},
                        {"noise, noisy sensors", InjectionKind::kNoise, 0.08, 0.2},
                        {"multisine, quiet sensors", InjectionKind::kMultisine, 0.02, 0.05},
                        {"multisine, noisy sensors", InjectionKind::kMultisine, 0.08, 0.2}};
  std::printf("coverage of the nominal 95 %% intervals (%d recordings per cell)\n", per_cell);
  std::printf("  %-26s %5s  %8s  %8s  %8s\n", "cell", "runs", "f_gc", "PM", "GM");
  Tally all;
  std::uint64_t seed = 1000;
  try {
    for (const Cell& cell : cells) {
      Tally t;
      run_cell(cell, per_cell, seed, t, all);
      seed += 100000;
      print(cell.name, t);
    }
  } catch (const Error& e) {
    std::fprintf(stderr, "coverage_check: %s\n", e.what());
    return 1;
  }
  print("all", all);
  bool ok = true;
  for (double c : {all.fraction(all.crossover), all.fraction(all.phase_margin), all.fraction(all.gain_margin)}) {
    ok = ok && c >= low && c <= high;
  }
  std::printf("%s: every overall coverage %s within %.0f %% to %.0f %%\n", ok ? "pass" : "FAIL", ok ? "lies" : "does not lie",
              100.0 * low, 100.0 * high);
  return ok ? 0 : 1;
}
