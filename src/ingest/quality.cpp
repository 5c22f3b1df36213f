#include "loopaudit/ingest/quality.hpp"

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numeric>
#include <optional>
#include <sstream>

#include "loopaudit/error.hpp"

namespace loopaudit {
namespace {

// Clipping: the samples at an extreme value (with the next value inside
// when it lies within one quantisation step) against the mean count of the
// values just inside it. A sine's samples crowd near its peaks (arcsine
// density), so on ADC codes its top two codes hold up to 3 times the mean
// of the next six per code; Gaussian noise thins out towards its extremes
// and a periodic signal repeats every value alike. A clipped signal stacks
// every excursion beyond the clip level on one value: hundreds of times.
constexpr double kPileRatio = 10.0;
constexpr double kStepSlack = 1.5;             // a gap up to 1.5 steps is the next code
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

void QualityMonitor::TopValues::add(double x, std::size_t sample) {
  std::size_t i = 0;
  for (; i < size_ && values_[i] >= x; ++i) {
    if (values_[i] == x) {
      ++counts_[i];
      return;
    }
  }
  if (i == kKept) return;  // below every kept value, and they are kKept
  for (std::size_t j = std::min(size_, kKept - 1); j > i; --j) {
    values_[j] = values_[j - 1];
    counts_[j] = counts_[j - 1];
    first_[j] = first_[j - 1];
  }
  values_[i] = x;
  counts_[i] = 1;
  first_[i] = sample;
  size_ = std::min(size_ + 1, kKept);
}

void QualityMonitor::TopValues::push(std::span<const double> v, double sign, double block_top,
                                     std::size_t first_sample) {
  const auto threshold = [&] { return size_ == kKept ? values_[kKept - 1] : -INFINITY; };
  double below = threshold();
  if (block_top < below) return;
  for (std::size_t i = 0; i < v.size(); ++i) {
    const double x = sign * v[i];
    if (x < below) continue;
    add(x, first_sample + i);
    below = threshold();
  }
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
  c.max = std::max(c.max, s.max);
  c.min = std::min(c.min, s.min);
  c.top.push(v, 1.0, s.max, first_sample);
  c.bottom.push(v, -1.0, -s.min, first_sample);
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

namespace {

// The samples piled up at one extreme: those at the extreme value and, when
// the next value inside lies within one quantisation step of it (the
// smallest gap between the values further inside), at that value too.
struct Pile {
  std::size_t samples = 0;
  double ratio = 0.0;  // per value, against the mean count of the values just inside
  std::size_t first_sample = 0;
};

template <typename Top>
Pile pile_of(const Top& t) {
  const std::size_t m = t.size();
  if (m < 4) return {};  // too few values to compare with
  double step = INFINITY;
  for (std::size_t i = 1; i + 1 < m; ++i) step = std::min(step, t.value(i) - t.value(i + 1));
  const std::size_t piled = t.value(0) - t.value(1) <= kStepSlack * step ? 2 : 1;
  Pile p{0, 0.0, t.first_sample(0)};
  for (std::size_t i = 0; i < piled; ++i) {
    p.samples += t.count(i);
    p.first_sample = std::min(p.first_sample, t.first_sample(i));
  }
  double inside = 0.0;
  for (std::size_t i = piled; i < m; ++i) inside += static_cast<double>(t.count(i));
  inside /= static_cast<double>(m - piled);
  p.ratio = static_cast<double>(p.samples) / static_cast<double>(piled) / inside;
  return p;
}

// "1.9", "10.3", "0.015": one decimal from 1 % up, two significant digits below.
std::string percent_text(double fraction) {
  char text[32];
  std::snprintf(text, sizeof text, fraction >= 0.01 ? "%.1f" : "%.2g", 100.0 * fraction);
  return text;
}

}  // namespace

std::optional<Diagnostic> QualityMonitor::clipping_finding(std::size_t index) const {
  const Channel& c = channels_[index];
  const double n = static_cast<double>(samples_);
  const Pile top = pile_of(c.top);
  const Pile bottom = pile_of(c.bottom);
  std::size_t clipped = 0, first = samples_;
  double ratio = INFINITY;
  for (const Pile& p : {top, bottom}) {
    if (!(p.ratio >= kPileRatio)) continue;
    clipped += p.samples;
    first = std::min(first, p.first_sample);
    ratio = std::min(ratio, p.ratio);
  }
  // Over half the samples at the extremes is a two-level signal (a PRBS, a
  // square wave), not clipping.
  if (clipped == 0 || static_cast<double>(clipped) < kClipFraction * n ||
      static_cast<double>(clipped) >= kTwoLevel * n) {
    return std::nullopt;
  }
  std::ostringstream message;
  message << "channel '" << names_[index] << "' piles up at its extreme values (" << c.min << " and " << c.max
          << "): " << clipped << " samples (" << percent_text(static_cast<double>(clipped) / n)
          << " %) sit at them or within one quantisation step, " << std::lround(ratio)
          << " times as many per value as at the values just inside: the acquisition may be clipping or "
             "saturating; the response is distorted where it does";
  return Diagnostic{
      Severity::kWarning, "ingest.clipping", message.str(), {.channel = names_[index], .first_sample = first}};
}

Diagnostics QualityMonitor::channel_findings(std::size_t index, double injection_rms) const {
  Diagnostics out;
  const Channel& c = channels_[index];
  const std::string& name = names_[index];
  const double n = static_cast<double>(samples_);
  if (auto clipped = clipping_finding(index)) out.push_back(std::move(*clipped));
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
