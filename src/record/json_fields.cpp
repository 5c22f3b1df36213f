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

Json estimate_value(const std::optional<Estimate>& e) { return e ? Json(e->value) : Json(nullptr); }

// An estimate's interval, the method that made it and, for the jackknife,
// the first-order interval beside it and the value before a bias correction.
Json estimate_interval(const Estimate& e) {
  Json out = interval_json(e.interval);
  if (out.is_null()) return out;
  out["method"] = interval_method_name(e.method);
  if (e.first_order) out["first_order"] = interval_json(e.first_order);
  if (e.uncorrected) out["value_before_bias_correction"] = *e.uncorrected;
  return out;
}

Json estimate_interval(const std::optional<Estimate>& e) { return e ? estimate_interval(*e) : Json(nullptr); }

Json uncertainty_json(const UncertaintyMethod& u) {
  Json out{{"method", interval_method_name(u.method)}};
  if (u.method == IntervalMethod::kJackknife) {
    out["replicates"] = u.replicates;
    out["degrees_of_freedom"] = u.degrees_of_freedom;
    out["basis"] = u.basis;
  } else {
    out["reason"] = u.first_order_reason;
  }
  out["half_width_factor"] = u.half_width_factor;
  return out;
}

Json summary_json(const MarginSummary& s) {
  Json out = Json::object();
  Json intervals = Json::object();
  for (const SummaryField& field : summary_fields()) {
    out[field.key] = estimate_value(s.*field.member);
    if (field.interval_listed) intervals[field.key] = estimate_interval(s.*field.member);
  }
  out[kModulusFrequencyKey] = optional_number(s.modulus_frequency_hz);
  out["intervals"] = intervals;
  out["possible"] = Json::array();
  for (const PossibleMargin& p : s.possible) {
    out["possible"].push_back({{"key", p.key}, {"low_hz", p.low_hz}, {"high_hz", p.high_hz},
                               {"range", {{"low", finite_or_null(p.range.low)}, {"high", finite_or_null(p.range.high)}}}});
  }
  // Why each value is set or null: "measured", "none-in-band" or "unresolved".
  out["status"] = Json::object();
  for (const SummaryField& field : summary_fields()) out["status"][field.key] = status_name(s.status(field.key));
  return out;
}

// Stretches where crossings were neither placed nor ruled out, with the
// other curve's range there.
Json unresolved_json(const std::vector<UnresolvedStretch>& stretches) {
  Json out = Json::array();
  for (const UnresolvedStretch& u : stretches) {
    out.push_back({{"level", level_name(u.level)}, {"low_hz", u.low_hz}, {"high_hz", u.high_hz},
                   {"crossings", u.crossings},
                   {u.level == CrossingLevel::kPhase ? "gain_db" : "phase_margin_deg",
                    {{"low", finite_or_null(u.other.low)}, {"high", finite_or_null(u.other.high)}}}});
  }
  return out;
}

void put_margins(Json& out, const Margins& m) {
  out["band"] = {{"low_hz", m.band_low_hz}, {"high_hz", m.band_high_hz}, {"lines", m.line_count}};
  out["confidence"] = m.confidence;
  out["uncertainty"] = uncertainty_json(m.uncertainty);
  out["gain_crossovers"] = Json::array();
  for (const auto& c : m.gain_crossovers) {
    out["gain_crossovers"].push_back({{"freq_hz", c.frequency_hz.value},
                                      {"phase_margin_deg", c.phase_margin_deg.value},
                                      {"delay_margin_s", c.delay_margin_s.value},
                                      {"merged_crossings", c.merged_crossings},
                                      {"intervals",
                                       {{"freq_hz", estimate_interval(c.frequency_hz)},
                                        {"phase_margin_deg", estimate_interval(c.phase_margin_deg)},
                                        {"delay_margin_s", estimate_interval(c.delay_margin_s)}}},
                                      {"trust_flags", c.trust_flags}});
  }
  out["phase_crossovers"] = Json::array();
  for (const auto& c : m.phase_crossovers) {
    out["phase_crossovers"].push_back({{"freq_hz", c.frequency_hz.value},
                                       {"gain_margin_db", c.gain_margin_db.value},
                                       {"limits", direction_name(c.limits)},
                                       {"merged_crossings", c.merged_crossings},
                                       {"intervals",
                                        {{"freq_hz", estimate_interval(c.frequency_hz)},
                                         {"gain_margin_db", estimate_interval(c.gain_margin_db)}}},
                                       {"trust_flags", c.trust_flags}});
  }
  out["modulus"] = m.modulus ? Json{{"freq_hz", m.modulus->frequency_hz},
                                    {"modulus_margin", m.modulus->modulus_margin.value},
                                    {"peak_sensitivity_db", m.modulus->peak_sensitivity_db.value},
                                    {"at_band_edge", m.modulus->at_band_edge},
                                    {"intervals",
                                     {{"modulus_margin", estimate_interval(m.modulus->modulus_margin)},
                                      {"peak_sensitivity_db", estimate_interval(m.modulus->peak_sensitivity_db)}}}}
                             : Json(nullptr);
  out["disk"] = m.disk ? Json{{"alpha", m.disk->alpha.value},
                              {"freq_hz", m.disk->frequency_hz},
                              {"gain_low_db", finite_or_null(m.disk->gain_low_db)},
                              {"gain_high_db", finite_or_null(m.disk->gain_high_db.value)},
                              {"phase_deg", m.disk->phase_deg.value},
                              {"at_band_edge", m.disk->at_band_edge},
                              {"intervals",
                               {{"alpha", estimate_interval(m.disk->alpha)},
                                {"gain_high_db", estimate_interval(m.disk->gain_high_db)},
                                {"phase_deg", estimate_interval(m.disk->phase_deg)}}}}
                       : Json(nullptr);
  out["unresolved"] = unresolved_json(m.unresolved);
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
