#include "record/json_fields.hpp"

#include <cmath>

#include "loopaudit/units.hpp"

namespace loopaudit::detail {

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

Json tool_json() { return {{"name", "loopaudit"}, {"version", LOOPAUDIT_VERSION}}; }

}  // namespace loopaudit::detail
