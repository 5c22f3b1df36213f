#include "loopmargin/ingest/quality.hpp"

#include <cmath>
#include <sstream>

#include "loopmargin/error.hpp"

namespace loopmargin {
namespace {

constexpr std::size_t kChunk = 1 << 14;        // samples per point of the slow trend
constexpr std::size_t kClipRun = 3;            // equal samples at an extreme that make a flat top
constexpr double kClipFraction = 1e-5;         // of all samples, before it is reported
constexpr double kDriftOverInjection = 1.0;    // trend over the record against the injection's RMS
constexpr double kOffsetOverInjection = 100.0;

// Least-squares slope of the chunk means times their span: how far the mean moved.
double trend_over_record(const std::vector<double>& means) {
  const std::size_t n = means.size();
  if (n < 4) return 0.0;
  double su = 0.0, sv = 0.0, suu = 0.0, suv = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double u = static_cast<double>(i);
    su += u;
    sv += means[i];
    suu += u * u;
    suv += u * means[i];
  }
  const double slope = (n * suv - su * sv) / (n * suu - su * su);
  return slope * static_cast<double>(n - 1);
}

}  // namespace

QualityMonitor::QualityMonitor(std::vector<std::string> names, std::size_t injection, std::string origin)
    : names_(std::move(names)), injection_(injection), origin_(std::move(origin)), channels_(names_.size()) {}

void QualityMonitor::scan(Channel& c, double v, std::size_t sample) {
  if (!std::isfinite(v)) return;
  c.run = (v == c.previous) ? c.run + 1 : 1;
  c.previous = v;
  if (v > c.max) {
    c.max = v;
    c.at_max_in_runs = 0;
  }
  if (v < c.min) {
    c.min = v;
    c.at_min_in_runs = 0;
  }
  if (c.run >= kClipRun && (v == c.max || v == c.min)) {
    const std::size_t added = c.run == kClipRun ? kClipRun : 1;  // the run's first samples count once it qualifies
    (v == c.max ? c.at_max_in_runs : c.at_min_in_runs) += added;
    if (c.at_max_in_runs + c.at_min_in_runs == added) c.first_run_sample = sample + 1 - c.run;
  }
  c.sum += v;
  c.sum_squares += v * v;
  c.chunk_sum += v;
  if (++c.chunk_count == kChunk) {
    c.chunk_means.push_back(c.chunk_sum / kChunk);
    c.chunk_sum = 0.0;
    c.chunk_count = 0;
  }
}

void QualityMonitor::push(std::span<const std::span<const double>> channels, std::size_t first_sample) {
  for (std::size_t c = 0; c < channels.size(); ++c) {
    const auto& samples = channels[c];
    for (std::size_t i = 0; i < samples.size(); ++i) {
      if (!std::isfinite(samples[i])) {
        std::ostringstream message;
        message << origin_ << ": channel '" << names_[c] << "', sample " << first_sample + i << ": "
                << samples[i] << " is not a finite number";
        throw InputError(message.str());
      }
      scan(channels_[c], samples[i], first_sample + i);
    }
  }
  if (!channels.empty()) samples_ += channels[0].size();
}

Diagnostics QualityMonitor::channel_findings(std::size_t index, double injection_rms) const {
  Diagnostics out;
  const Channel& c = channels_[index];
  const std::string& name = names_[index];
  const double n = static_cast<double>(samples_);
  const std::size_t clipped = c.at_max_in_runs + c.at_min_in_runs;
  if (clipped > 0 && static_cast<double>(clipped) >= kClipFraction * n) {
    std::ostringstream message;
    message << "channel '" << name << "' sits at its extreme value (" << c.min << " or " << c.max << ") in runs for "
            << clipped << " samples (" << 100.0 * clipped / n
            << " %): the acquisition may be saturating or clipping; the response is distorted where it does";
    out.push_back({Severity::kWarning, "ingest.clipping", message.str(), {.channel = name, .first_sample = c.first_run_sample}});
  }
  if (injection_rms > 0.0 && index != injection_) {
    const double mean = c.sum / n;
    const double trend = trend_over_record(c.chunk_means);
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

}  // namespace loopmargin
