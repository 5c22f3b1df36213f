#include "loopaudit/synth/simulate.hpp"

#include <cmath>
#include <deque>
#include <numbers>
#include <random>

#include "loopaudit/error.hpp"
#include "synth/injection_signal.hpp"
#include "model/state_space.hpp"

namespace loopaudit {
namespace {

using detail::StateRunner;
using detail::StateSpace;

// The truth band starts where the record holds ten cycles and ends just
// below Nyquist, where a discrete loop's response turns real.
constexpr double kTruthCyclesInRecord = 10.0;
constexpr double kTruthNyquistFraction = 0.499;
// A stable loop keeps x within a modest multiple of its inputs; past this
// factor the closed loop is taken to be unstable.
constexpr double kUnboundedFactor = 1e6;

std::vector<double> white_noise(std::size_t count, double rms, std::mt19937_64& rng) {
  std::vector<double> out(count, 0.0);
  if (rms == 0.0) return out;
  std::normal_distribution<double> normal(0.0, rms);
  for (double& v : out) v = normal(rng);
  return out;
}

// Samples simulated before the recording starts, so that it opens in steady
// state as a bench recording does (the injection was running before the
// acquisition was armed). A whole number of periods for periodic injections.
std::size_t warm_up_samples(const Scenario& s) {
  constexpr std::size_t kMinWarmUp = 16384;
  const std::size_t period = s.injection.period(s.sample_rate_hz);
  if (period == 0) return kMinWarmUp;
  return (kMinWarmUp + period - 1) / period * period;
}

std::vector<double> disturbance(const Scenario& s, std::size_t count, std::mt19937_64& rng) {
  std::vector<double> d = white_noise(count, 1.0, rng);
  if (s.noise.disturbance_corner_hz > 0.0) {
    const double a = std::exp(-2.0 * std::numbers::pi * s.noise.disturbance_corner_hz / s.sample_rate_hz);
    double state = 0.0;
    for (double& v : d) v = state = a * state + (1.0 - a) * v;
  }
  return detail::scaled_to_rms(std::move(d), s.noise.disturbance_rms);
}

std::vector<StateSpace> discrete_stages(const Scenario& s) {
  std::vector<StateSpace> stages;
  for (const Stage& stage : s.stages) {
    stages.push_back(detail::discretize(detail::continuous_stage(stage), stage.discretization, 1.0 / s.sample_rate_hz));
  }
  return stages;
}

// The stages in series, one sample at a time.
class Chain {
 public:
  explicit Chain(const std::vector<StateSpace>& stages) {
    for (const auto& m : stages) {
      runners_.emplace_back(m);
      feedthrough_ *= m.d;
    }
  }
  double free_output() const {  // output for a zero input now
    double signal = 0.0;
    for (const auto& r : runners_) signal = r.output(signal);
    return signal;
  }
  double step(double input) {
    for (auto& r : runners_) input = r.step(input);
    return input;
  }
  double feedthrough() const { return feedthrough_; }

 private:
  std::vector<StateRunner> runners_;
  double feedthrough_ = 1.0;
};

}  // namespace

struct DiscreteLoop::Impl {
  std::vector<StateSpace> stages;
  int delay_samples = 0;
};

DiscreteLoop::DiscreteLoop(const Scenario& scenario) : sample_rate_hz_(scenario.sample_rate_hz) {
  scenario.validate();
  auto impl = std::make_shared<Impl>();
  impl->stages = discrete_stages(scenario);
  impl->delay_samples = scenario.delay_samples;
  impl_ = std::move(impl);
}

std::complex<double> DiscreteLoop::operator()(double frequency_hz) const {
  const double theta = 2.0 * std::numbers::pi * frequency_hz / sample_rate_hz_;
  std::complex<double> value = std::polar(1.0, -theta * impl_->delay_samples);
  for (const auto& m : impl_->stages) value *= detail::discrete_response(m, theta);
  return value;
}

namespace {

// x at every sample of the closed loop driven by z and d.
std::vector<double> run_closed_loop(const Scenario& s, const std::vector<double>& z, const std::vector<double>& d) {
  Chain chain(discrete_stages(s));
  std::deque<double> delay_line(static_cast<std::size_t>(s.delay_samples), 0.0);
  const double bound = kUnboundedFactor * (s.injection.rms + s.noise.disturbance_rms);
  std::vector<double> x(z.size());
  for (std::size_t n = 0; n < z.size(); ++n) {
    if (s.delay_samples > 0) {
      x[n] = -delay_line.front() + d[n] + z[n];
      delay_line.pop_front();
      delay_line.push_back(chain.step(x[n]));
    } else {  // x = y + z with y = -(free + D x) + d, solved for x
      x[n] = (z[n] + d[n] - chain.free_output()) / (1.0 + chain.feedthrough());
      chain.step(x[n]);
    }
    if (!(std::abs(x[n]) < bound)) {
      throw ConfigError(s.name + ": the simulated closed loop is unstable (x grows without bound by sample " +
                        std::to_string(n) + "); check the stage gains and the delay");
    }
  }
  return x;
}

}  // namespace

Synthesis synthesize(const Scenario& s) {
  s.validate();
  std::mt19937_64 rng(s.seed);
  const std::size_t count = s.sample_count();
  const std::size_t warm_up = warm_up_samples(s);
  const std::size_t total = warm_up + count;
  const std::vector<double> z = detail::injection_signal(s, warm_up, count, rng);
  const std::vector<double> d = disturbance(s, total, rng);
  const std::vector<double> x = run_closed_loop(s, z, d);
  const auto x_noise = white_noise(count, s.noise.x_rms, rng);
  const auto y_noise = white_noise(count, s.noise.y_rms, rng);

  Synthesis out;
  out.record.channel_names = {"z", "x", "y"};
  out.record.channels.assign(3, std::vector<double>(count));
  out.record.sample_rate_hz = s.sample_rate_hz;
  for (std::size_t n = 0; n < count; ++n) {  // the recording starts after the warm-up
    const std::size_t m = n + warm_up;
    out.record.channels[0][n] = z[m];
    out.record.channels[1][n] = x[m] + x_noise[n];
    out.record.channels[2][n] = x[m] - z[m] + y_noise[n];
  }
  out.truth_low_hz = kTruthCyclesInRecord * s.sample_rate_hz / static_cast<double>(count);
  out.truth_high_hz = kTruthNyquistFraction * s.sample_rate_hz;
  out.truth = exact_margins(DiscreteLoop(s), out.truth_low_hz, out.truth_high_hz);
  return out;
}

}  // namespace loopaudit
