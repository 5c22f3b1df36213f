// Margins of a tabulated loop with closed-form margins, through the installed
// library: an integrator with a pure delay,
//   L(j w) = (w_c / (j w)) exp(-j w tau),
// has its one gain crossover at w_c with phase margin 90 deg - w_c tau and
// delay margin PM / w_c = 1 / (4 f_c) - tau, and its first phase crossover
// where w tau = pi / 2, f_p = 1 / (4 tau), with gain margin 20 log10(f_p / f_c)
// (closed forms of the loop above). Exits non-zero on any mismatch.
#include <cmath>
#include <complex>
#include <cstdio>
#include <optional>
#include <string>

#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/units.hpp"

namespace {

constexpr double kCrossoverHz = 1000.0;
constexpr double kDelayS = 50e-6;
constexpr double kLowHz = 10.0;
constexpr double kHighHz = 20000.0;  // below the second phase crossover at 25 kHz
constexpr int kLinesPerDecade = 100;
// The lines are exact, so the crossings are placed by interpolating cubics in
// log frequency: with 100 lines a decade their error is of order 1e-7
// relative; 1e-5 leaves room without hiding a wrong formula.
constexpr double kRelativeTolerance = 1e-5;

int failures = 0;

void check(const char* name, double got, double expected) {
  bool ok = std::abs(got - expected) <= kRelativeTolerance * std::abs(expected);
  std::printf("%-18s %.9g (expected %.9g)%s\n", name, got, expected, ok ? "" : "  MISMATCH");
  if (!ok) ++failures;
}

void check(const char* name, const std::optional<loopaudit::Estimate>& got, double expected) {
  if (!got) {
    std::printf("%-18s missing (expected %.9g)  MISMATCH\n", name, expected);
    ++failures;
    return;
  }
  check(name, got->value, expected);
}

}  // namespace

int main() {
  using loopaudit::rad_per_s_from_hz;
  const double decades = std::log10(kHighHz / kLowHz);
  const int lines = static_cast<int>(std::round(decades * kLinesPerDecade)) + 1;
  loopaudit::Response table;
  for (int i = 0; i < lines; ++i) {
    double frequency_hz = kLowHz * std::pow(10.0, decades * i / (lines - 1));
    double w = rad_per_s_from_hz(frequency_hz);
    std::complex<double> value = rad_per_s_from_hz(kCrossoverHz) / std::complex<double>(0.0, w) *
                                 std::polar(1.0, -w * kDelayS);
    table.frequency_hz.push_back(frequency_hz);
    table.value.push_back(value);
    table.relative_sigma.push_back(0.0);
  }

  loopaudit::AnalysisResult result =
      loopaudit::analyze_response("integrator with delay", table, loopaudit::Convention::kDirect);
  const loopaudit::MarginSummary& summary = result.margins.summary;

  const double wc_tau = rad_per_s_from_hz(kCrossoverHz) * kDelayS;
  const double phase_crossover_hz = 1.0 / (4.0 * kDelayS);
  check("gain crossover Hz", summary.gain_crossover_hz, kCrossoverHz);
  check("phase margin deg", summary.phase_margin_deg, 90.0 - loopaudit::deg_from_rad(wc_tau));
  check("delay margin s", summary.delay_margin_s, 1.0 / (4.0 * kCrossoverHz) - kDelayS);
  check("phase crossover Hz", summary.phase_crossover_hz, phase_crossover_hz);
  check("gain margin dB", summary.gain_margin_db, loopaudit::db_from_ratio(phase_crossover_hz / kCrossoverHz));

  const auto verdict = result.margins.stability.verdict;
  std::printf("%-18s %s\n", "stability", loopaudit::verdict_name(verdict));
  if (verdict != loopaudit::StabilityVerdict::kStable) ++failures;

  // The version the library was built as is the package's.
  std::printf("%-18s %s (package %s)\n", "version", LOOPAUDIT_VERSION, PACKAGE_VERSION);
  if (std::string(LOOPAUDIT_VERSION) != PACKAGE_VERSION) ++failures;

  if (failures != 0) std::printf("%d mismatches\n", failures);
  return failures == 0 ? 0 : 1;
}
