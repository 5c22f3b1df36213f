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
  for (const SummaryField& field : summary_fields()) {
    if (const auto value = get(field.key)) summary.*field.member = Estimate{*value, std::nullopt};
  }
  summary.modulus_frequency_hz = get(kModulusFrequencyKey);
  return summary;
}

}  // namespace loopaudit
