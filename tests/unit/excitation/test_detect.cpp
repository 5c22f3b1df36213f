#include <catch2/catch.hpp>
#include <random>

#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/synth/simulate.hpp"

using namespace loopaudit;

namespace {

// An invented servo-like loop at 8 kHz; only the injection matters here.
Scenario scenario(InjectionKind kind, double duration_s) {
  Scenario s;
  s.name = "detect";
  s.sample_rate_hz = 8000.0;
  s.duration_s = duration_s;
  s.injection.kind = kind;
  s.injection.rms = 1.0;
  s.injection.low_hz = 10.0;
  s.injection.high_hz = 2000.0;
  s.injection.period_samples = 4096;
  s.injection.prbs_order = 10;
  s.injection.samples_per_bit = 2;
  s.injection.points = 20;
  s.injection.dwell_s = 0.6;  // 6 cycles at the lowest frequency
  s.injection.sweep_s = 2.0;
  s.stages = {{"plant", 2000.0, 1, {}, {{1500.0, std::nullopt}}, Discretization::kZeroOrderHold}};
  s.delay_samples = 1;
  return s;
}

ExcitationPlan detect(const Scenario& s, double noise_rms = 0.0) {
  const Synthesis synthesis = synthesize(s);
  std::vector<double> z = synthesis.record.channels[0];
  std::mt19937_64 rng(4);
  std::normal_distribution<double> normal(0.0, noise_rms > 0.0 ? noise_rms : 1.0);
  if (noise_rms > 0.0) {
    for (double& v : z) v += normal(rng);
  }
  ExcitationDetector detector;
  for (std::size_t i = 0; i < z.size(); i += 5000) detector.push(std::span(z).subspan(i, std::min<std::size_t>(5000, z.size() - i)));
  return detector.finish(s.sample_rate_hz);
}

}  // namespace

TEST_CASE("each synthetic excitation is recognised", "[excitation]") {
  CHECK(detect(scenario(InjectionKind::kNoise, 6.0)).kind == ExcitationKind::kBroadband);
  const ExcitationPlan multisine = detect(scenario(InjectionKind::kMultisine, 6.0));
  CHECK(multisine.kind == ExcitationKind::kPeriodic);
  CHECK(multisine.period_samples == 4096);
  const ExcitationPlan prbs = detect(scenario(InjectionKind::kPrbs, 6.0));
  CHECK(prbs.kind == ExcitationKind::kPeriodic);
  CHECK(prbs.period_samples == 2046);  // (2^10 - 1) bits of 2 samples
  const ExcitationPlan stepped = detect(scenario(InjectionKind::kStepped, 12.0));
  CHECK(stepped.kind == ExcitationKind::kStepped);
  CHECK(stepped.dwells.size() == 20);
  CHECK(detect(scenario(InjectionKind::kChirp, 6.0)).kind == ExcitationKind::kChirp);
}

TEST_CASE("short and noisy recordings are still recognised", "[excitation]") {
  // Noise at a tenth of the injection's RMS on the reference, and records of a few periods.
  CHECK(detect(scenario(InjectionKind::kNoise, 0.5), 0.1).kind == ExcitationKind::kBroadband);
  const ExcitationPlan multisine = detect(scenario(InjectionKind::kMultisine, 2.0), 0.1);
  CHECK(multisine.kind == ExcitationKind::kPeriodic);
  CHECK(multisine.period_samples == 4096);
  const ExcitationPlan stepped = detect(scenario(InjectionKind::kStepped, 12.0), 0.1);
  CHECK(stepped.kind == ExcitationKind::kStepped);
  CHECK(detect(scenario(InjectionKind::kChirp, 2.0), 0.1).kind == ExcitationKind::kChirp);
}
