#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>

#include "loopaudit/error.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/synth/simulate.hpp"
#include "loopaudit/units.hpp"
#include "reference_data.hpp"
#include "temp_file.hpp"

using namespace loopaudit;
using Complex = std::complex<double>;

namespace {

Scenario one_stage(Stage stage, double sample_rate_hz, int delay_samples = 0) {
  Scenario s;
  s.name = "test";
  s.sample_rate_hz = sample_rate_hz;
  s.duration_s = 4096.0 * 32.0 / sample_rate_hz;
  s.injection.rms = 1.0;
  s.stages = {std::move(stage)};
  s.delay_samples = delay_samples;
  return s;
}

Complex z_of(double f, double fs) { return std::polar(1.0, 2.0 * std::numbers::pi * f / fs); }

}  // namespace

TEST_CASE("zero-order hold of a first-order lag is (1 - a)/(z - a) with a = exp(-w T)", "[synth]") {
  // Closed form of the step-invariant transform of w/(s + w) (common practice).
  const double fs = 1000.0;
  Stage lag{"lag", 1.0, 0, {}, {{50.0, std::nullopt}}, Discretization::kZeroOrderHold};
  const DiscreteLoop loop(one_stage(lag, fs));
  const double a = std::exp(-2.0 * std::numbers::pi * 50.0 / fs);
  for (double f : {1.0, 20.0, 50.0, 200.0, 499.0}) {
    const Complex expected = (1.0 - a) / (z_of(f, fs) - a);
    CHECK(std::abs(loop(f) - expected) < 1e-12);
  }
}

TEST_CASE("bilinear stages equal the continuous function at the warped frequency", "[synth]") {
  // Bilinear transform: H_d(z) = H_c(s) with s = (2/T)(z - 1)/(z + 1) (exact).
  const double fs = 1e6;
  Stage type3{"type-III", 2.4e4, 1, {{4e3, std::nullopt}, {8e3, std::nullopt}}, {{150e3, std::nullopt}, {250e3, std::nullopt}},
              Discretization::kBilinear};
  Stage resonant{"pair", 3.0, 0, {{60e3, 0.7}}, {{9.5e3, 3.0}, {30e3, std::nullopt}}, Discretization::kBilinear};
  const auto continuous_type3 = [](Complex s) {
    const double w = 2.0 * std::numbers::pi;
    return 2.4e4 / s * (1.0 + s / (w * 4e3)) * (1.0 + s / (w * 8e3)) / ((1.0 + s / (w * 150e3)) * (1.0 + s / (w * 250e3)));
  };
  const auto continuous_pair = [](Complex s) {
    const double w = 2.0 * std::numbers::pi;
    const double wz = w * 60e3, wp = w * 9.5e3, wr = w * 30e3;
    return 3.0 * (1.0 + s / (0.7 * wz) + s * s / (wz * wz)) / ((1.0 + s / (3.0 * wp) + s * s / (wp * wp)) * (1.0 + s / wr));
  };
  const DiscreteLoop loop3(one_stage(type3, fs));
  const DiscreteLoop loop_pair(one_stage(resonant, fs));
  for (double f : {100.0, 3e3, 9.5e3, 40e3, 200e3, 450e3}) {
    const Complex z = z_of(f, fs);
    const Complex s = 2.0 * fs * (z - 1.0) / (z + 1.0);
    CHECK(std::abs(loop3(f) / continuous_type3(s) - 1.0) < 1e-9);
    CHECK(std::abs(loop_pair(f) / continuous_pair(s) - 1.0) < 1e-9);
  }
}

TEST_CASE("an integrator under a hold with one sample of delay has the published margins", "[synth]") {
  // L(z) = K T / (z (z - 1)), K T = 0.5 (data/reference/known_loops.csv, row
  // 0.5/(z(z-1)), given at T = 1 s): PM 46.567 deg, GM 2 at fs/6, delay margin
  // 1.608 T, s_m 0.455.
  const auto expected = reference::Table("known_loops.csv").row("0.5/(z(z-1))");
  const double fs = 1000.0;
  Stage integrator{"integrator", 0.5 * fs, 1, {}, {}, Discretization::kZeroOrderHold};
  const Scenario scenario = one_stage(integrator, fs, 1);
  const Synthesis synthesis = synthesize(scenario);
  const Margins& truth = synthesis.truth;
  REQUIRE(truth.gain_crossovers.size() == 1);
  CHECK(truth.gain_crossovers[0].phase_margin_deg.value == Approx(expected.number("phase_margin_deg")).margin(1e-6));
  CHECK(truth.gain_crossovers[0].delay_margin_s.value * fs == Approx(expected.number("delay_margin_s")).epsilon(1e-7));
  REQUIRE(truth.phase_crossovers.size() == 1);
  CHECK(truth.phase_crossovers[0].frequency_hz.value ==
        Approx(fs * expected.number("phase_crossover_rad_s") / (2.0 * std::numbers::pi)).epsilon(1e-10));
  CHECK(truth.phase_crossovers[0].gain_margin_db.value == Approx(expected.number("gain_margin_db")).margin(1e-9));
  CHECK(truth.summary.modulus_margin->value == Approx(expected.number("modulus_margin")).epsilon(1e-7));
}

TEST_CASE("a noise-free simulated loop is measured as the exact discrete response", "[synth][pipeline]") {
  // A multisine whose period is the segment, with a rectangular window, has
  // no leakage once the loop has settled: S_zy/S_zx then equals the discrete
  // L at every excited line. Only the start-up transient in the first of the
  // 32 periods remains (this loop crosses over near 320 Hz and settles
  // within a few tens of samples).
  const double fs = 8000.0;
  Stage plant{"plant", 2000.0, 1, {}, {{1500.0, std::nullopt}}, Discretization::kZeroOrderHold};
  Scenario scenario = one_stage(plant, fs, 1);
  scenario.injection.kind = InjectionKind::kMultisine;
  scenario.injection.period_samples = 4096;
  const Synthesis synthesis = synthesize(scenario);
  RecordSource source(synthesis.record, "simulated");
  AnalysisOptions options;
  options.welch.window = WindowKind::kRectangular;
  options.welch.overlap = 0.0;
  const AnalysisResult result = analyze_recording(source, options);
  const DiscreteLoop loop(scenario);
  const Response& lines = result.loop.lines;
  REQUIRE(lines.size() > 1500);
  for (std::size_t k = 0; k < lines.size(); ++k) {
    INFO(lines.frequency_hz[k] << " Hz");
    CHECK(std::abs(lines.value[k] / loop(lines.frequency_hz[k]) - 1.0) < 1e-3);
  }
  // Series injection: x = y + z holds sample by sample.
  const auto& ch = synthesis.record.channels;
  for (std::size_t n = 0; n < 1000; ++n) CHECK(ch[1][n] == Approx(ch[2][n] + ch[0][n]).margin(1e-12));
}

TEST_CASE("an unstable scenario is refused rather than written", "[synth]") {
  // K (1 + s/w_z)/s with K/w_z = 3.2 > 1 never crosses 0 dB: with one sample of
  // delay the closed loop is unstable and the signals grow without bound.
  Stage plant{"plant", 400.0, 1, {{20.0, std::nullopt}}, {{1500.0, std::nullopt}}, Discretization::kZeroOrderHold};
  CHECK_THROWS_WITH(synthesize(one_stage(plant, 8000.0, 1)), Catch::Contains("unstable"));
}

TEST_CASE("scenario files are validated key by key", "[synth]") {
  testing::TempFile typo(R"(name = "t"
[recording]
sample_rate_hz = 1000
duration_s = 1
[injection]
rms = 1
[loop]
[[loop.stage]]
gian = 2
)", ".toml");
  CHECK_THROWS_AS(load_scenario(typo.path()), ConfigError);
  CHECK_THROWS_WITH(load_scenario(typo.path()), Catch::Contains("unknown key 'gian'"));
  testing::TempFile improper(R"(name = "t"
[recording]
sample_rate_hz = 1000
duration_s = 1
[injection]
rms = 1
[loop]
[[loop.stage]]
zeros = [{ hz = 10 }]
)", ".toml");
  CHECK_THROWS_WITH(synthesize(load_scenario(improper.path())), Catch::Contains("more zeros than poles"));
  testing::TempFile broken("name = \n", ".toml");
  CHECK_THROWS_AS(load_scenario(broken.path()), InputError);
  CHECK_THROWS_AS(load_scenario("/nonexistent.toml"), InputError);
}

TEST_CASE("the bundled demo scenarios load", "[synth]") {
  for (const char* name : {"buck_48v_12v.toml", "servo_velocity.toml"}) {
    const Scenario s = load_scenario(std::string(LOOPAUDIT_TEST_DATA) + "/../../data/demo/" + name);
    CHECK(s.stages.size() >= 2);
  }
}
