#include <catch2/catch.hpp>

#include "loopaudit/error.hpp"
#include "loopaudit/loop/loop.hpp"

using namespace loopaudit;

namespace {
Response lines_of(std::vector<std::complex<double>> values) {
  Response r;
  for (std::size_t k = 0; k < values.size(); ++k) {
    r.frequency_hz.push_back(10.0 * static_cast<double>(k + 1));
    r.relative_sigma.push_back(0.01);
  }
  r.value = std::move(values);
  return r;
}

bool has_code(const Diagnostics& findings, const std::string& code) {
  for (const auto& d : findings) {
    if (d.code == code) return true;
  }
  return false;
}
}  // namespace

TEST_CASE("series injection gives L = -Y/X", "[loop]") {
  // DESIGN.md: x = y + z and y = -L x, so L = -Y/X.
  Diagnostics findings;
  const LoopResponse loop = to_loop(lines_of({{2.0, -1.0}}), Convention::kSeriesInjection, findings);
  CHECK(loop.lines.value[0] == std::complex<double>(-2.0, 1.0));
  CHECK(loop.lines.relative_sigma[0] == 0.01);
}

TEST_CASE("a closed-loop ratio T converts back to L = T/(1-T)", "[loop]") {
  // Unity negative feedback: T = L/(1+L) (exact algebra).
  const std::complex<double> l(-0.7, -0.4);
  Diagnostics findings;
  const LoopResponse loop = to_loop(lines_of({l / (1.0 + l)}), Convention::kClosedLoop, findings);
  CHECK(std::abs(loop.lines.value[0] - l) < 1e-12);
  // The relative error of L is that of T divided by |1 - T| = 1/|1 + L|.
  CHECK(loop.lines.relative_sigma[0] == Approx(0.01 * std::abs(1.0 + l)));
}

TEST_CASE("an inverted loop is flagged and a normal one is not", "[loop]") {
  // An integrator-like loop: high gain and -90 deg at the low end.
  std::vector<std::complex<double>> integrator;
  for (int k = 1; k <= 50; ++k) integrator.push_back(std::complex<double>(0.0, -100.0 / k));
  Diagnostics findings;
  to_loop(lines_of(integrator), Convention::kDirect, findings);
  CHECK_FALSE(has_code(findings, "loop.sign-suspect"));
  // The same data read with the series convention become -L: +90 deg.
  to_loop(lines_of(integrator), Convention::kSeriesInjection, findings);
  CHECK(has_code(findings, "loop.sign-suspect"));
}

TEST_CASE("convention names", "[loop]") {
  CHECK(convention_from_name("closed-loop") == Convention::kClosedLoop);
  CHECK_THROWS_AS(convention_from_name("open"), ConfigError);
}

TEST_CASE("the sign check holds the phase against the slope for zero one and two integrators", "[loop]") {
  // Bode's gain-phase relation for minimum-phase loops: n integrators fall
  // 20 n dB a decade with -90 n deg (closed form). Inverted, each loop sits
  // 180 deg away: a type-0 loop near 180 deg, a type-2 loop near 0 deg,
  // which a fixed window of suspicious phases cannot tell from a normal one.
  for (int n = 0; n <= 2; ++n) {
    std::vector<std::complex<double>> values;
    Response r;
    for (int k = 0; k < 60; ++k) {
      const double f = 10.0 * std::pow(10.0, k / 20.0);
      const std::complex<double> jw(0.0, f / 1e3);
      // A gain of 1000 at 1 kHz for n = 1 and 2; a type-0 loop of gain 100 rolling off at 10 kHz.
      const std::complex<double> l = n == 0 ? 100.0 / (1.0 + jw / 10.0) : 1000.0 / std::pow(jw, n);
      r.frequency_hz.push_back(f);
      r.value.push_back(l);
      r.relative_sigma.push_back(0.01);
    }
    INFO("integrators " << n);
    Diagnostics normal, inverted;
    to_loop(r, Convention::kDirect, normal);
    to_loop(r, Convention::kSeriesInjection, inverted);
    CHECK_FALSE(has_code(normal, "loop.sign-suspect"));
    CHECK(has_code(inverted, "loop.sign-suspect"));
  }
}

TEST_CASE("noisy lines at the low end do not vote on the sign", "[loop]") {
  // An inverted integrator under lines too noisy to use (relative sigma 0.6)
  // says nothing; only where the lines are reliable does the check speak.
  Response r;
  for (int k = 1; k <= 40; ++k) {
    r.frequency_hz.push_back(10.0 * k);
    r.value.push_back(std::complex<double>(0.0, 100.0 / k));  // -L of an integrator: +90 deg
    r.relative_sigma.push_back(0.6);
  }
  Diagnostics findings;
  to_loop(r, Convention::kDirect, findings);
  CHECK_FALSE(has_code(findings, "loop.sign-suspect"));
}
