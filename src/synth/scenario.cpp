#include "loopaudit/synth/scenario.hpp"

#include <cmath>
#include <sstream>

#include "ingest/toml_fields.hpp"
#include "loopaudit/error.hpp"

namespace loopaudit {
namespace {

using detail::check_keys;
using detail::optional_number;
using detail::optional_text;
using detail::required_number;

const toml::table& sub_table(const toml::table& parent, const char* key, const std::string& where) {
  const auto* table = detail::optional_table(parent, key, where);
  if (table == nullptr) throw ConfigError(where + ": missing table [" + key + "]");
  return *table;
}

double number(const toml::table& table, const char* key, const std::string& where, std::optional<double> fallback = {}) {
  return fallback ? optional_number(table, key, where).value_or(*fallback) : required_number(table, key, where);
}

template <typename T>
T whole(const toml::table& table, const char* key, const std::string& where, T fallback,
        detail::WholeRange range = {}) {
  return static_cast<T>(detail::optional_whole(table, key, where, range).value_or(fallback));
}

std::string text(const toml::table& table, const char* key, const std::string& where, const std::string& fallback) {
  return optional_text(table, key, where).value_or(fallback);
}

std::vector<Factor> factors(const toml::table& stage, const char* key, const std::string& where) {
  std::vector<Factor> result;
  const auto node = stage[key];
  if (!node) return result;
  const auto* list = node.as_array();
  if (list == nullptr) throw ConfigError(where + ": '" + key + "' must be a list of { hz = ..., q = ... }");
  for (std::size_t i = 0; i < list->size(); ++i) {
    const std::string item_where = where + "." + key + "[" + std::to_string(i) + "]";
    const auto* item = list->get(i)->as_table();
    if (item == nullptr) throw ConfigError(item_where + ": must be a table { hz = ..., q = ... }");
    check_keys(*item, {"hz", "q"}, item_where);
    Factor f{number(*item, "hz", item_where), std::nullopt};
    if ((*item)["q"]) f.quality = number(*item, "q", item_where);
    result.push_back(f);
  }
  return result;
}

Stage read_stage(const toml::table& table, const std::string& where) {
  check_keys(table, {"name", "gain", "integrators", "zeros", "poles", "discretize"}, where);
  Stage stage;
  stage.name = text(table, "name", where, where);
  stage.gain = number(table, "gain", where, 1.0);
  stage.integrators = whole(table, "integrators", where, 0, {0, 64});
  stage.zeros = factors(table, "zeros", where);
  stage.poles = factors(table, "poles", where);
  stage.discretization = value_of(kDiscretizationNames, text(table, "discretize", where, "zoh"),
                                  {.what = "discretization", .where = where});
  return stage;
}

Injection read_injection(const toml::table& table, const std::string& where) {
  check_keys(table, {"kind", "rms", "low_hz", "high_hz", "period_samples", "odd_only", "prbs_order", "samples_per_bit",
                     "points", "dwell_s", "dwell_cycles", "sweep", "sweep_s"},
             where);
  Injection in;
  in.kind = value_of(kInjectionKindNames, text(table, "kind", where, "noise"), {.what = "kind", .where = where});
  in.rms = number(table, "rms", where);
  in.low_hz = number(table, "low_hz", where, 0.0);
  in.high_hz = number(table, "high_hz", where, 0.0);
  in.period_samples = whole<std::size_t>(table, "period_samples", where, 8192);
  in.odd_only = table["odd_only"].value_or(false);
  in.prbs_order = whole(table, "prbs_order", where, 10, {5, 16});
  in.samples_per_bit = whole<std::size_t>(table, "samples_per_bit", where, 1, {1, 1 << 20});
  in.points = whole<std::size_t>(table, "points", where, 20, {1, 100000});
  in.dwell_s = number(table, "dwell_s", where, 0.1);
  in.dwell_cycles = number(table, "dwell_cycles", where, 0.0);
  const std::string sweep = text(table, "sweep", where, "log");
  if (sweep != "log" && sweep != "linear") throw ConfigError(where + ": sweep = '" + sweep + "'; choose log or linear");
  in.log_sweep = sweep == "log";
  in.sweep_s = number(table, "sweep_s", where, 1.0);
  return in;
}

NoiseSettings read_noise(const toml::table& table, const std::string& where) {
  check_keys(table, {"x_rms", "y_rms", "disturbance_rms", "disturbance_corner_hz"}, where);
  return {number(table, "x_rms", where, 0.0), number(table, "y_rms", where, 0.0),
          number(table, "disturbance_rms", where, 0.0), number(table, "disturbance_corner_hz", where, 0.0)};
}

void require(bool condition, const std::string& message) {
  if (!condition) throw ConfigError(message);
}

}  // namespace

const char* injection_kind_name(InjectionKind kind) { return name_of(kInjectionKindNames, kind); }

std::size_t Injection::period(double sample_rate_hz) const {
  switch (kind) {
    case InjectionKind::kMultisine: return period_samples;
    case InjectionKind::kPrbs: return ((std::size_t{1} << prbs_order) - 1) * samples_per_bit;
    case InjectionKind::kChirp: return static_cast<std::size_t>(std::llround(sweep_s * sample_rate_hz));
    default: return 0;
  }
}

std::size_t Scenario::sample_count() const {
  return static_cast<std::size_t>(std::llround(duration_s * sample_rate_hz));
}

void Scenario::validate() const {
  const std::string where = name.empty() ? "scenario" : name;
  require(sample_rate_hz > 0.0, where + ": [recording] sample_rate_hz must be positive");
  // The simulation holds the whole record, about 64 bytes a sample: 10^8
  // samples take some 6 GB. Checked before anything is made.
  constexpr double kMostSamples = 1e8;
  require(duration_s * sample_rate_hz <= kMostSamples && injection.sweep_s * sample_rate_hz <= kMostSamples &&
              injection.dwell_s * sample_rate_hz <= kMostSamples,
          where + ": [recording] and [injection] durations must give at most 1e8 samples (the simulation holds the "
                  "whole record, about 64 bytes a sample)");
  require(duration_s > 0.0 && sample_count() >= 16, where + ": [recording] duration_s gives fewer than 16 samples");
  require(injection.rms > 0.0, where + ": [injection] rms must be positive");
  require(injection.period_samples >= 16 && injection.period_samples <= (std::size_t{1} << 22),
          where + ": [injection] period_samples must be 16 to 4194304 (what analyze takes)");
  const bool swept = injection.kind == InjectionKind::kStepped || injection.kind == InjectionKind::kChirp;
  require(!swept || (injection.low_hz > 0.0 && injection.top_hz(sample_rate_hz) > injection.low_hz &&
                     injection.top_hz(sample_rate_hz) < sample_rate_hz / 2.0),
          where + ": [injection] a stepped sine or chirp needs 0 < low_hz < high_hz < fs/2");
  require(injection.points >= 1 && injection.dwell_s * sample_rate_hz >= 16,
          where + ": [injection] points must be at least 1 and dwell_s at least 16 samples");
  require(injection.dwell_cycles >= 0.0 && injection.dwell_cycles <= 1e6,
          where + ": [injection] dwell_cycles must be from 0 to 1e6");
  require(injection.sweep_s * sample_rate_hz >= 16, where + ": [injection] sweep_s must be at least 16 samples");
  require(injection.samples_per_bit >= 1 && injection.prbs_order >= 5 && injection.prbs_order <= 16,
          where + ": [injection] prbs_order must be from 5 to 16 and samples_per_bit at least 1");
  require(noise.x_rms >= 0.0 && noise.y_rms >= 0.0 && noise.disturbance_rms >= 0.0,
          where + ": [noise] levels must not be negative");
  require(!stages.empty(), where + ": [loop] needs at least one [[loop.stage]]");
  require(delay_samples >= 0, where + ": [loop] delay_samples must not be negative");
  for (const Stage& stage : stages) {
    require(stage.integrators >= 0, where + ": stage '" + stage.name + "': integrators must not be negative");
    for (const auto* list : {&stage.zeros, &stage.poles}) {
      for (const Factor& f : *list) {
        require(f.frequency_hz > 0.0, where + ": stage '" + stage.name + "': every hz must be positive");
        require(!f.quality || *f.quality > 0.0, where + ": stage '" + stage.name + "': every q must be positive");
      }
    }
  }
}

Scenario load_scenario(const std::string& path) {
  const toml::table root = detail::parse_toml_file(path);
  check_keys(root, {"name", "description", "recording", "injection", "noise", "loop"}, path);
  Scenario s;
  s.name = text(root, "name", path, "scenario");
  s.description = text(root, "description", path, "");
  const auto& recording = sub_table(root, "recording", path);
  check_keys(recording, {"sample_rate_hz", "duration_s", "seed"}, path + " [recording]");
  s.sample_rate_hz = number(recording, "sample_rate_hz", path + " [recording]");
  s.duration_s = number(recording, "duration_s", path + " [recording]");
  s.seed = whole<std::uint64_t>(recording, "seed", path + " [recording]", 1);
  s.injection = read_injection(sub_table(root, "injection", path), path + " [injection]");
  if (root["noise"]) s.noise = read_noise(sub_table(root, "noise", path), path + " [noise]");
  const auto& loop = sub_table(root, "loop", path);
  check_keys(loop, {"delay_samples", "stage"}, path + " [loop]");
  s.delay_samples = whole(loop, "delay_samples", path + " [loop]", 0, {0, 1 << 20});
  if (const auto* stages = loop["stage"].as_array()) {
    for (std::size_t i = 0; i < stages->size(); ++i) {
      const auto* table = stages->get(i)->as_table();
      const std::string where = path + " [[loop.stage]] #" + std::to_string(i + 1);
      if (table == nullptr) throw ConfigError(where + ": must be a table");
      s.stages.push_back(read_stage(*table, where));
    }
  }
  s.validate();
  return s;
}

}  // namespace loopaudit
