#include <catch2/catch.hpp>
#include <random>

#include "analysis/known_loops.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

using namespace loopaudit;

namespace {

// 400 lines a decade (0.58 % spacing), noise-free. The local quadratic fit
// leaves an error of order (spacing)^3 against the closed forms; these
// bounds hold that with a margin of about ten.
constexpr int kLinesPerDecade = 400;
constexpr double kFrequencyRel = 2e-6;
constexpr double kAngleDeg = 1e-3;
constexpr double kGainDb = 1e-4;
// The modulus margin is refined by a parabola through three lines; its error
// is of order spacing^2 times the curvature.
constexpr double kModulusRel = 1e-4;

void check_against(const known::KnownLoop& k, const Margins& m) {
  INFO(k.name);
  const MarginSummary& s = m.summary;
  REQUIRE(s.gain_crossover_hz.has_value());
  CHECK(rad_per_s_from_hz(s.gain_crossover_hz->value) == Approx(*k.gain_crossover_rad_s).epsilon(kFrequencyRel));
  CHECK(s.phase_margin_deg->value == Approx(*k.phase_margin_deg).margin(kAngleDeg));
  CHECK(s.delay_margin_s->value == Approx(*k.delay_margin_s).epsilon(1e-5));
  REQUIRE(s.phase_crossover_hz.has_value());
  CHECK(rad_per_s_from_hz(s.phase_crossover_hz->value) == Approx(*k.phase_crossover_rad_s).epsilon(kFrequencyRel));
  CHECK(s.gain_margin_db->value == Approx(*k.gain_margin_db).margin(kGainDb));
  REQUIRE(s.modulus_margin.has_value());
  CHECK(s.modulus_margin->value == Approx(k.modulus_margin).epsilon(kModulusRel));
  CHECK(s.peak_sensitivity_db->value == Approx(-db_from_ratio(k.modulus_margin)).margin(1e-3));
}

}  // namespace

TEST_CASE("margins of sampled known loops match the closed forms", "[analysis][margins]") {
  for (const auto& k : known::table()) {
    const Margins m = find_margins(known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade));
    check_against(k, m);
  }
}

TEST_CASE("K/(s(s+1)(s+2)) crosses -180 deg at sqrt(2) rad/s with GM = 20 log10(6/K)", "[analysis][margins]") {
  // Closed form (data/reference/known_loops.csv): L(j sqrt 2) = -K/6 for every K.
  for (double gain : {0.5, 1.0, 2.4, 4.0}) {
    const LoopFunction loop = [gain](double f) { auto s = known::s_of(f); return gain / (s * (s + 1.0) * (s + 2.0)); };
    const Margins m = find_margins(known::sample(loop, known::hz(0.01), known::hz(100.0), kLinesPerDecade));
    REQUIRE(m.phase_crossovers.size() == 1);
    CHECK(rad_per_s_from_hz(m.phase_crossovers[0].frequency_hz.value) == Approx(std::sqrt(2.0)).epsilon(kFrequencyRel));
    CHECK(m.phase_crossovers[0].gain_margin_db.value == Approx(db_from_ratio(6.0 / gain)).margin(kGainDb));
  }
  // Common practice: a Nyquist curve crossing the negative real axis at -0.4
  // means a gain margin of -20 log10(0.4) = 7.96 dB (K = 2.4 puts it there).
  const LoopFunction loop = [](double f) { auto s = known::s_of(f); return 2.4 / (s * (s + 1.0) * (s + 2.0)); };
  const Margins m = find_margins(known::sample(loop, known::hz(0.01), known::hz(100.0), kLinesPerDecade));
  CHECK(m.summary.gain_margin_db->value == Approx(7.96).margin(0.005));
  CHECK(m.phase_crossovers[0].limits == GainDirection::kIncrease);
}

TEST_CASE("K e^(-sT)/s: crossover at K; PM = 90 - (180/pi) K T; delay margin PM/K", "[analysis][margins]") {
  // Closed form (data/reference/known_loops.csv); phase crossovers at (4k+1) pi / (2T)
  // with GM_k = omega_k / K, the smallest first.
  for (const auto& [gain, delay] : {std::pair{1.0, 0.5}, std::pair{2.0, 0.1}, std::pair{0.5, 1.2}}) {
    const LoopFunction loop = [gain, delay](double f) { auto s = known::s_of(f); return gain * std::exp(-delay * s) / s; };
    const double top = 9.5 * std::numbers::pi / (2.0 * delay);
    const Margins m = find_margins(known::sample(loop, known::hz(gain / 100.0), known::hz(top), kLinesPerDecade));
    INFO("K = " << gain << ", T = " << delay);
    const double pm = 90.0 - deg_from_rad(gain * delay);
    REQUIRE(m.gain_crossovers.size() == 1);
    CHECK(rad_per_s_from_hz(m.gain_crossovers[0].frequency_hz.value) == Approx(gain).epsilon(kFrequencyRel));
    CHECK(m.gain_crossovers[0].phase_margin_deg.value == Approx(pm).margin(kAngleDeg));
    CHECK(m.gain_crossovers[0].delay_margin_s.value == Approx(rad_from_deg(pm) / gain).epsilon(1e-5));
    REQUIRE(m.phase_crossovers.size() == 3);  // (4k+1) pi / (2T) for k = 0, 1, 2 lie below `top`
    for (std::size_t k = 0; k < 3; ++k) {
      const double omega = (4.0 * static_cast<double>(k) + 1.0) * std::numbers::pi / (2.0 * delay);
      CHECK(rad_per_s_from_hz(m.phase_crossovers[k].frequency_hz.value) == Approx(omega).epsilon(kFrequencyRel));
      CHECK(m.phase_crossovers[k].gain_margin_db.value == Approx(db_from_ratio(omega / gain)).margin(kGainDb));
    }
    CHECK(m.summary.gain_margin_db->value == Approx(m.phase_crossovers[0].gain_margin_db.value));
  }
  // Common practice: a unit-circle crossing at 210 deg (-150 deg) is a 30 deg
  // phase margin; K = 1, T = pi/3 puts it there.
  const LoopFunction loop = [](double f) { auto s = known::s_of(f); return std::exp(-std::numbers::pi / 3.0 * s) / s; };
  const Margins m = find_margins(known::sample(loop, known::hz(0.01), known::hz(10.0), kLinesPerDecade));
  CHECK(m.summary.phase_margin_deg->value == Approx(30.0).margin(kAngleDeg));
}

TEST_CASE("a conditionally stable loop reports both phase crossovers and their directions", "[analysis][margins]") {
  // 3(s+6)^2/(s(s+1)^2): L(j2) = -12, L(j3) = -4.5 (data/reference/known_loop_crossings.csv).
  const auto k = known::table()[6];
  const auto expected = known::reference_crossovers(k.name, "phase");
  const Margins m = find_margins(known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade));
  REQUIRE(m.phase_crossovers.size() == 2);
  REQUIRE(expected.size() == 2);
  for (std::size_t i = 0; i < 2; ++i) {
    CHECK(rad_per_s_from_hz(m.phase_crossovers[i].frequency_hz.value) ==
          Approx(expected[i].number("frequency_rad_s")).epsilon(kFrequencyRel));
    CHECK(m.phase_crossovers[i].gain_margin_db.value == Approx(expected[i].number("gain_margin_db")).margin(kGainDb));
  }
  for (const auto& c : m.phase_crossovers) CHECK(c.limits == GainDirection::kDecrease);
  // Stable for gain scale above 2/9 (data/reference/known_loops.csv): the margin
  // against reduction is the crossover at 3 rad/s, 2/9 = -13.064 dB; no upper limit.
  CHECK(m.summary.gain_reduction_margin_db->value == Approx(expected[1].number("gain_margin_db")).margin(kGainDb));
  CHECK_FALSE(m.summary.gain_increase_margin_db.has_value());
}

TEST_CASE("a loop with three gain crossovers lists all three", "[analysis][margins]") {
  // data/reference/known_loop_crossings.csv.
  const auto k = known::table()[7];
  const auto expected = known::reference_crossovers(k.name, "gain");
  const Margins m = find_margins(known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade));
  REQUIRE(m.gain_crossovers.size() == 3);
  REQUIRE(expected.size() == 3);
  double omegas[3], pms[3];
  for (std::size_t i = 0; i < 3; ++i) {
    omegas[i] = expected[i].number("frequency_rad_s");
    pms[i] = expected[i].number("phase_margin_deg");
  }
  for (std::size_t i = 0; i < 3; ++i) {
    CHECK(rad_per_s_from_hz(m.gain_crossovers[i].frequency_hz.value) == Approx(omegas[i]).epsilon(kFrequencyRel));
    CHECK(m.gain_crossovers[i].phase_margin_deg.value == Approx(pms[i]).margin(kAngleDeg));
  }
  // The delay margin comes from the third crossover, not the smallest PM.
  CHECK(m.summary.delay_margin_s->value == Approx(rad_from_deg(pms[2]) / omegas[2]).epsilon(1e-5));
  CHECK(rad_per_s_from_hz(*m.summary.modulus_frequency_hz) ==
        Approx(known::reference_values(k.name).number("modulus_frequency_rad_s")).epsilon(1e-4));
}

TEST_CASE("the discrete hold loop K T/(z(z-1)) matches its closed form", "[analysis][margins]") {
  // data/reference/known_loops.csv, row 0.5/(z(z-1)) at T = 1 s: phase crossover
  // at f = fs/6, GM = 1/(K T); PM = pi/2 - 1.5 theta_c with theta_c = 2 asin(K T / 2).
  const auto expected = known::reference_values(known::kDiscreteHold);
  const Margins m = find_margins(known::sample(known::discrete_hold_loop, 1e-4, 0.4999, kLinesPerDecade));
  REQUIRE(m.gain_crossovers.size() == 1);
  CHECK(m.gain_crossovers[0].frequency_hz.value ==
        Approx(known::hz(expected.number("gain_crossover_rad_s"))).epsilon(kFrequencyRel));
  CHECK(m.gain_crossovers[0].phase_margin_deg.value == Approx(expected.number("phase_margin_deg")).margin(kAngleDeg));
  CHECK(m.gain_crossovers[0].delay_margin_s.value == Approx(expected.number("delay_margin_s")).epsilon(1e-5));
  REQUIRE(m.phase_crossovers.size() == 1);
  CHECK(m.phase_crossovers[0].frequency_hz.value ==
        Approx(known::hz(expected.number("phase_crossover_rad_s"))).epsilon(kFrequencyRel));
  CHECK(m.phase_crossovers[0].gain_margin_db.value == Approx(expected.number("gain_margin_db")).margin(kGainDb));
  CHECK(m.summary.modulus_margin->value == Approx(expected.number("modulus_margin")).epsilon(kModulusRel));
}

TEST_CASE("modulus margin bounds the classical margins", "[analysis][margins]") {
  // Astrom and Murray, "Feedback Systems": GM >= 1/(1 - s_m), PM >= 2 asin(s_m/2)
  // (data/reference/known_loops.csv).
  for (const auto& k : known::table()) {
    INFO(k.name);
    const Margins m = find_margins(known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade));
    const double s_m = m.summary.modulus_margin->value;
    for (const auto& c : m.gain_crossovers) CHECK(rad_from_deg(c.phase_margin_deg.value) >= 2.0 * std::asin(s_m / 2.0));
    for (const auto& c : m.phase_crossovers) {
      if (c.gain_margin_db.value > 0.0) CHECK(ratio_from_db(c.gain_margin_db.value) >= 1.0 / (1.0 - s_m));
    }
  }
}

TEST_CASE("noise crossings near one crossover merge into one", "[analysis][margins]") {
  // 1/(s(s+1)(s+2)) with complex-Gaussian line errors of relative sigma 0.03
  // on 2000 lines a decade: |L| crosses 1 many times near 0.4457 rad/s.
  const auto k = known::table()[0];
  Response r = known::sample(k.loop, k.low_hz, k.high_hz, 2000);
  std::mt19937_64 rng(7);
  std::normal_distribution<double> normal(0.0, 0.03);
  for (std::size_t i = 0; i < r.size(); ++i) {
    r.value[i] *= std::exp(std::complex<double>(normal(rng), normal(rng)));
    r.relative_sigma[i] = 0.03;
  }
  const Margins m = find_margins(r);
  REQUIRE(m.gain_crossovers.size() == 1);
  CHECK(m.gain_crossovers[0].merged_crossings > 1);
  // A 0.03 relative error on lines whose gain falls about 0.45 nepers per
  // 0.1 decade moves the crossing by well under 1 %.
  CHECK(rad_per_s_from_hz(m.gain_crossovers[0].frequency_hz.value) == Approx(*k.gain_crossover_rad_s).epsilon(0.01));
  CHECK(m.gain_crossovers[0].phase_margin_deg.value == Approx(*k.phase_margin_deg).margin(1.0));
  REQUIRE(m.phase_crossovers.size() == 1);
  CHECK(m.phase_crossovers[0].gain_margin_db.value == Approx(*k.gain_margin_db).margin(0.3));
}

TEST_CASE("a phase that touches -180 deg within noise is a near miss and not a crossover", "[analysis][margins]") {
  // Invented curve: the phase dips to -179.5 deg and turns back, |L| = 0.5;
  // line errors of 0.02 rad (1.15 deg) make it cross -180 deg now and then.
  Response r;
  std::mt19937_64 rng(3);
  std::normal_distribution<double> normal(0.0, 0.02);
  for (int k = 0; k < 400; ++k) {
    const double u = -1.0 + 2.0 * k / 399.0;  // log10 f from -1 to 1
    const double phase_deg = -179.5 + 40.0 * u * u;
    r.frequency_hz.push_back(std::pow(10.0, u));
    r.value.push_back(0.5 * std::exp(std::complex<double>(normal(rng), rad_from_deg(phase_deg) + normal(rng))));
    r.relative_sigma.push_back(0.02);
  }
  const Margins m = find_margins(r);
  CHECK(m.phase_crossovers.empty());
  bool near_miss = false;
  for (const auto& d : m.findings) near_miss = near_miss || d.code == "margins.near-crossing";
  CHECK(near_miss);
}

TEST_CASE("crossings among lines too noisy to place are not listed but reported", "[analysis][margins]") {
  const auto k = known::table()[0];
  Response r = known::sample(k.loop, k.low_hz, k.high_hz, 200);
  for (double& s : r.relative_sigma) s = 1.0;
  const Margins m = find_margins(r);
  CHECK(m.gain_crossovers.empty());
  CHECK(m.phase_crossovers.empty());
  bool reported = false;
  for (const auto& d : m.findings) reported = reported || d.code == "margins.unresolved-crossings";
  CHECK(reported);
}

TEST_CASE("none in band is a result and not a number", "[analysis][margins]") {
  // 1/(s(s+1)(s+2)) between 0.01 and 0.1 rad/s: |L| > 1 and phase above -180 deg.
  const auto k = known::table()[0];
  const Margins m = find_margins(known::sample(k.loop, known::hz(0.01), known::hz(0.1), 100));
  CHECK(m.gain_crossovers.empty());
  CHECK(m.phase_crossovers.empty());
  CHECK_FALSE(m.summary.phase_margin_deg.has_value());
  CHECK_FALSE(m.summary.gain_margin_db.has_value());
  CHECK_FALSE(m.summary.delay_margin_s.has_value());
  REQUIRE(m.findings.size() >= 2);
  CHECK(m.findings[0].code == "margins.no-gain-crossover");
  CHECK_THAT(m.findings[0].message, Catch::Contains("above 0 dB"));
  CHECK(m.modulus->at_band_edge);
}

TEST_CASE("fewer than two lines give no margins and say why", "[analysis][margins]") {
  Response r;
  r.frequency_hz = {1.0};
  r.value = {{-2.0, 0.0}};
  r.relative_sigma = {0.0};
  const Margins m = find_margins(r);
  CHECK(m.gain_crossovers.empty());
  CHECK(m.phase_crossovers.empty());
  CHECK_FALSE(m.summary.phase_margin_deg.has_value());
  CHECK(m.stability.verdict == StabilityVerdict::kUndecided);
  REQUIRE(m.findings.size() == 1);
  CHECK(m.findings[0].code == "margins.too-few-lines");
}

TEST_CASE("disk margin of an integrator is alpha = 2 with 90 deg of phase", "[analysis][disk]") {
  // L = a/s: |S - T| = |(jw - a)/(jw + a)| = 1 at every frequency, so
  // alpha = 2 (closed form): any gain increase and 2 atan(1) = 90 deg
  // (data/reference/disk_margins.csv, row a/s; Seiler, Packard, Gahinet, IEEE
  // Control Systems Magazine 2020, for the definitions).
  const auto expected = reference::Table("disk_margins.csv").row("a/s");
  const LoopFunction loop = [](double f) { return 5.0 / known::s_of(f); };
  const Margins m = find_margins(known::sample(loop, 0.01, 100.0, 100));
  REQUIRE(m.disk.has_value());
  CHECK(m.disk->alpha.value == Approx(expected.number("alpha")).margin(1e-9));
  CHECK(m.disk->phase_deg.value == Approx(expected.number("phase_deg")).margin(1e-6));
  CHECK(std::isinf(m.disk->gain_high_db.value));
}

TEST_CASE("disk margins are inner bounds of the classical margins on every known loop", "[analysis][disk]") {
  // Seiler, Packard, Gahinet 2020 (data/reference/disk_margins.csv): the disk
  // gain range lies inside the gain margins and the disk phase inside the
  // phase margins. The sampled disk margin matches the exact one
  // (golden-section on the loop function).
  for (const auto& k : known::table()) {
    INFO(k.name);
    const Margins m = find_margins(known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade));
    const Margins exact = exact_margins(k.loop, k.low_hz, k.high_hz);
    REQUIRE(m.disk.has_value());
    CHECK(m.disk->alpha.value == Approx(exact.disk->alpha.value).epsilon(1e-4));
    for (const auto& c : m.gain_crossovers) CHECK(std::abs(c.phase_margin_deg.value) >= m.disk->phase_deg.value - 1e-6);
    for (const auto& c : m.phase_crossovers) {
      if (c.gain_margin_db.value > 0.0 && std::isfinite(m.disk->gain_high_db.value)) {
        CHECK(c.gain_margin_db.value >= m.disk->gain_high_db.value - 1e-6);
      }
      if (c.gain_margin_db.value < 0.0) CHECK(c.gain_margin_db.value <= m.disk->gain_low_db + 1e-6);
    }
  }
}

TEST_CASE("crossings that deserve less trust are flagged with the reason", "[analysis][trust]") {
  const auto k = known::table()[0];  // 1/(s(s+1)(s+2)): gain crossover at 0.4457 rad/s
  const auto flags_of = [](const Margins& m) { return m.gain_crossovers.at(0).trust_flags; };
  using Flags = std::vector<std::string>;
  CHECK(flags_of(find_margins(known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade))).empty());
  // Five lines a decade: neighbours 58 % apart.
  CHECK(flags_of(find_margins(known::sample(k.loop, k.low_hz, k.high_hz, 5))) == Flags{kTrustSparseLines});
  // A band that starts just below the crossover.
  CHECK(flags_of(find_margins(known::sample(k.loop, known::hz(0.445), k.high_hz, kLinesPerDecade))) ==
        Flags{kTrustBandEdge});
  // Lines of low coherence around it.
  Response r = known::sample(k.loop, k.low_hz, k.high_hz, kLinesPerDecade);
  r.coherence.assign(r.size(), 0.3);
  CHECK(flags_of(find_margins(r)) == Flags{kTrustLowCoherence});
}
