#include "loopaudit/spectral/response.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

using Complex = std::complex<double>;

// Lines at or below this coherence are counted in a finding.
constexpr double kLowCoherence = 0.5;

double coherence_of(const CrossSpectra& s, std::size_t i, std::size_t j, std::size_t k) {
  const double denominator = s.at(i, i)[k].real() * s.at(j, j)[k].real();
  return denominator > 0.0 ? std::norm(s.at(i, j)[k]) / denominator : 0.0;
}

struct Line {
  Complex value;
  double coherence;
  double relative_sigma;
};

Line reference_line(const CrossSpectra& s, std::size_t k) {
  const Complex s_rx = s.at(kReferenceChannel, kInputChannel)[k];
  const Complex s_ry = s.at(kReferenceChannel, kOutputChannel)[k];
  const Complex h = s_ry / s_rx;
  const double s_rr = s.at(kReferenceChannel, kReferenceChannel)[k].real();
  const double s_xx = s.at(kInputChannel, kInputChannel)[k].real();
  const double s_yy = s.at(kOutputChannel, kOutputChannel)[k].real();
  const Complex s_xy = s.at(kInputChannel, kOutputChannel)[k];
  const double s_ee = std::max(0.0, s_yy - 2.0 * (std::conj(h) * s_xy).real() + std::norm(h) * s_xx);
  const double relative_variance = s_rr * s_ee / (s.effective_averages * std::norm(s_rx) * std::norm(h));
  const double coherence = std::min(coherence_of(s, kReferenceChannel, kInputChannel, k),
                                    coherence_of(s, kReferenceChannel, kOutputChannel, k));
  return {h, coherence, std::sqrt(relative_variance / 2.0)};
}

Line two_channel_line(const CrossSpectra& s, std::size_t k) {
  const Complex s_xy = s.at(kInputChannel, kOutputChannel)[k];
  const double s_xx = s.at(kInputChannel, kInputChannel)[k].real();
  const double coherence = coherence_of(s, kInputChannel, kOutputChannel, k);
  return {s_xy / s_xx, coherence, bendat_piersol_random_error(coherence, s.effective_averages)};
}

// Runs of low-coherence lines, bridging gaps of a few good lines.
std::vector<std::pair<std::size_t, std::size_t>> low_coherence_runs(const Response& r) {
  constexpr std::size_t kBridgedGap = 4;
  std::vector<std::pair<std::size_t, std::size_t>> runs;
  for (std::size_t k = 0; k < r.size(); ++k) {
    if (r.coherence[k] > kLowCoherence) continue;
    if (!runs.empty() && k - runs.back().second <= kBridgedGap) {
      runs.back().second = k;
    } else {
      runs.emplace_back(k, k);
    }
  }
  return runs;
}

// One finding: how many lines, and the widest runs of them.
void report_low_coherence(const Response& r, Diagnostics& findings) {
  constexpr std::size_t kRunsNamed = 3;
  auto runs = low_coherence_runs(r);
  if (runs.empty()) return;
  std::size_t count = 0;
  for (std::size_t k = 0; k < r.size(); ++k) count += r.coherence[k] <= kLowCoherence ? 1 : 0;
  std::sort(runs.begin(), runs.end(), [](const auto& a, const auto& b) { return a.second - a.first > b.second - b.first; });
  runs.resize(std::min(runs.size(), kRunsNamed));
  std::sort(runs.begin(), runs.end());
  std::ostringstream message;
  message << count << " of " << r.size() << " lines have coherence at or below " << kLowCoherence << ", mostly";
  for (std::size_t i = 0; i < runs.size(); ++i) {
    message << (i == 0 ? " " : ", ")
            << format_frequency_range(r.frequency_hz[runs[i].first], r.frequency_hz[runs[i].second]);
  }
  message << "; their values are uncertain";
  findings.push_back(make_warning("spectral.low-coherence", message.str(),
                                  {.low_hz = r.frequency_hz[runs.front().first], .high_hz = r.frequency_hz[runs.back().second]}));
}

// The line's value with each group of segments left out in turn: the same
// ratio of the cross-spectra, each less that group's sum.
void add_replicates(const CrossSpectra& s, Estimator estimator, std::size_t k, Response& response) {
  const auto pairs = ratio_pairs(estimator);
  for (std::size_t g = 0; g < s.groups.size(); ++g) {
    const Complex den = s.at(pairs[0].first, pairs[0].second)[k] - (*s.group_at(g, pairs[0].first, pairs[0].second))[k];
    const Complex num = s.at(pairs[1].first, pairs[1].second)[k] - (*s.group_at(g, pairs[1].first, pairs[1].second))[k];
    response.replicates[g].push_back(num / den);
  }
}

// Whether the spectra hold the groups the estimator's replicates need.
bool has_groups(const CrossSpectra& s, Estimator estimator) {
  if (s.groups.size() < 2) return false;
  for (const auto& [i, j] : ratio_pairs(estimator)) {
    if (!s.group_at(0, i, j)) return false;
  }
  return true;
}

}  // namespace

std::vector<std::pair<std::size_t, std::size_t>> ratio_pairs(Estimator estimator) {
  if (estimator == Estimator::kReference) return {{kReferenceChannel, kInputChannel}, {kReferenceChannel, kOutputChannel}};
  return {{kInputChannel, kInputChannel}, {kInputChannel, kOutputChannel}};
}

const char* estimator_name(Estimator estimator) { return name_of(kEstimatorNames, estimator); }

Estimator estimator_from_name(const std::string& name) { return value_of(kEstimatorNames, name, {"estimator"}); }

double bendat_piersol_random_error(double coherence, double averages) {
  if (coherence <= 0.0) return INFINITY;
  return std::sqrt(1.0 - coherence) / (std::sqrt(coherence) * std::sqrt(2.0 * averages));
}

void ResponseOptions::validate() const {
  if (!(injection_floor_db > 0.0 && std::isfinite(injection_floor_db))) {
    throw setting_out_of_range("injection_floor_db", injection_floor_db, "a positive number of dB");
  }
}

Response estimate_response(const CrossSpectra& spectra, const ResponseOptions& options, Diagnostics& findings) {
  options.validate();
  const auto& reference_power = spectra.at(kReferenceChannel, kReferenceChannel);
  // DC and the Nyquist line of a real signal carry no phase: never reported.
  const std::size_t last_line = (spectra.segment_length - 1) / 2;
  double peak = 0.0;
  for (std::size_t k = 1; k <= last_line; ++k) peak = std::max(peak, reference_power[k].real());
  if (!(peak > 0.0)) throw NumericalError("the reference channel is flat: it carries no injection at any frequency");
  const double floor = peak * std::pow(10.0, -options.injection_floor_db / 10.0);

  Response response;
  response.method = {ResponseMethodKind::kWelch, spectra.segments, spectra.effective_averages};
  const bool grouped = has_groups(spectra, options.estimator);
  if (grouped) {
    response.method.replicate_kind = ReplicateKind::kGroups;
    response.method.per_replicate = spectra.segments_per_group;
    response.method.replicate_variance_factor = spectra.group_variance_factor;
    response.replicates.resize(spectra.groups.size());
  } else {
    response.method.no_replicates_reason = *spectra.no_groups_reason ? spectra.no_groups_reason
                                                                     : "the segments were not kept in groups";
  }
  for (std::size_t k = 1; k <= last_line; ++k) {
    if (reference_power[k].real() < floor) continue;
    const Line line = options.estimator == Estimator::kReference ? reference_line(spectra, k)
                                                                 : two_channel_line(spectra, k);
    if (!std::isfinite(line.value.real()) || !std::isfinite(line.value.imag()) || std::abs(line.value) == 0.0) continue;
    response.frequency_hz.push_back(spectra.frequency_hz(k));
    response.value.push_back(line.value);
    response.coherence.push_back(line.coherence);
    response.relative_sigma.push_back(line.relative_sigma);
    if (grouped) add_replicates(spectra, options.estimator, k, response);
  }
  if (response.size() == 0) throw NumericalError("no line carries injection power above the floor");
  if (options.estimator == Estimator::kTwoChannel) {
    findings.push_back(make_warning("spectral.two-channel-bias",
                                    "the two-channel estimate S_xy/S_xx is biased when the loop is closed; "
                                    "use the reference method unless x is driven from outside the loop"));
  }
  report_low_coherence(response, findings);
  return response;
}

}  // namespace loopaudit
