#include "loopaudit/spectral/periodic.hpp"

#include <algorithm>
#include <cmath>
#include <optional>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"
#include "fft/fft_plan.hpp"
#include "spectral/group_sums.hpp"

namespace loopaudit {
namespace {

using Complex = std::complex<double>;
constexpr std::size_t kChannels = 3;  // injection, x, y
// The shortest period the accumulator takes, in samples.
constexpr std::size_t kMinPeriodSamples = 16;
// The longest: 2^22 samples, as for a Welch segment, so that a period's
// buffers are bounded before they are made.
constexpr std::size_t kMaxPeriodSamples = std::size_t{1} << 22;

// Sums over periods for one line.
struct LineSums {
  Complex sum[kChannels] = {};
  double power[kChannels] = {};  // sum |U_p|^2
  Complex xy = 0.0;              // sum Y_p conj(X_p)
};

}  // namespace

struct PeriodicAccumulator::Impl {
  PeriodicOptions options;
  std::optional<detail::RealFft> fft;
  std::vector<std::vector<double>> pending = std::vector<std::vector<double>>(kChannels);
  std::vector<LineSums> lines;
  std::size_t periods_seen = 0;
  std::size_t periods_used = 0;
  std::vector<Complex> spectrum[kChannels];
  // X and Y summed over contiguous groups of periods, for the jackknife.
  detail::GroupSums groups;
  bool grouped = false;

  explicit Impl(const PeriodicOptions& o) : options(o) {}

  void take_period(std::size_t offset) {
    const std::size_t p = options.period_samples;
    if (!fft) {  // made at the first period used: a short record never pays for a long period's buffers
      fft.emplace(p);
      lines.resize(p / 2 + 1);
      const std::size_t most = detail::groups_within_budget(2, lines.size());
      grouped = most > 0;
      if (grouped) groups = detail::GroupSums(2, lines.size(), most);
    }
    for (std::size_t c = 0; c < kChannels; ++c) {
      const auto first = pending[c].begin() + static_cast<std::ptrdiff_t>(offset);
      std::copy(first, first + static_cast<std::ptrdiff_t>(p), fft->input().begin());
      fft->execute();
      spectrum[c].assign(fft->output().begin(), fft->output().end());
    }
    for (std::size_t k = 0; k < lines.size(); ++k) {
      LineSums& l = lines[k];
      for (std::size_t c = 0; c < kChannels; ++c) {
        l.sum[c] += spectrum[c][k];
        l.power[c] += std::norm(spectrum[c][k]);
      }
      l.xy += spectrum[2][k] * std::conj(spectrum[1][k]);
    }
    if (grouped) {
      groups.make_room(periods_used);
      const std::size_t g = groups.group_of(periods_used);
      for (std::size_t a = 0; a < 2; ++a) {
        detail::GroupLines& sums = groups.at(g, a);
        for (std::size_t k = 0; k < sums.size(); ++k) sums[k] += spectrum[a + 1][k];
      }
    }
    ++periods_used;
  }
};

void PeriodicOptions::validate() const {
  if (period_samples < kMinPeriodSamples || period_samples > kMaxPeriodSamples) {
    throw setting_out_of_range("period_samples", period_samples,
                               std::to_string(kMinPeriodSamples) + " to " + std::to_string(kMaxPeriodSamples) + " samples");
  }
  if (!(injection_floor_db > 0.0 && std::isfinite(injection_floor_db))) {
    throw setting_out_of_range("injection_floor_db", injection_floor_db, "a positive number of dB");
  }
}

PeriodicAccumulator::PeriodicAccumulator(const PeriodicOptions& options) {
  options.validate();
  impl_ = std::make_unique<Impl>(options);
}
PeriodicAccumulator::~PeriodicAccumulator() = default;
PeriodicAccumulator::PeriodicAccumulator(PeriodicAccumulator&&) noexcept = default;
PeriodicAccumulator& PeriodicAccumulator::operator=(PeriodicAccumulator&&) noexcept = default;

std::size_t PeriodicAccumulator::periods_used() const { return impl_->periods_used; }

void PeriodicAccumulator::push(std::span<const std::span<const double>> channels) {
  Impl& s = *impl_;
  if (channels.size() != kChannels) throw std::invalid_argument("PeriodicAccumulator takes injection, x and y");
  for (std::size_t c = 0; c < kChannels; ++c) s.pending[c].insert(s.pending[c].end(), channels[c].begin(), channels[c].end());
  const std::size_t p = s.options.period_samples;
  std::size_t offset = 0;
  for (; offset + p <= s.pending[0].size(); offset += p) {
    if (s.periods_seen++ >= s.options.skip_periods) s.take_period(offset);
  }
  for (auto& v : s.pending) v.erase(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(offset));
}

namespace {

// The jackknife's groups of periods, set on the response (its replicates
// sized, its method told) when there are at least two.
std::vector<std::vector<detail::GroupLines>> take_groups(detail::GroupSums& sums, std::size_t periods, Response& r) {
  const std::size_t per_group = sums.per_group();
  auto groups = sums.finish(periods);
  if (groups.size() >= 2) {
    r.method.replicate_kind = ReplicateKind::kGroups;
    r.method.per_replicate = per_group;
    r.replicates.resize(groups.size());
  }
  return groups;
}

Diagnostic partial_period_note(std::size_t left_over, std::size_t period_samples) {
  return make_note("spectral.partial-period", "the record ends " + std::to_string(left_over) + " samples into a period of " +
                                                  std::to_string(period_samples) + "; those samples are not used");
}

}  // namespace

Response PeriodicAccumulator::finish(double sample_rate_hz, Diagnostics& findings) {
  Impl& s = *impl_;
  const double n = static_cast<double>(s.periods_used);
  if (s.periods_used < 2) {
    throw NumericalError("periodic averaging needs at least two whole periods after the " +
                         std::to_string(s.options.skip_periods) + " skipped; the record holds " +
                         std::to_string(s.periods_seen) + " periods of " + std::to_string(s.options.period_samples) +
                         " samples");
  }
  const auto mean = [&](const LineSums& l, std::size_t c) { return l.sum[c] / n; };
  // var of the mean of channel c: (sum |U|^2 - n |mean|^2) / (n (n - 1))
  const auto variance = [&](const LineSums& l, std::size_t c) {
    return std::max(0.0, l.power[c] - n * std::norm(mean(l, c))) / (n * (n - 1.0));
  };
  double peak = 0.0;
  for (std::size_t k = 1; k < s.lines.size(); ++k) peak = std::max(peak, std::norm(mean(s.lines[k], 0)));
  if (!(peak > 0.0)) throw NumericalError("the injection channel is flat: it carries no periodic injection");
  const double floor = peak * std::pow(10.0, -s.options.injection_floor_db / 10.0);
  const std::size_t last = (s.options.period_samples - 1) / 2;  // never DC or Nyquist
  Response r;
  r.method = {ResponseMethodKind::kPeriodic, s.periods_used, n};
  const auto groups = s.grouped ? take_groups(s.groups, s.periods_used, r) : std::vector<std::vector<detail::GroupLines>>{};
  if (!s.grouped) r.method.no_replicates_reason = "the period is too long for the jackknife's group sums to fit their memory budget";
  double excited_power = 0.0, other_power = 0.0;
  std::size_t excited = 0, others = 0;
  for (std::size_t k = 1; k <= last; ++k) {
    const LineSums& l = s.lines[k];
    const Complex x = mean(l, 1), y = mean(l, 2);
    if (std::norm(mean(l, 0)) < floor) {
      other_power += l.power[2] / n;
      ++others;
      continue;
    }
    excited_power += std::norm(y);
    ++excited;
    const Complex covariance = (l.xy - n * y * std::conj(x)) / (n * (n - 1.0));
    const double relative = variance(l, 2) / std::norm(y) + variance(l, 1) / std::norm(x) -
                            2.0 * (covariance / (y * std::conj(x))).real();
    r.frequency_hz.push_back(static_cast<double>(k) * sample_rate_hz / static_cast<double>(s.options.period_samples));
    r.value.push_back(y / x);
    // The share of each channel's power that repeats from period to period.
    r.coherence.push_back(std::min(std::norm(x) / (l.power[1] / n), std::norm(y) / (l.power[2] / n)));
    r.relative_sigma.push_back(std::sqrt(std::max(0.0, relative) / 2.0));
    // Each group of periods left out in turn: the ratio of the other periods' sums.
    for (std::size_t g = 0; g < r.replicates.size(); ++g) {
      r.replicates[g].push_back((l.sum[2] - groups[g][1][k]) / (l.sum[1] - groups[g][0][k]));
    }
  }
  if (r.size() == 0) throw NumericalError("no line of the period carries injection power above the floor");
  if (!s.pending[0].empty()) findings.push_back(partial_period_note(s.pending[0].size(), s.options.period_samples));
  if (others > 0 && excited > 0) {
    std::ostringstream message;
    message << "lines the injection does not excite hold, in y, " << std::lround(db_from_power((other_power / others) / (excited_power / excited)))
            << " dB against the excited lines: noise and distortion (averaged over " << s.periods_used << " periods)";
    findings.push_back(make_note("spectral.unexcited-lines", message.str()));
  }
  return r;
}

}  // namespace loopaudit
