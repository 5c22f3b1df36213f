#include <catch2/catch.hpp>
#include <cmath>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/periodic.hpp"
#include "loopaudit/spectral/response.hpp"
#include "loopaudit/spectral/stepped.hpp"
#include "loopaudit/spectral/welch.hpp"

using namespace loopaudit;
using Catch::Contains;

TEST_CASE("the defaults of the spectral options are valid", "[spectral][options]") {
  CHECK_NOTHROW(WelchOptions{}.validate());
  CHECK_NOTHROW(ResponseOptions{}.validate());
  CHECK_NOTHROW(PeriodicOptions{.period_samples = 1024}.validate());
  CHECK_NOTHROW(SteppedOptions{.sample_rate_hz = 1000.0}.validate());
}

TEST_CASE("Welch options out of range name the setting and its range", "[spectral][options]") {
  CHECK_THROWS_WITH(WelchOptions{.segment_length = 4}.validate(),
                    "'segment' 4 is out of range; use 8 to 4194304 samples");
  // Over 2^22 samples: refused before the segment's buffers are allocated.
  CHECK_THROWS_WITH(WelchOptions{.segment_length = 20000000}.validate(),
                    "'segment' 20000000 is out of range; use 8 to 4194304 samples");
  // The CLI end-to-end test looks for "overlap".
  CHECK_THROWS_WITH(WelchOptions{.overlap = 0.99}.validate(),
                    "'overlap' 0.99 is out of range; use a fraction from 0 to 0.9");
  CHECK_THROWS_AS(WelchOptions{.overlap = -0.1}.validate(), ConfigError);
  CHECK_THROWS_AS(WelchAccumulator(3, WelchOptions{.overlap = NAN}), ConfigError);
}

TEST_CASE("response options out of range are refused", "[spectral][options]") {
  CHECK_THROWS_WITH(ResponseOptions{.injection_floor_db = 0.0}.validate(),
                    Contains("'injection_floor_db' 0 is out of range"));
  CHECK_THROWS_AS(ResponseOptions{.injection_floor_db = INFINITY}.validate(), ConfigError);
  // estimate_response checks them before it looks at the spectra.
  Diagnostics findings;
  CHECK_THROWS_AS(estimate_response(CrossSpectra{}, {.injection_floor_db = -3.0}, findings), ConfigError);
}

TEST_CASE("periodic options out of range are refused by the accumulator", "[spectral][options]") {
  CHECK_THROWS_WITH(PeriodicOptions{.period_samples = 8}.validate(),
                    "'period_samples' 8 is out of range; use 16 to 4194304 samples");
  // Above 2^22 samples: refused before a period's buffers are made.
  CHECK_THROWS_WITH(PeriodicOptions{.period_samples = (std::size_t{1} << 22) + 1}.validate(),
                    Contains("'period_samples' 4194305 is out of range"));
  CHECK_THROWS_AS(PeriodicOptions({.period_samples = 64, .injection_floor_db = -1.0}).validate(), ConfigError);
  CHECK_THROWS_AS(PeriodicAccumulator({.period_samples = 0}), ConfigError);
}

TEST_CASE("stepped options out of range are refused by the estimator", "[spectral][options]") {
  CHECK_THROWS_WITH(SteppedOptions{}.validate(), Contains("'sample_rate_hz' 0 is out of range"));
  CHECK_THROWS_WITH(SteppedOptions({.sample_rate_hz = 1000.0, .settle_cycles = -1.0}).validate(),
                    Contains("'settle_cycles' -1"));
  CHECK_THROWS_AS(SteppedOptions({.sample_rate_hz = 1000.0, .settle_s = -0.5}).validate(), ConfigError);
  CHECK_THROWS_AS(SteppedOptions({.sample_rate_hz = 1000.0, .max_harmonic_ratio = 0.0}).validate(), ConfigError);
  CHECK_THROWS_AS(SteppedSineEstimator(SteppedOptions{.sample_rate_hz = -1.0}), ConfigError);
}
