#include "loopaudit/report/json_report.hpp"

#include "loopaudit/fft/window.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/spectral/response.hpp"
#include "record/json_fields.hpp"

namespace loopaudit {
namespace {

using detail::Json;
using detail::optional_number;

Json diagnostic_json(const Diagnostic& d) {
  Json out{{"severity", severity_name(d.severity)}, {"code", d.code}, {"message", d.message}};
  if (!d.where.channel.empty()) out["channel"] = d.where.channel;
  if (d.where.first_sample) out["first_sample"] = *d.where.first_sample;
  if (d.where.last_sample) out["last_sample"] = *d.where.last_sample;
  if (d.where.low_hz) out["low_hz"] = *d.where.low_hz;
  if (d.where.high_hz) out["high_hz"] = *d.where.high_hz;
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
  out["estimator"] = estimator_name(o.response.estimator);
  out["window"] = window_name(o.welch.window);
  out["segment_length"] = o.welch.segment_length;
  out["overlap"] = o.welch.overlap;
  out["segments"] = result.loop.lines.method.averages;  // segments, periods or dwells (schema 1 name)
  out["effective_averages"] = result.loop.lines.method.effective_averages;
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
    out["read_as"] = r.layout;  // how the file was read: a raw layout, the datasets, factors by name
  }
  return out;
}


}  // namespace

std::string analysis_json(const AnalysisResult& result) {
  Json out{{"schema_version", kSchemaVersion}, {"tool", detail::tool_json()}};
  out["input"] = input_json(result);
  out["method"] = method_json(result);
  detail::put_margins(out, result.margins);
  out["diagnostics"] = Json::array();
  for (const auto& d : result.findings) out["diagnostics"].push_back(diagnostic_json(d));
  out["response"] = detail::response_json(result.loop.lines);
  return out.dump(2) + "\n";
}

}  // namespace loopaudit
