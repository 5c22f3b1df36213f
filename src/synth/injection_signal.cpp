#include "synth/injection_signal.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit::detail {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

// One period repeated over n = -warm_up .. count - 1.
std::vector<double> repeat(const std::vector<double>& period, std::size_t warm_up, std::size_t count) {
  std::vector<double> out(warm_up + count);
  const std::size_t p = period.size();
  const std::size_t shift = p - warm_up % p;  // sample -warm_up is at this phase of the period
  for (std::size_t i = 0; i < out.size(); ++i) out[i] = period[(i + shift) % p];
  return out;
}

std::vector<double> multisine_period(const Scenario& s, std::mt19937_64& rng) {
  const Injection& in = s.injection;
  const std::size_t period = in.period_samples;
  const double spacing_hz = s.sample_rate_hz / static_cast<double>(period);
  std::uniform_real_distribution<double> phase(0.0, kTwoPi);
  std::vector<double> one(period, 0.0);
  for (std::size_t k = 1; k < period / 2; ++k) {
    const double f = static_cast<double>(k) * spacing_hz;
    if (f < in.low_hz || f > in.top_hz(s.sample_rate_hz) || (in.odd_only && k % 2 == 0)) continue;
    const double p = phase(rng);
    for (std::size_t n = 0; n < period; ++n) {
      one[n] += std::cos(kTwoPi * static_cast<double>(k * n % period) / static_cast<double>(period) + p);
    }
  }
  return scaled_to_rms(std::move(one), in.rms);
}

// Maximum-length sequence from a Fibonacci shift register with taps of a
// primitive polynomial (orders 5 to 16), +-rms, each bit held samples_per_bit.
std::vector<double> prbs_period(const Injection& in) {
  static const int kTaps[17][2] = {{0, 0}, {0, 0}, {0, 0}, {0, 0}, {0, 0}, {5, 3}, {6, 5}, {7, 6}, {8, 6},
                                   {9, 5}, {10, 7}, {11, 9}, {12, 11}, {13, 12}, {14, 13}, {15, 14}, {16, 15}};
  if (in.prbs_order < 5 || in.prbs_order > 16) throw ConfigError("[injection] prbs_order must be from 5 to 16");
  const int order = in.prbs_order;
  const std::size_t bits = (std::size_t{1} << order) - 1;
  std::uint32_t state = 1;
  std::vector<double> out;
  out.reserve(bits * in.samples_per_bit);
  for (std::size_t i = 0; i < bits; ++i) {
    const std::uint32_t bit = ((state >> (kTaps[order][0] - 1)) ^ (state >> (kTaps[order][1] - 1))) & 1u;
    state = ((state << 1) | bit) & ((1u << order) - 1);
    for (std::size_t k = 0; k < in.samples_per_bit; ++k) out.push_back(bit ? in.rms : -in.rms);
  }
  return out;
}

// A sweep from low_hz to the top, phase continuous, once per sweep_s.
std::vector<double> chirp_period(const Scenario& s) {
  const Injection& in = s.injection;
  const auto samples = static_cast<std::size_t>(std::llround(in.sweep_s * s.sample_rate_hz));
  const double f0 = in.low_hz, f1 = in.top_hz(s.sample_rate_hz), duration = in.sweep_s;
  std::vector<double> out(samples);
  for (std::size_t n = 0; n < samples; ++n) {
    const double t = static_cast<double>(n) / s.sample_rate_hz;
    const double phase = in.log_sweep
                             ? kTwoPi * f0 * duration / std::log(f1 / f0) * (std::pow(f1 / f0, t / duration) - 1.0)
                             : kTwoPi * (f0 * t + 0.5 * (f1 - f0) / duration * t * t);
    out[n] = std::sqrt(2.0) * in.rms * std::sin(phase);
  }
  return out;
}

// Each frequency held for dwell_s or dwell_cycles of it, whichever is
// longer; the last held to the end of the record.
std::vector<double> stepped(const Scenario& s, std::size_t warm_up, std::size_t count) {
  const auto frequencies = stepped_frequencies(s.injection, s.sample_rate_hz);
  std::vector<std::size_t> ends;  // of each dwell, in samples from the recording's start
  std::size_t end = 0;
  for (double f : frequencies) {
    const double dwell = std::max(s.injection.dwell_s, s.injection.dwell_cycles / f) * s.sample_rate_hz;
    end += std::max<std::size_t>(1, clamped_samples(dwell, std::size_t{1} << 40));
    ends.push_back(end);
  }
  std::vector<double> out(warm_up + count);
  double phase = 0.0;
  std::size_t dwell = 0;
  for (std::size_t i = 0; i < out.size(); ++i) {
    const std::size_t n = i >= warm_up ? i - warm_up : 0;
    while (dwell + 1 < ends.size() && n >= ends[dwell]) ++dwell;
    out[i] = std::sqrt(2.0) * s.injection.rms * std::sin(phase);
    phase = std::fmod(phase + kTwoPi * frequencies[dwell] / s.sample_rate_hz, kTwoPi);
  }
  return out;
}

}  // namespace

std::vector<double> scaled_to_rms(std::vector<double> signal, double rms) {
  double sum = 0.0;
  for (double v : signal) sum += v * v;
  const double current = std::sqrt(sum / static_cast<double>(signal.size()));
  if (current > 0.0) {
    for (double& v : signal) v *= rms / current;
  }
  return signal;
}

std::vector<double> stepped_frequencies(const Injection& in, double sample_rate_hz) {
  const double f0 = in.low_hz, f1 = in.top_hz(sample_rate_hz);
  std::vector<double> out;
  for (std::size_t i = 0; i < in.points; ++i) {
    out.push_back(in.points == 1 ? f0 : f0 * std::pow(f1 / f0, static_cast<double>(i) / static_cast<double>(in.points - 1)));
  }
  return out;
}

std::vector<double> injection_signal(const Scenario& s, std::size_t warm_up, std::size_t count, std::mt19937_64& rng) {
  const std::size_t total = warm_up + count;
  switch (s.injection.kind) {
    case InjectionKind::kNoise: {
      std::normal_distribution<double> normal(0.0, s.injection.rms);
      std::vector<double> out(total);
      for (double& v : out) v = normal(rng);
      return out;
    }
    case InjectionKind::kMultisine: return repeat(multisine_period(s, rng), warm_up, count);
    case InjectionKind::kPrbs: return repeat(prbs_period(s.injection), warm_up, count);
    case InjectionKind::kChirp: return repeat(chirp_period(s), warm_up, count);
    case InjectionKind::kStepped: return stepped(s, warm_up, count);
  }
  return {};
}

}  // namespace loopaudit::detail
