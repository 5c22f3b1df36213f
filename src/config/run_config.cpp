#include "loopaudit/config/run_config.hpp"

#include <cmath>

#include "ingest/toml_fields.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/loop/loop.hpp"

namespace loopaudit {
namespace {

using detail::check_keys;
using detail::optional_number;
using detail::optional_numbers;
using detail::optional_table;
using detail::optional_text;
using detail::optional_texts;

template <typename T, typename U>
void set_if(std::optional<U> value, T& target) {
  if (value) target = static_cast<T>(*value);
}

std::optional<std::size_t> optional_count(const toml::table& t, const char* key, const std::string& where) {
  const auto value = detail::optional_whole(t, key, where);
  if (!value) return std::nullopt;
  return static_cast<std::size_t>(*value);
}

// probe_scale = { y = -10.0 }: a factor per channel, by name.
std::vector<std::pair<std::string, double>> probe_scales(const toml::table& t, const std::string& where) {
  std::vector<std::pair<std::string, double>> out;
  const auto* table = optional_table(t, "probe_scale", where);
  if (table == nullptr) return out;
  for (const auto& [name, value] : *table) {
    const auto factor = value.value<double>();
    if (!factor || !std::isfinite(*factor) || *factor == 0.0) {
      throw ConfigError(where + ": 'probe_scale' entry '" + std::string(name.str()) + "' must be a number other than 0");
    }
    out.emplace_back(std::string(name.str()), *factor);
  }
  return out;
}

void read_input(const toml::table& t, const std::string& where, RecordingOptions& r) {
  check_keys(t, {"format", "channels", "sample_rate_hz", "time_column", "lines_before_header", "sample_type",
                 "byte_order", "header_bytes", "scale", "offset", "probe_scale", "dataset", "datasets", "rate_attribute"},
             where);
  if (const auto skip = optional_count(t, "lines_before_header", where)) r.text.lines_before_header = skip;
  r.named_scale = probe_scales(t, where);
  if (const auto format = optional_text(t, "format", where)) r.format = format_from_name(*format);
  set_if(optional_texts(t, "channels", where), r.channel_names);
  if (const auto rate = optional_number(t, "sample_rate_hz", where)) r.sample_rate_hz = rate;
  set_if(optional_text(t, "time_column", where), r.text.time_column);
  if (const auto type = optional_text(t, "sample_type", where)) r.raw.sample_type = sample_type_from_name(*type);
  if (const auto order = optional_text(t, "byte_order", where)) {
    if (*order != "little" && *order != "big") throw ConfigError(where + ": 'byte_order' must be little or big");
    r.raw.big_endian = *order == "big";
  }
  set_if(optional_count(t, "header_bytes", where), r.raw.header_bytes);
  set_if(optional_numbers(t, "scale", where), r.scale);
  set_if(optional_numbers(t, "offset", where), r.offset);
  set_if(optional_text(t, "dataset", where), r.hdf5.dataset);
  set_if(optional_texts(t, "datasets", where), r.hdf5.datasets);
  set_if(optional_text(t, "rate_attribute", where), r.hdf5.rate_attribute);
}

void read_roles(const toml::table& t, const std::string& where, ChannelRoles& roles) {
  check_keys(t, {"z", "x", "y"}, where);
  set_if(optional_text(t, "z", where), roles.injection);
  set_if(optional_text(t, "x", where), roles.x);
  set_if(optional_text(t, "y", where), roles.y);
}

void read_spectral(const toml::table& t, const std::string& where, AnalysisOptions& a) {
  check_keys(t, {"window", "segment", "overlap", "estimator", "injection_floor_db"}, where);
  if (const auto window = optional_text(t, "window", where)) a.welch.window = window_from_name(*window);
  set_if(optional_count(t, "segment", where), a.welch.segment_length);
  set_if(optional_number(t, "overlap", where), a.welch.overlap);
  if (const auto estimator = optional_text(t, "estimator", where)) a.response.estimator = estimator_from_name(*estimator);
  set_if(optional_number(t, "injection_floor_db", where), a.response.injection_floor_db);
}

void read_excitation(const toml::table& t, const std::string& where, AnalysisOptions& a) {
  check_keys(t, {"kind", "period_samples", "skip_periods", "settle_cycles", "settle_s", "schedule", "marker"}, where);
  set_if(optional_text(t, "schedule", where), a.schedule_path);
  set_if(optional_text(t, "marker", where), a.marker_channel);
  if (const auto kind = optional_text(t, "kind", where)) a.excitation = excitation_setting_from_name(*kind);
  set_if(optional_count(t, "period_samples", where), a.period_samples);
  set_if(optional_count(t, "skip_periods", where), a.skip_periods);
  set_if(optional_number(t, "settle_cycles", where), a.settle_cycles);
  set_if(optional_number(t, "settle_s", where), a.settle_s);
}

}  // namespace

RunSettings load_run_settings(const std::string& path, RunSettings settings) {
  const toml::table root = detail::parse_toml_file(path);
  check_keys(root, {"input", "roles", "excitation", "spectral", "loop", "margins"}, path);
  if (const auto* t = optional_table(root, "excitation", path)) read_excitation(*t, path + " [excitation]", settings.analysis);
  if (const auto* t = optional_table(root, "input", path)) read_input(*t, path + " [input]", settings.recording);
  if (const auto* t = optional_table(root, "roles", path)) read_roles(*t, path + " [roles]", settings.analysis.roles);
  if (const auto* t = optional_table(root, "spectral", path)) read_spectral(*t, path + " [spectral]", settings.analysis);
  if (const auto* t = optional_table(root, "loop", path)) {
    check_keys(*t, {"convention", "open_loop_rhp_poles"}, path + " [loop]");
    if (const auto c = optional_text(*t, "convention", path + " [loop]")) settings.analysis.convention = convention_from_name(*c);
    set_if(detail::optional_whole(*t, "open_loop_rhp_poles", path + " [loop]", {0, 64}),
           settings.analysis.margins.open_loop_rhp_poles);
  }
  if (const auto* t = optional_table(root, "margins", path)) {
    const std::string where = path + " [margins]";
    check_keys(*t, {"confidence", "band"}, where);
    set_if(optional_number(*t, "confidence", where), settings.analysis.margins.confidence);
    if (const auto band = optional_numbers(*t, "band", where)) {
      if (band->size() != 2 || !((*band)[0] > 0.0 && (*band)[1] > (*band)[0])) {
        throw ConfigError(where + ": 'band' must be [LOW, HIGH] in Hz with 0 < LOW < HIGH");
      }
      settings.analysis.margins.band_hz = Interval{(*band)[0], (*band)[1]};
      settings.analysis.margins.band_source = "band in " + path;
    }
  }
  return settings;
}

}  // namespace loopaudit
