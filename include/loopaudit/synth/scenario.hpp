// A synthetic bench test: a loop, its injection, noise and recording settings,
// read from a TOML scenario file (keys documented in README.md).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/model/transfer_function.hpp"

namespace loopaudit {

enum class InjectionKind { kNoise, kMultisine, kPrbs, kStepped, kChirp };
inline constexpr NameTable<InjectionKind, 5> kInjectionKindNames{{{InjectionKind::kNoise, "noise"},
                                                                  {InjectionKind::kMultisine, "multisine"},
                                                                  {InjectionKind::kPrbs, "prbs"},
                                                                  {InjectionKind::kStepped, "stepped"},
                                                                  {InjectionKind::kChirp, "chirp"}}};
static_assert(one_to_one(kInjectionKindNames));
const char* injection_kind_name(InjectionKind kind);

struct Injection {
  InjectionKind kind = InjectionKind::kNoise;
  double rms = 0.01;
  double low_hz = 0.0;                 // band of multisine, stepped sine and chirp
  double high_hz = 0.0;                // 0: 0.45 fs
  std::size_t period_samples = 8192;   // multisine period
  bool odd_only = false;               // multisine: odd lines of the period only
  int prbs_order = 10;                 // PRBS: a maximum-length sequence of 2^order - 1 bits
  std::size_t samples_per_bit = 1;     // PRBS: bit duration
  std::size_t points = 20;             // stepped sine: log-spaced frequencies
  double dwell_s = 0.1;                // stepped sine: time at each frequency ...
  double dwell_cycles = 0.0;           // ... or this many cycles of it, whichever is longer
  bool log_sweep = true;               // chirp: logarithmic (else linear) in frequency
  double sweep_s = 1.0;                // chirp: one sweep, repeated

  // Samples after which the injection repeats; 0 when it does not.
  std::size_t period(double sample_rate_hz) const;
  double top_hz(double sample_rate_hz) const { return high_hz > 0.0 ? high_hz : 0.45 * sample_rate_hz; }
};

struct NoiseSettings {
  double x_rms = 0.0;               // sensor noise on the recorded x
  double y_rms = 0.0;               // sensor noise on the recorded y
  double disturbance_rms = 0.0;     // disturbance added at the loop's return point
  double disturbance_corner_hz = 0.0;  // first-order low-pass; 0 for white
};

struct Scenario {
  std::string name;
  std::string description;
  double sample_rate_hz = 0.0;
  double duration_s = 0.0;
  std::uint64_t seed = 1;
  Injection injection;
  NoiseSettings noise;
  std::vector<Stage> stages;
  int delay_samples = 0;

  std::size_t sample_count() const;
  void validate() const;  // throws ConfigError naming the key
};

// Throws InputError when the file cannot be read or parsed, ConfigError for
// a missing, unknown or out-of-range key (named with its table).
Scenario load_scenario(const std::string& path);

}  // namespace loopaudit
