// No margin or verdict the lines cannot support: crossings too noisy to
// place or even to see, lines left out of the Nyquist count, and a loop
// that sits on the margin within rounding.
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <random>

#include "analysis/known_loops.hpp"
#include "loopaudit/analysis/nyquist.hpp"
#include "loopaudit/units.hpp"

using namespace loopaudit;

namespace {

bool has(const Margins& m, const std::string& code, const std::string& text = "") {
  for (const auto& d : m.findings) {
    if (d.code == code && d.message.find(text) != std::string::npos) return true;
  }
  return false;
}

// 1/(s(s+1)(s+2)): a gain crossover at 0.446 rad/s (PM 53.4 deg), a phase
// crossover at sqrt 2 rad/s (GM 15.6 dB); data/reference/known_loops.csv.
LoopFunction cubic(double gain) {
  return [gain](double f) {
    const auto s = known::s_of(f);
    return gain / (s * (s + 1.0) * (s + 2.0));
  };
}

// Each line moved by circular complex Gaussian noise of standard deviation
// |L| sigma, as the lines' error model has it (README, "Uncertainty").
void add_noise(Response& r, std::size_t first, std::size_t last, double sigma, unsigned seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (std::size_t k = first; k <= last; ++k) {
    const double scale = std::abs(r.value[k]) * sigma;
    r.value[k] += std::complex<double>(scale * normal(rng), scale * normal(rng));
    r.relative_sigma[k] = sigma;
  }
}

}  // namespace

TEST_CASE("lines too noisy to show a crossing leave the crossover unresolved and not none in band",
          "[analysis][evidence]") {
  // |L| = 1.25 (+1.9 dB) over three decades, phase -60 to -100 deg: no line
  // crosses 0 dB, but with a relative sigma of 0.3 (2.6 dB) every line lies
  // within two sigmas of it. The phase stays 80 deg (4 sigmas) from -180.
  Response r;
  for (int k = 0; k <= 300; ++k) {
    const double f = std::pow(10.0, k / 100.0);
    r.frequency_hz.push_back(f);
    r.value.push_back(std::polar(1.25, rad_from_deg(-60.0 - 40.0 * k / 300.0)));
    r.relative_sigma.push_back(0.3);
  }
  const Margins m = find_margins(r);
  CHECK(m.gain_crossovers.empty());
  REQUIRE(m.unresolved.size() == 1);
  CHECK(m.unresolved[0].level == CrossingLevel::kGain);
  CHECK(m.unresolved[0].crossings == 0);
  CHECK(has(m, "margins.unresolved-crossings", "no gain crossing is seen"));
  CHECK(m.summary.status("gain_crossover_hz") == SummaryStatus::kUnresolved);
  CHECK(m.summary.status("phase_margin_deg") == SummaryStatus::kUnresolved);
  CHECK(m.summary.status("delay_margin_s") == SummaryStatus::kUnresolved);
  // The phase is clear of -180 deg: none in band is what the lines show.
  CHECK(m.summary.status("phase_crossover_hz") == SummaryStatus::kNoneInBand);
  CHECK(m.summary.status("modulus_margin") == SummaryStatus::kMeasured);
  CHECK(m.stability.verdict == StabilityVerdict::kUndecided);
}

TEST_CASE("lines clearly on one side of the level are none in band even when noisy", "[analysis][evidence]") {
  // The same lines at |L| = 10 (+20 dB): 7.7 sigmas above 0 dB.
  Response r;
  for (int k = 0; k <= 300; ++k) {
    r.frequency_hz.push_back(std::pow(10.0, k / 100.0));
    r.value.push_back(std::polar(10.0, rad_from_deg(-60.0 - 40.0 * k / 300.0)));
    r.relative_sigma.push_back(0.3);
  }
  const Margins m = find_margins(r);
  CHECK(m.unresolved.empty());
  CHECK(m.summary.status("gain_crossover_hz") == SummaryStatus::kNoneInBand);
  CHECK(m.summary.status("phase_crossover_hz") == SummaryStatus::kNoneInBand);
}

TEST_CASE("a small noisy value is clear of 0 dB by the lines' error model", "[analysis][evidence]") {
  // |L| = 0.05 (-26 dB) with a relative sigma of 2: |L| (1 + 2 sigma) =
  // 0.25 stays below 1, although two sigmas in dB (35 dB) reach past 0 dB.
  Response r;
  for (int k = 0; k <= 100; ++k) {
    r.frequency_hz.push_back(std::pow(10.0, k / 100.0));
    r.value.push_back(std::polar(0.05, rad_from_deg(-90.0)));
    r.relative_sigma.push_back(2.0);
  }
  const Margins m = find_margins(r);
  for (const auto& u : m.unresolved) CHECK(u.level != CrossingLevel::kGain);
  CHECK(m.summary.status("gain_crossover_hz") == SummaryStatus::kNoneInBand);
}

TEST_CASE("unresolved gain crossings that may pass -1 withdraw the Nyquist verdict", "[analysis][evidence]") {
  // The cubic's crossover region (0.2 to 1 rad/s), 33 of 401 lines, made so
  // noisy (relative sigma 0.8) that the count leaves it out; the kept lines
  // alone count a stable loop, but the phase there scatters past -180 deg.
  Response r = known::sample(cubic(1.0), known::hz(0.01), known::hz(100.0), 100);
  for (double& s : r.relative_sigma) s = 0.02;
  std::size_t first = 0, last = 0;
  for (std::size_t k = 0; k < r.size(); ++k) {
    if (r.frequency_hz[k] < known::hz(0.25)) first = k + 1;
    if (r.frequency_hz[k] <= known::hz(0.8)) last = k;
  }
  add_noise(r, first, last, 0.8, 7);
  REQUIRE(assess_stability(r).verdict == StabilityVerdict::kStable);  // the count alone
  const Margins m = find_margins(r);
  CHECK(m.gain_crossovers.empty());
  CHECK(m.summary.status("gain_crossover_hz") == SummaryStatus::kUnresolved);
  CHECK(m.stability.verdict == StabilityVerdict::kUndecided);
  CHECK_FALSE(m.stability.closed_loop_rhp_poles.has_value());
  CHECK_THAT(m.stability.reason, Catch::Contains("gain crossings") && Catch::Contains("may pass -1"));
  CHECK_FALSE(has(m, "margins.closed-loop-unstable"));
}

TEST_CASE("unresolved crossings far from -1 leave the verdict standing", "[analysis][evidence]") {
  // The cubic's top decade (10 to 100 rad/s, |L| below -60 dB) too noisy
  // to place its phase wobbles: they cannot reach -1, and the count stands.
  Response r = known::sample(cubic(1.0), known::hz(0.01), known::hz(100.0), 100);
  for (double& s : r.relative_sigma) s = 0.02;
  std::size_t first = 0;
  while (r.frequency_hz[first] < known::hz(10.0)) ++first;
  add_noise(r, first, r.size() - 1, 0.4, 3);
  const Margins m = find_margins(r);
  CHECK(m.stability.verdict == StabilityVerdict::kStable);
  REQUIRE(m.summary.gain_crossover_hz.has_value());
  CHECK(m.summary.status("gain_crossover_hz") == SummaryStatus::kMeasured);
}

TEST_CASE("a count that leaves out most lines is undecided", "[analysis][nyquist][evidence]") {
  // Exact values of the stable cubic; 3 lines of every 5 stated too noisy to count (0.8).
  Response r = known::sample(cubic(1.0), known::hz(0.01), known::hz(100.0), 100);
  for (std::size_t k = 0; k < r.size(); ++k) r.relative_sigma[k] = k % 5 < 3 ? 0.8 : 0.02;
  const auto a = assess_stability(r);
  CHECK(a.verdict == StabilityVerdict::kUndecided);
  CHECK_THAT(a.reason, Catch::Contains("cannot show that L stays clear of -1"));
  // Two of every five left out: the count stands (and says what it assumes).
  for (std::size_t k = 0; k < r.size(); ++k) r.relative_sigma[k] = k % 5 < 2 ? 0.8 : 0.02;
  const auto kept = assess_stability(r);
  CHECK(kept.verdict == StabilityVerdict::kStable);
}

TEST_CASE("a table through -1 within rounding is on the margin and undecided", "[analysis][nyquist][evidence]") {
  // K = 6 puts the cubic through -1 at sqrt 2 rad/s (Routh-Hurwitz: the
  // closed loop has poles on the imaginary axis). Lines on a grid with one
  // line at sqrt 2 rad/s, scaled so that it holds exactly -1; then the same
  // table times 1 - 1e-10 and 1 + 1e-10, which rounding cannot tell apart.
  Response r;
  for (int k = -150; k <= 150; ++k) {
    const double f = known::hz(std::sqrt(2.0) * std::pow(10.0, k / 100.0));
    r.frequency_hz.push_back(f);
    r.value.push_back(cubic(6.0)(f));
  }
  const std::complex<double> at_margin = r.value[150];
  for (auto& v : r.value) v *= -1.0 / at_margin;
  r.value[150] = -1.0;
  for (double factor : {1.0, 1.0 - 1e-10, 1.0 + 1e-10}) {
    INFO("factor " << factor);
    Response scaled = r;
    for (auto& v : scaled.value) v *= factor;
    CHECK(assess_stability(scaled).verdict == StabilityVerdict::kUndecided);
    const Margins m = find_margins(scaled);
    CHECK(m.stability.verdict == StabilityVerdict::kUndecided);
    CHECK_THAT(m.stability.reason, Catch::Contains("sits on the stability margin"));
    CHECK(has(m, "margins.on-margin"));
    CHECK_FALSE(has(m, "margins.closed-loop-unstable"));
  }
  // A gain 1e-6 off the margin is a verdict either way (Routh-Hurwitz: stable below 6).
  for (const auto& [factor, verdict] :
       {std::pair{1.0 - 1e-6, StabilityVerdict::kStable}, std::pair{1.0 + 1e-6, StabilityVerdict::kUnstable}}) {
    Response scaled = r;
    for (auto& v : scaled.value) v *= factor;
    const Margins m = find_margins(scaled);
    CHECK(m.stability.verdict == verdict);
    CHECK_FALSE(has(m, "margins.on-margin"));
  }
}
