#include "loopaudit/synth/truth_file.hpp"

#include <cmath>

#include "record/json_fields.hpp"

namespace loopaudit {

std::string truth_json(const Scenario& scenario, const Synthesis& synthesis, std::size_t grid_lines) {
  detail::Json out{{"schema_version", kTruthSchemaVersion}, {"tool", detail::tool_json()}, {"kind", "truth"}};
  out["scenario"] = {{"name", scenario.name},
                     {"sample_rate_hz", scenario.sample_rate_hz},
                     {"samples", scenario.sample_count()},
                     {"seed", scenario.seed},
                     {"delay_samples", scenario.delay_samples}};
  detail::put_margins(out, synthesis.truth);
  const DiscreteLoop loop(scenario);
  Response grid;
  const double span = std::log10(synthesis.truth_high_hz / synthesis.truth_low_hz);
  for (std::size_t k = 0; k < grid_lines; ++k) {
    const double f = synthesis.truth_low_hz * std::pow(10.0, span * static_cast<double>(k) / static_cast<double>(grid_lines - 1));
    grid.frequency_hz.push_back(f);
    grid.value.push_back(loop(f));
  }
  out["response"] = detail::response_json(grid);
  return out.dump(2) + "\n";
}

}  // namespace loopaudit
