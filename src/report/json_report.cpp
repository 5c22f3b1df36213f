#include "loopaudit/report/json_report.hpp"

#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>

#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

using Json = nlohmann::ordered_json;

Json optional_number(const std::optional<double>& value) { return value ? Json(*value) : Json(nullptr); }

Json finite_or_null(double value) { return std::isfinite(value) ? Json(value) : Json(nullptr); }

// An interval as {"ci_low", "ci_high"} (an unbounded end as null), or null.
Json interval_json(const std::optional<Interval>& i) {
  return i ? Json{{"ci_low", finite_or_null(i->low)}, {"ci_high", finite_or_null(i->high)}} : Json(nullptr);
}

Json summary_json(const MarginSummary& s) {
  return {{"gain_crossover_hz", optional_number(s.gain_crossover_hz)},
          {"phase_margin_deg", optional_number(s.phase_margin_deg)},
          {"phase_crossover_hz", optional_number(s.phase_crossover_hz)},
          {"gain_margin_db", optional_number(s.gain_margin_db)},
          {"gain_increase_margin_db", optional_number(s.gain_increase_margin_db)},
          {"gain_reduction_margin_db", optional_number(s.gain_reduction_margin_db)},
          {"delay_margin_s", optional_number(s.delay_margin_s)},
          {"modulus_margin", optional_number(s.modulus_margin)},
          {"peak_sensitivity_db", optional_number(s.peak_sensitivity_db)},
          {"modulus_freq_hz", optional_number(s.modulus_frequency_hz)},
          {"intervals",
           {{"gain_crossover_hz", interval_json(s.gain_crossover_ci_hz)},
            {"phase_margin_deg", interval_json(s.phase_margin_ci_deg)},
            {"phase_crossover_hz", interval_json(s.phase_crossover_ci_hz)},
            {"gain_margin_db", interval_json(s.gain_margin_ci_db)},
            {"delay_margin_s", interval_json(s.delay_margin_ci_s)},
            {"modulus_margin", interval_json(s.modulus_margin_ci)},
            {"peak_sensitivity_db", interval_json(s.peak_sensitivity_ci_db)}}}};
}

void put_margins(Json& out, const Margins& m) {
  out["band"] = {{"low_hz", m.band_low_hz}, {"high_hz", m.band_high_hz}, {"lines", m.line_count}};
  out["confidence"] = m.confidence;
  out["gain_crossovers"] = Json::array();
  for (const auto& c : m.gain_crossovers) {
    out["gain_crossovers"].push_back({{"freq_hz", c.frequency_hz},
                                      {"phase_margin_deg", c.phase_margin_deg},
                                      {"delay_margin_s", c.delay_margin_s},
                                      {"merged_crossings", c.merged_crossings},
                                      {"intervals",
                                       {{"freq_hz", interval_json(c.frequency_ci_hz)},
                                        {"phase_margin_deg", interval_json(c.phase_margin_ci_deg)},
                                        {"delay_margin_s", interval_json(c.delay_margin_ci_s)}}},
                                      {"trust_flags", c.trust_flags}});
  }
  out["phase_crossovers"] = Json::array();
  for (const auto& c : m.phase_crossovers) {
    out["phase_crossovers"].push_back({{"freq_hz", c.frequency_hz},
                                       {"gain_margin_db", c.gain_margin_db},
                                       {"limits", direction_name(c.limits)},
                                       {"merged_crossings", c.merged_crossings},
                                       {"intervals",
                                        {{"freq_hz", interval_json(c.frequency_ci_hz)},
                                         {"gain_margin_db", interval_json(c.gain_margin_ci_db)}}},
                                       {"trust_flags", c.trust_flags}});
  }
  out["modulus"] = m.modulus ? Json{{"freq_hz", m.modulus->frequency_hz},
                                    {"modulus_margin", m.modulus->modulus_margin},
                                    {"peak_sensitivity_db", m.modulus->peak_sensitivity_db},
                                    {"at_band_edge", m.modulus->at_band_edge},
                                    {"intervals",
                                     {{"modulus_margin", interval_json(m.modulus->modulus_margin_ci)},
                                      {"peak_sensitivity_db", interval_json(m.modulus->peak_sensitivity_ci_db)}}}}
                             : Json(nullptr);
  out["disk"] = m.disk ? Json{{"alpha", m.disk->alpha},
                              {"freq_hz", m.disk->frequency_hz},
                              {"gain_low_db", finite_or_null(m.disk->gain_low_db)},
                              {"gain_high_db", optional_number(m.disk->gain_high_db)},
                              {"phase_deg", m.disk->phase_deg},
                              {"at_band_edge", m.disk->at_band_edge},
                              {"intervals",
                               {{"alpha", interval_json(m.disk->alpha_ci)},
                                {"gain_high_db", interval_json(m.disk->gain_high_ci_db)},
                                {"phase_deg", interval_json(m.disk->phase_ci_deg)}}}}
                       : Json(nullptr);
  const auto& st = m.stability;
  out["stability"] = {{"verdict", verdict_name(st.verdict)},
                      {"open_loop_rhp_poles", st.open_loop_rhp_poles},
                      {"encirclements", st.encirclements ? Json(*st.encirclements) : Json(nullptr)},
                      {"closed_loop_rhp_poles", st.closed_loop_rhp_poles ? Json(*st.closed_loop_rhp_poles) : Json(nullptr)},
                      {"low_frequency_integrators", st.low_frequency_integrators},
                      {"reason", st.reason},
                      {"assumptions", st.assumptions}};
  out["summary"] = summary_json(m.summary);
}

Json diagnostic_json(const Diagnostic& d) {
  Json out{{"severity", severity_name(d.severity)}, {"code", d.code}, {"message", d.message}};
  if (!d.where.channel.empty()) out["channel"] = d.where.channel;
  if (d.where.first_sample) out["first_sample"] = *d.where.first_sample;
  if (d.where.last_sample) out["last_sample"] = *d.where.last_sample;
  if (d.where.low_hz) out["low_hz"] = *d.where.low_hz;
  if (d.where.high_hz) out["high_hz"] = *d.where.high_hz;
  return out;
}

Json response_json(const Response& r) {
  Json out{{"freq_hz", r.frequency_hz}, {"re", Json::array()}, {"im", Json::array()}};
  for (const auto& v : r.value) {
    out["re"].push_back(v.real());
    out["im"].push_back(v.imag());
  }
  if (!r.coherence.empty()) out["coherence"] = r.coherence;
  if (r.relative_sigma.empty()) return out;
  Json mag_sigma = Json::array();
  Json phase_sigma = Json::array();
  for (double s : r.relative_sigma) {
    mag_sigma.push_back(db_from_nepers(s));
    phase_sigma.push_back(deg_from_rad(s));
  }
  out["mag_sigma_db"] = mag_sigma;
  out["phase_sigma_deg"] = phase_sigma;
  return out;
}

Json method_json(const AnalysisResult& result) {
  Json out{{"convention", convention_name(result.loop.convention)},
           {"formula", convention_formula(result.loop.convention)}};
  if (!result.record) {
    out["estimator"] = "table";
    return out;
  }
  const auto& o = result.options;
  if (result.excitation_kind) out["excitation"] = excitation_name(*result.excitation_kind);
  if (result.excitation) {
    out["excitation_found"] = {{"kind", excitation_name(result.excitation->kind)},
                               {"low_hz", result.excitation->low_hz},
                               {"high_hz", result.excitation->high_hz},
                               {"period_samples", result.excitation->period_samples},
                               {"dwells", result.excitation->dwells.size()},
                               {"snr_db", optional_number(result.excitation->snr_db)}};
  }
  out["estimator"] = o.response.estimator == Estimator::kReference ? "reference" : "two-channel";
  out["window"] = window_name(o.welch.window);
  out["segment_length"] = o.welch.segment_length;
  out["overlap"] = o.welch.overlap;
  out["segments"] = result.record->segments;
  out["effective_averages"] = result.record->effective_averages;
  out["injection_floor_db"] = o.response.injection_floor_db;
  return out;
}

Json input_json(const AnalysisResult& result) {
  Json out{{"path", result.origin}, {"kind", result.record ? "recording" : "table"}};
  if (result.record) {
    const auto& r = *result.record;
    out["sample_rate_hz"] = r.sample_rate_hz;
    out["samples"] = r.sample_count;
    out["channels"] = r.channel_names;
    out["roles"] = {{"z", r.roles.injection}, {"x", r.roles.x}, {"y", r.roles.y}};
  }
  return out;
}

Json tool_json() { return {{"name", "loopaudit"}, {"version", LOOPAUDIT_VERSION}}; }

}  // namespace

std::string analysis_json(const AnalysisResult& result) {
  Json out{{"schema_version", kSchemaVersion}, {"tool", tool_json()}};
  out["input"] = input_json(result);
  out["method"] = method_json(result);
  put_margins(out, result.margins);
  out["diagnostics"] = Json::array();
  for (const auto& d : result.findings) out["diagnostics"].push_back(diagnostic_json(d));
  out["response"] = response_json(result.loop.lines);
  return out.dump(2) + "\n";
}

std::string truth_json(const Scenario& scenario, const Synthesis& synthesis, std::size_t grid_lines) {
  Json out{{"schema_version", kSchemaVersion}, {"tool", tool_json()}, {"kind", "truth"}};
  out["scenario"] = {{"name", scenario.name},
                     {"sample_rate_hz", scenario.sample_rate_hz},
                     {"samples", scenario.sample_count()},
                     {"seed", scenario.seed},
                     {"delay_samples", scenario.delay_samples}};
  put_margins(out, synthesis.truth);
  const DiscreteLoop loop(scenario);
  Response grid;
  const double span = std::log10(synthesis.truth_high_hz / synthesis.truth_low_hz);
  for (std::size_t k = 0; k < grid_lines; ++k) {
    const double f = synthesis.truth_low_hz * std::pow(10.0, span * static_cast<double>(k) / static_cast<double>(grid_lines - 1));
    grid.frequency_hz.push_back(f);
    grid.value.push_back(loop(f));
  }
  out["response"] = response_json(grid);
  return out.dump(2) + "\n";
}

MarginSummary read_truth_summary(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path + ": cannot open the truth file");
  Json root;
  try {
    root = Json::parse(in);
  } catch (const Json::exception& e) {
    throw InputError(path + ": not a JSON truth file: " + e.what());
  }
  if (!root.contains("summary") || !root["summary"].is_object()) throw InputError(path + ": no 'summary' in the truth file");
  const Json& s = root["summary"];
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
