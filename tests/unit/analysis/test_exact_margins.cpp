#include <catch2/catch.hpp>

#include "analysis/known_loops.hpp"
#include "loopaudit/units.hpp"

using namespace loopaudit;

namespace {
// Root finding to the last bit leaves only the reference values' own
// rounding (12 significant digits in data/reference/known_loops.csv).
constexpr double kRel = 1e-7;
constexpr double kDeg = 1e-6;
}  // namespace

TEST_CASE("exact margins of known loops match the closed forms", "[analysis][exact]") {
  for (const auto& k : known::table()) {
    INFO(k.name);
    const Margins m = exact_margins(k.loop, k.low_hz, k.high_hz);
    const MarginSummary& s = m.summary;
    CHECK(rad_per_s_from_hz(s.gain_crossover_hz->value) == Approx(*k.gain_crossover_rad_s).epsilon(kRel));
    CHECK(s.phase_margin_deg->value == Approx(*k.phase_margin_deg).margin(kDeg));
    CHECK(s.delay_margin_s->value == Approx(*k.delay_margin_s).epsilon(1e-6));
    CHECK(rad_per_s_from_hz(s.phase_crossover_hz->value) == Approx(*k.phase_crossover_rad_s).epsilon(kRel));
    CHECK(s.gain_margin_db->value == Approx(*k.gain_margin_db).margin(1e-6));
    CHECK(s.modulus_margin->value == Approx(k.modulus_margin).epsilon(1e-6));
  }
}

TEST_CASE("exact margins of the discrete hold loop", "[analysis][exact]") {
  // data/reference/known_loops.csv, row 0.5/(z(z-1)) at T = 1 s (closed forms
  // there as the nearest double): phase crossover at fs/6 with GM 2.
  const auto expected = known::reference_values(known::kDiscreteHold);
  const Margins m = exact_margins(known::discrete_hold_loop, 1e-4, 0.4999);
  CHECK(m.gain_crossovers.at(0).phase_margin_deg.value == Approx(expected.number("phase_margin_deg")).margin(kDeg));
  CHECK(m.phase_crossovers.at(0).frequency_hz.value ==
        Approx(known::hz(expected.number("phase_crossover_rad_s"))).epsilon(1e-12));
  CHECK(m.phase_crossovers.at(0).gain_margin_db.value == Approx(expected.number("gain_margin_db")).margin(1e-9));
  CHECK(m.gain_crossovers.at(0).delay_margin_s.value == Approx(expected.number("delay_margin_s")).epsilon(1e-8));
  CHECK(m.summary.modulus_margin->value == Approx(expected.number("modulus_margin")).epsilon(1e-7));
}
