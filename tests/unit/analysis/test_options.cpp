#include <catch2/catch.hpp>
#include <cmath>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/analysis/nyquist.hpp"
#include "loopaudit/error.hpp"

using namespace loopaudit;
using Catch::Contains;

TEST_CASE("the defaults of the analysis options are valid", "[analysis][options]") {
  CHECK_NOTHROW(MarginOptions{}.validate());
  CHECK_NOTHROW(StabilityOptions{}.validate());
}

TEST_CASE("margin options out of range name the setting and its range", "[analysis][options]") {
  // The CLI end-to-end test looks for "'confidence'" in a settings file's error.
  CHECK_THROWS_WITH(MarginOptions{.confidence = 1.5}.validate(),
                    "'confidence' 1.5 is out of range; use a level between 0.5 and 1 (both excluded)");
  CHECK_THROWS_AS(MarginOptions{.confidence = 0.5}.validate(), ConfigError);
  CHECK_THROWS_AS(MarginOptions{.confidence = NAN}.validate(), ConfigError);
  CHECK_THROWS_WITH(MarginOptions{.fit_half_width = 0}.validate(), Contains("'fit_half_width' 0"));
  CHECK_THROWS_AS(MarginOptions{.peak_half_width = 0}.validate(), ConfigError);
  CHECK_THROWS_AS(MarginOptions{.slope_half_width = 0}.validate(), ConfigError);
  CHECK_THROWS_AS(MarginOptions{.merge_sigmas = -1.0}.validate(), ConfigError);
  CHECK_THROWS_AS(MarginOptions{.max_line_sigma = 0.0}.validate(), ConfigError);
  CHECK_THROWS_WITH(MarginOptions{.open_loop_rhp_poles = -1}.validate(), Contains("'open_loop_rhp_poles' -1"));
}

TEST_CASE("find_margins and assess_stability check their options first", "[analysis][options]") {
  Response one_line;
  one_line.frequency_hz = {10.0};
  one_line.value = {{-0.5, 0.0}};
  one_line.relative_sigma = {0.01};
  // Even a response too short for margins: the options are checked before the lines.
  CHECK_THROWS_AS(find_margins(one_line, {.confidence = 0.2}), ConfigError);
  CHECK_THROWS_AS(assess_stability(one_line, {.open_loop_rhp_poles = -2}), ConfigError);
  CHECK_THROWS_WITH(StabilityOptions{.clear_sigmas = -1.0}.validate(), Contains("'clear_sigmas' -1"));
  CHECK_THROWS_AS(StabilityOptions{.max_relative_sigma = 0.0}.validate(), ConfigError);
}
