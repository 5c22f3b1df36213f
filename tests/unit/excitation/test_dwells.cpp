// Dwells of stepped sines found from the injection alone, sparse to dense
// (20 to 300 points a decade), phase-continuous or reset at each dwell; and
// chirps, which must stay chirps.
#include <array>
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <numbers>
#include <random>
#include <span>

#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/spectral/stepped.hpp"

using namespace loopaudit;

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

struct Sweep {
  double sample_rate_hz = 100e3;
  double low_hz = 1e3;
  double decades = 1.0;
  int per_decade = 20;
  bool phase_reset = false;           // each dwell starts at phase 0, else where the last one ended
  std::size_t min_dwell = 4000;       // samples, drawn uniformly in [min_dwell, max_dwell]
  std::size_t max_dwell = 5000;
  double noise_rms = 0.01;            // on every channel; the injection's RMS is 1
};

// An invented response to recover: a lag at 3 kHz and 20 us of delay.
std::complex<double> known_response(double f_hz) {
  return std::exp(std::complex<double>(0.0, -kTwoPi * f_hz * 20e-6)) / std::complex<double>(1.0, f_hz / 3e3);
}

struct Made {
  std::vector<Dwell> truth;
  std::vector<double> z, x, y;  // x = z; y = the known response to z, dwell by dwell, in steady state
};

Made make(const Sweep& s) {
  Made m;
  std::mt19937_64 rng(s.per_decade + (s.phase_reset ? 1000 : 0));
  std::uniform_int_distribution<std::size_t> length(s.min_dwell, s.max_dwell);
  std::normal_distribution<double> noise(0.0, s.noise_rms);
  const int points = static_cast<int>(std::lround(s.per_decade * s.decades)) + 1;
  double phase = 0.0;
  for (int i = 0; i < points; ++i) {
    const double f = s.low_hz * std::pow(10.0, static_cast<double>(i) / s.per_decade);
    const std::size_t first = m.z.size(), n = length(rng);
    m.truth.push_back({first, first + n, f});
    if (s.phase_reset) phase = 0.0;
    const std::complex<double> h = known_response(f);
    for (std::size_t k = 0; k < n; ++k) {
      m.z.push_back(std::sqrt(2.0) * std::sin(phase) + noise(rng));
      m.x.push_back(std::sqrt(2.0) * std::sin(phase) + noise(rng));
      m.y.push_back(std::sqrt(2.0) * std::abs(h) * std::sin(phase + std::arg(h)) + noise(rng));
      phase = std::fmod(phase + kTwoPi * f / s.sample_rate_hz, kTwoPi);
    }
  }
  return m;
}

ExcitationPlan detect(const std::vector<double>& z, double sample_rate_hz) {
  ExcitationDetector detector;
  for (std::size_t i = 0; i < z.size(); i += 65536) {
    detector.push(std::span(z).subspan(i, std::min<std::size_t>(65536, z.size() - i)));
  }
  return detector.finish(sample_rate_hz);
}

// Every true dwell found once, at its frequency, and inside its span: its
// end up to a period past the true end (the sine fits have no settling to
// drop there), its start up to two periods early (dropped as settling), and
// both within `edge_periods` inside (the period across an edge belongs to
// neither dwell, and the crossings around it place the edge within a few).
// The first dwell starts once the first frame has set the level for the
// crossings.
void check_dwells(const ExcitationPlan& plan, const Made& m, const Sweep& s, double edge_periods = 5.0) {
  const double sample_rate_hz = s.sample_rate_hz;
  // A tenth of the step between dwells: each found at its own frequency, not
  // near a neighbour's (the detector's frequency seeds the sine fits).
  const double tolerance = 0.1 * (std::pow(10.0, 1.0 / s.per_decade) - 1.0);
  REQUIRE(plan.kind == ExcitationKind::kStepped);
  REQUIRE(plan.dwells.size() == m.truth.size());
  for (std::size_t i = 0; i < m.truth.size(); ++i) {
    const Dwell& found = plan.dwells[i];
    const Dwell& truth = m.truth[i];
    const double period = sample_rate_hz / truth.frequency_hz;
    const double first = static_cast<double>(found.first_sample), end = static_cast<double>(found.end_sample);
    const double late = edge_periods * period + (i == 0 ? static_cast<double>(ExcitationDetector::kFrameSamples) : 0.0);
    INFO("dwell " << i << " at " << truth.frequency_hz << " Hz: found " << found.first_sample << " to "
                  << found.end_sample << " at " << found.frequency_hz << " Hz; true " << truth.first_sample << " to "
                  << truth.end_sample);
    CHECK(found.frequency_hz == Approx(truth.frequency_hz).epsilon(tolerance));
    CHECK(first > static_cast<double>(truth.first_sample) - 2.0 * period);
    CHECK(first < static_cast<double>(truth.first_sample) + late);
    CHECK(end < static_cast<double>(truth.end_sample) + period);
    CHECK(end > static_cast<double>(truth.end_sample) - edge_periods * period);
  }
}

}  // namespace

TEST_CASE("stepped sines of 20 100 and 300 points a decade keep every dwell", "[excitation][dwells]") {
  for (const int per_decade : {20, 100, 300}) {
    for (const bool reset : {false, true}) {
      Sweep s;
      s.per_decade = per_decade;
      s.phase_reset = reset;
      if (per_decade == 20) {  // two decades, 300 Hz to 30 kHz: 41 dwells
        s.low_hz = 300.0;
        s.decades = 2.0;
      }
      INFO(per_decade << " points a decade, " << (reset ? "phase reset" : "phase-continuous"));
      const Made m = make(s);
      check_dwells(detect(m.z, s.sample_rate_hz), m, s);
    }
  }
}

TEST_CASE("a dense stepped sine near the Nyquist rate keeps every dwell", "[excitation][dwells]") {
  // 10 to 30 kHz at 100 kHz: 10 to 3.3 samples a period, where a straight
  // line between samples misplaces a crossing by up to 2 % of a period.
  Sweep s;
  s.low_hz = 10e3;
  s.decades = std::log10(3.0);
  s.per_decade = 300;
  const Made m = make(s);
  check_dwells(detect(m.z, s.sample_rate_hz), m, s);
}

TEST_CASE("a dense slow stepped sine under noise keeps every dwell", "[excitation][dwells]") {
  // 50 to 500 Hz at 100 kHz: a 1024-sample frame is under a cycle, and noise
  // at a twentieth of the RMS on a slow tone moves each crossing by 0.5 % of
  // a period.
  Sweep s;
  s.low_hz = 50.0;
  s.per_decade = 100;
  s.min_dwell = 20000;
  s.max_dwell = 25000;
  s.noise_rms = 0.05;
  const Made m = make(s);
  check_dwells(detect(m.z, s.sample_rate_hz), m, s);
}

TEST_CASE("sine fits over found dense dwells recover a known response", "[excitation][dwells][estimator]") {
  Sweep s;
  s.per_decade = 300;
  s.phase_reset = true;
  s.noise_rms = 0.05;
  const Made m = make(s);
  const ExcitationPlan plan = detect(m.z, s.sample_rate_hz);
  REQUIRE(plan.dwells.size() == m.truth.size());
  SteppedSineEstimator estimator({plan.dwells, s.sample_rate_hz});
  const std::array<std::span<const double>, 3> channels{m.z, m.x, m.y};
  estimator.push(channels, 0);
  Diagnostics findings;
  const Response r = estimator.finish(findings);
  REQUIRE(r.size() == m.truth.size());
  std::size_t within = 0;
  for (std::size_t k = 0; k < r.size(); ++k) {
    CHECK(r.frequency_hz[k] == Approx(m.truth[k].frequency_hz).epsilon(1e-4));
    const double z = std::abs(std::log(r.value[k] / known_response(m.truth[k].frequency_hz))) / r.relative_sigma[k];
    if (z < 3.0) ++within;
  }
  // |ln(H/H_true)| over sigma is Rayleigh-distributed for a circular
  // complex-Gaussian error: P(below 3) = 1 - exp(-4.5) = 0.989; 0.9 is asked
  // of first-order sigmas (common practice, as in test_estimators.cpp).
  CHECK(static_cast<double>(within) / static_cast<double>(r.size()) > 0.9);
}

TEST_CASE("chirps stay chirps beside dense stepped sines", "[excitation][dwells]") {
  const double fs = 100e3;
  std::mt19937_64 rng(8);
  for (const bool log_sweep : {false, true}) {
    for (const double noise_rms : {0.0, 0.1}) {
      // 1 to 10 kHz in 1.5 s, as long as the 300-point stepped sine above.
      const double f0 = 1e3, f1 = 10e3, duration = 1.5;
      std::normal_distribution<double> noise(0.0, noise_rms > 0.0 ? noise_rms : 1.0);
      std::vector<double> z(static_cast<std::size_t>(duration * fs));
      for (std::size_t n = 0; n < z.size(); ++n) {
        const double t = static_cast<double>(n) / fs;
        const double phase = log_sweep ? kTwoPi * f0 * duration / std::log(f1 / f0) * (std::pow(f1 / f0, t / duration) - 1.0)
                                       : kTwoPi * (f0 * t + 0.5 * (f1 - f0) / duration * t * t);
        z[n] = std::sqrt(2.0) * std::sin(phase) + (noise_rms > 0.0 ? noise(rng) : 0.0);
      }
      INFO((log_sweep ? "logarithmic" : "linear") << " chirp, noise " << noise_rms);
      const ExcitationPlan plan = detect(z, fs);
      CHECK(plan.kind == ExcitationKind::kChirp);
      CHECK(plan.dwells.empty());
    }
  }
}
