// A synthetic bench test: a loop, its injection, noise and recording settings,
// read from a TOML scenario file (keys documented in README.md).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

namespace loopmargin {

// One factor of a transfer function in s (rad/s): a real root (1 + s/w) or a
// complex pair (1 + s/(Q w) + s^2/w^2), with w = 2 pi frequency_hz.
struct Factor {
  double frequency_hz = 0.0;
  std::optional<double> quality;  // present for a pair
};

enum class Discretization { kZeroOrderHold, kBilinear };

// gain * prod(zeros) / (s^integrators * prod(poles)).
struct Stage {
  std::string name;
  double gain = 1.0;
  int integrators = 0;
  std::vector<Factor> zeros;
  std::vector<Factor> poles;
  Discretization discretization = Discretization::kZeroOrderHold;
};

enum class InjectionKind { kNoise, kMultisine };

struct Injection {
  InjectionKind kind = InjectionKind::kNoise;
  double rms = 0.01;
  double low_hz = 0.0;             // multisine band
  double high_hz = 0.0;            // 0: up to 0.45 fs
  std::size_t period_samples = 8192;
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

}  // namespace loopmargin
