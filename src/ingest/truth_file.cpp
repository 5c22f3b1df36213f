#include "loopaudit/ingest/truth_file.hpp"

#include <fstream>

#include "loopaudit/error.hpp"
#include "record/json_fields.hpp"

namespace loopaudit {

MarginSummary read_truth_summary(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path + ": cannot open the truth file");
  detail::Json root;
  try {
    root = detail::Json::parse(in);
  } catch (const detail::Json::exception& e) {
    throw InputError(path + ": not a JSON truth file: " + e.what());
  }
  if (!root.contains("summary") || !root["summary"].is_object()) throw InputError(path + ": no 'summary' in the truth file");
  const detail::Json& s = root["summary"];
  const auto get = [&](const char* key) -> std::optional<double> {
    return s.contains(key) && s[key].is_number() ? std::optional(s[key].get<double>()) : std::nullopt;
  };
  MarginSummary summary;
  summary.gain_crossover_hz = get("gain_crossover_hz");
  summary.phase_margin_deg = get("phase_margin_deg");
  summary.phase_crossover_hz = get("phase_crossover_hz");
  summary.gain_margin_db = get("gain_margin_db");
  summary.gain_increase_margin_db = get("gain_increase_margin_db");
  summary.gain_reduction_margin_db = get("gain_reduction_margin_db");
  summary.delay_margin_s = get("delay_margin_s");
  summary.modulus_margin = get("modulus_margin");
  summary.peak_sensitivity_db = get("peak_sensitivity_db");
  summary.modulus_frequency_hz = get("modulus_freq_hz");
  return summary;
}

}  // namespace loopaudit
