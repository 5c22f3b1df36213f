#include "loopaudit/ingest/quality.hpp"

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <numeric>
#include <sstream>

#include "loopaudit/error.hpp"

namespace loopaudit {
namespace {

constexpr std::size_t kClipRun = 3;            // equal samples at an extreme that make a flat top
constexpr double kClipFraction = 1e-5;         // of all samples, before it is reported
constexpr double kTwoLevel = 0.5;
constexpr double kDriftOverInjection = 1.0;    // trend over the record against the injection's RMS
constexpr double kOffsetOverInjection = 100.0;

// How far the least-squares line through the samples moves over the record,
// from the sums of x[n] and n x[n] (sums of n and n^2 are closed forms).
double trend_over_record(double sum, double sum_index_weighted, std::size_t count) {
  if (count < 16) return 0.0;
  const double n = static_cast<double>(count);
  const double mean_index = (n - 1.0) / 2.0;
  const double index_variance_sum = n * (n * n - 1.0) / 12.0;  // sum of (i - mean_index)^2
  const double slope = (sum_index_weighted - mean_index * sum) / index_variance_sum;
  return slope * (n - 1.0);
}

}  // namespace

QualityMonitor::QualityMonitor(std::vector<std::string> names, std::size_t injection, std::string origin)
    : names_(std::move(names)), injection_(injection), origin_(std::move(origin)), channels_(names_.size()) {}

namespace {

// Block sums, vectorised by Eigen (plain loops are not: reordering a sum of
// doubles changes its rounding, so the compiler keeps them scalar).
struct BlockStats {
  double sum = 0.0;
  double sum_squares = 0.0;
  double min = INFINITY;
  double max = -INFINITY;
  double sum_index_weighted = 0.0;  // sum of i x[i], i from 0 within the block
};

BlockStats stats_of(std::span<const double> v, const std::vector<double>& ramp) {
  const auto n = static_cast<Eigen::Index>(v.size());
  const Eigen::Map<const Eigen::ArrayXd> a(v.data(), n);
  const Eigen::Map<const Eigen::ArrayXd> index(ramp.data(), n);
  return {a.sum(), a.square().sum(), a.minCoeff(), a.maxCoeff(), (a * index).sum()};
}

}  // namespace

// Runs of equal samples at `extreme`, continuing the run carried over from
// the previous block; returns the samples that count (runs of kClipRun or more).
std::size_t count_runs_at(std::span<const double> v, double extreme, double carried_value, std::size_t carried_length,
                          std::size_t first_sample, std::size_t& first_run_sample) {
  std::size_t counted = 0;
  std::size_t length = carried_value == extreme ? carried_length : 0;
  for (std::size_t i = 0; i < v.size(); ++i) {
    if (v[i] != extreme) {
      length = 0;
      continue;
    }
    ++length;
    if (length < kClipRun) continue;
    const std::size_t added = length == kClipRun ? kClipRun : 1;
    if (counted == 0 && first_run_sample == 0) first_run_sample = first_sample + i + 1 - length;
    counted += added;
  }
  return counted;
}

void QualityMonitor::scan(Channel& c, std::span<const double> v, std::size_t first_sample, const std::string& name) const {
  if (ramp_.size() < v.size()) {
    ramp_.resize(v.size());
    std::iota(ramp_.begin(), ramp_.end(), 0.0);
  }
  const BlockStats s = stats_of(v, ramp_);
  if (!std::isfinite(s.sum) || !std::isfinite(s.sum_squares)) {
    for (std::size_t i = 0; i < v.size(); ++i) {
      if (std::isfinite(v[i])) continue;
      std::ostringstream message;
      message << origin_ << ": channel '" << name << "', sample " << first_sample + i << ": " << v[i]
              << " is not a finite number";
      throw InputError(message.str());
    }
  }
  if (s.max > c.max) {
    c.max = s.max;
    c.at_max_in_runs = 0;
  }
  if (s.min < c.min) {
    c.min = s.min;
    c.at_min_in_runs = 0;
  }
  if (s.max == c.max) c.at_max_in_runs += count_runs_at(v, c.max, c.run_value, c.run_length, first_sample, c.first_run_sample);
  if (s.min == c.min) c.at_min_in_runs += count_runs_at(v, c.min, c.run_value, c.run_length, first_sample, c.first_run_sample);
  // The run of equal samples that ends this block, for the next one.
  std::size_t tail = 0;
  while (tail < v.size() && v[v.size() - 1 - tail] == v.back()) ++tail;
  c.run_length = (tail == v.size() && v.back() == c.run_value) ? c.run_length + tail : tail;
  c.run_value = v.back();
  c.sum += s.sum;
  c.sum_squares += s.sum_squares;
  c.sum_index_weighted += s.sum_index_weighted + static_cast<double>(first_sample) * s.sum;
}

void QualityMonitor::push(std::span<const std::span<const double>> channels, std::size_t first_sample) {
  for (std::size_t c = 0; c < channels.size(); ++c) {
    if (!channels[c].empty()) scan(channels_[c], channels[c], first_sample, names_[c]);
  }
  if (!channels.empty()) samples_ += channels[0].size();
}

Diagnostics QualityMonitor::channel_findings(std::size_t index, double injection_rms) const {
  Diagnostics out;
  const Channel& c = channels_[index];
  const std::string& name = names_[index];
  const double n = static_cast<double>(samples_);
  const std::size_t clipped = c.at_max_in_runs + c.at_min_in_runs;
  // Over half the samples at the extremes is a two-level signal (a PRBS, a
  // square wave), not clipping.
  if (clipped > 0 && static_cast<double>(clipped) >= kClipFraction * n && static_cast<double>(clipped) < kTwoLevel * n) {
    std::ostringstream message;
    message << "channel '" << name << "' sits at its extreme value (" << c.min << " or " << c.max << ") in runs for "
            << clipped << " samples (" << 100.0 * clipped / n
            << " %): the acquisition may be saturating or clipping; the response is distorted where it does";
    out.push_back({Severity::kWarning, "ingest.clipping", message.str(), {.channel = name, .first_sample = c.first_run_sample}});
  }
  if (injection_rms > 0.0 && index != injection_) {
    const double mean = c.sum / n;
    const double trend = trend_over_record(c.sum, c.sum_index_weighted, samples_);
    if (std::abs(trend) > kDriftOverInjection * injection_rms) {
      std::ostringstream message;
      message << "channel '" << name << "' drifts by " << trend << " over the record, more than the injection's RMS ("
              << injection_rms << "): the lowest lines carry the drift's leakage";
      out.push_back(make_warning("ingest.drift", message.str(), {.channel = name}));
    }
    if (std::abs(mean) > kOffsetOverInjection * injection_rms) {
      std::ostringstream message;
      message << "channel '" << name << "' has a mean of " << mean << ", " << std::lround(std::abs(mean) / injection_rms)
              << " times the injection's RMS: the injection uses little of the acquisition's range (AC coupling or "
                 "a higher gain would resolve it better)";
      out.push_back(make_note("ingest.dc-offset", message.str(), {.channel = name}));
    }
  }
  return out;
}

Diagnostics QualityMonitor::findings() const {
  Diagnostics out;
  if (samples_ == 0) return out;
  const Channel& z = channels_[injection_];
  const double n = static_cast<double>(samples_);
  const double z_mean = z.sum / n;
  const double injection_rms = std::sqrt(std::max(0.0, z.sum_squares / n - z_mean * z_mean));
  for (std::size_t i = 0; i < channels_.size(); ++i) {
    const Diagnostics more = channel_findings(i, injection_rms);
    out.insert(out.end(), more.begin(), more.end());
  }
  return out;
}

double QualityMonitor::peak_magnitude(std::size_t index) const {
  const Channel& c = channels_.at(index);
  return samples_ == 0 ? 0.0 : std::max(std::abs(c.min), std::abs(c.max));
}

}  // namespace loopaudit
