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
