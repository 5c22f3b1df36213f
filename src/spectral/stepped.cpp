#include "loopaudit/spectral/stepped.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/spectral/sine_fit.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

constexpr std::size_t kChannels = 3;
// A harmonic's fitted amplitude over the noise fitted beside it before it
// counts: noise alone passes 4 times its RMS amplitude with probability
// exp(-16) (Rayleigh).
constexpr double kHarmonicOverNoise = 4.0;
// A dwell's injection further than this from the frequency the schedule or
// marker states is reported: the schedule and the recording disagree.
constexpr double kFrequencyMismatch = 0.02;

struct Window {
  std::size_t first = 0;  // after settling
  std::size_t end = 0;
};

}  // namespace

struct SteppedSineEstimator::Impl {
  SteppedOptions options;
  std::vector<Window> windows;
  std::size_t current = 0;
  std::vector<double> buffer[kChannels];
  Response response;
  std::vector<double> too_short_hz;
  std::vector<double> distorted_hz;
  std::vector<double> mismatched_hz;  // dwells whose injection is not at the stated frequency

  explicit Impl(SteppedOptions o) : options(std::move(o)) {
    for (const Dwell& d : options.dwells) {
      const double settle = std::max(options.settle_cycles / d.frequency_hz, options.settle_s) * options.sample_rate_hz;
      const std::size_t dwell_length = d.end_sample - std::min(d.first_sample, d.end_sample);
      windows.push_back({d.first_sample + clamped_samples(std::ceil(settle), dwell_length), d.end_sample});
    }
  }

  void fit_current() {
    const Dwell& d = options.dwells[current];
    const std::size_t n = buffer[0].size();
    const double fs = options.sample_rate_hz;
    if (static_cast<double>(n) < fs / d.frequency_hz || n < 16) {  // less than one cycle after settling
      too_short_hz.push_back(d.frequency_hz);
      return;
    }
    const SineFit z = fit_sine_four(buffer[0], d.frequency_hz, fs);
    if (std::abs(z.frequency_hz / d.frequency_hz - 1.0) > kFrequencyMismatch) mismatched_hz.push_back(d.frequency_hz);
    const SineFit x = fit_sine_three(buffer[1], z.frequency_hz, fs);
    const SineFit y = fit_sine_three(buffer[2], z.frequency_hz, fs);
    if (x.amplitude() == 0.0 || y.amplitude() == 0.0) return;
    const double relative = 4.0 * x.residual_rms * x.residual_rms / (n * std::norm(x.phasor())) +
                            4.0 * y.residual_rms * y.residual_rms / (n * std::norm(y.phasor()));
    const auto snr = [](const SineFit& f) {
      return f.residual_rms > 0.0 ? db_from_power(f.amplitude() * f.amplitude() / 2.0 / (f.residual_rms * f.residual_rms))
                                  : 300.0;
    };
    // A harmonic counts when it stands above the noise around it: fits two
    // lines (2 fs/N) either side measure the local noise, coloured or not.
    double worst = 0.0;
    const double offset = 2.0 * fs / static_cast<double>(n);
    for (std::size_t c = 1; c <= 2; ++c) {
      const SineFit& fundamental = c == 1 ? x : y;
      for (int k = 2; k <= 5; ++k) {
        const double fh = k * z.frequency_hz;
        if (fh + offset >= fs / 2.0) break;
        const double h = fit_sine_three(buffer[c], fh, fs).amplitude();
        const double local = std::hypot(fit_sine_three(buffer[c], fh - offset, fs).amplitude(),
                                        fit_sine_three(buffer[c], fh + offset, fs).amplitude()) / std::sqrt(2.0);
        if (h > kHarmonicOverNoise * local) worst = std::max(worst, h / fundamental.amplitude());
      }
    }
    if (worst > options.max_harmonic_ratio) distorted_hz.push_back(z.frequency_hz);
    const double snr_db = std::min(snr(x), snr(y));
    response.frequency_hz.push_back(z.frequency_hz);
    response.value.push_back(y.phasor() / x.phasor());
    response.coherence.push_back(1.0 / (1.0 + std::pow(10.0, -snr_db / 10.0)));
    response.snr_db.push_back(snr_db);
    response.relative_sigma.push_back(std::sqrt(relative / 2.0));
  }

  void next_dwell() {
    fit_current();
    for (auto& b : buffer) b.clear();
    ++current;
  }
};

void SteppedOptions::validate() const {
  if (!plausible_sample_rate(sample_rate_hz)) {
    throw setting_out_of_range("sample_rate_hz", sample_rate_hz, std::string("a rate from ") + kSampleRateRangeText);
  }
  if (!(settle_cycles >= 0.0 && std::isfinite(settle_cycles))) {
    throw setting_out_of_range("settle_cycles", settle_cycles, "0 or more cycles");
  }
  if (!(settle_s >= 0.0 && std::isfinite(settle_s))) {
    throw setting_out_of_range("settle_s", settle_s, "0 or more seconds");
  }
  if (!(max_harmonic_ratio > 0.0 && std::isfinite(max_harmonic_ratio))) {
    throw setting_out_of_range("max_harmonic_ratio", max_harmonic_ratio, "a positive share of the fundamental");
  }
}

SteppedSineEstimator::SteppedSineEstimator(SteppedOptions options) {
  options.validate();
  impl_ = std::make_unique<Impl>(std::move(options));
}
SteppedSineEstimator::~SteppedSineEstimator() = default;
SteppedSineEstimator::SteppedSineEstimator(SteppedSineEstimator&&) noexcept = default;
SteppedSineEstimator& SteppedSineEstimator::operator=(SteppedSineEstimator&&) noexcept = default;

void SteppedSineEstimator::push(std::span<const std::span<const double>> channels, std::size_t first_sample) {
  Impl& s = *impl_;
  const std::size_t count = channels.empty() ? 0 : channels[0].size();
  std::size_t i = 0;
  while (i < count && s.current < s.windows.size()) {
    const Window& w = s.windows[s.current];
    const std::size_t sample = first_sample + i;
    if (sample >= w.end) {
      s.next_dwell();
      continue;
    }
    if (sample < w.first) {
      i += std::min(w.first - sample, count - i);
      continue;
    }
    const std::size_t take = std::min(w.end - sample, count - i);
    for (std::size_t c = 0; c < kChannels; ++c) {
      s.buffer[c].insert(s.buffer[c].end(), channels[c].begin() + static_cast<std::ptrdiff_t>(i),
                         channels[c].begin() + static_cast<std::ptrdiff_t>(i + take));
    }
    i += take;
  }
}

Response SteppedSineEstimator::finish(Diagnostics& findings) {
  Impl& s = *impl_;
  while (s.current < s.windows.size()) s.next_dwell();
  const auto list = [](const std::vector<double>& hz) {
    std::ostringstream out;
    for (std::size_t i = 0; i < hz.size() && i < 6; ++i) out << (i ? ", " : "") << format_frequency(hz[i]);
    if (hz.size() > 6) out << " and " << hz.size() - 6 << " more";
    return out.str();
  };
  if (!s.too_short_hz.empty()) {
    findings.push_back(make_warning("excitation.dwell-too-short",
                                    std::to_string(s.too_short_hz.size()) + " dwells hold less than one full cycle after " +
                                        "settling and are left out (" + list(s.too_short_hz) +
                                        "): dwell longer at these frequencies, or settle for fewer cycles"));
  }
  if (!s.distorted_hz.empty()) {
    std::ostringstream message;
    message << "harmonics above " << std::lround(100.0 * s.options.max_harmonic_ratio)
            << " % of the fundamental at " << s.distorted_hz.size() << " dwells (" << list(s.distorted_hz)
            << "): the injection may be too large for the loop to stay linear";
    findings.push_back(make_warning("excitation.distortion", message.str()));
  }
  if (!s.mismatched_hz.empty()) {
    findings.push_back(make_warning("excitation.frequency-mismatch",
                                    std::to_string(s.mismatched_hz.size()) + " dwells hold their tone more than 2 % " +
                                        "away from the frequency stated for them (" + list(s.mismatched_hz) +
                                        "): do the schedule or marker and the recording belong together?"));
  }
  if (s.response.size() == 0) throw NumericalError("no dwell of the stepped sine could be fitted");
  // Dwells may come in any order; lines go out ascending.
  std::vector<std::size_t> order(s.response.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](auto a, auto b) { return s.response.frequency_hz[a] < s.response.frequency_hz[b]; });
  Response sorted;
  for (std::size_t i : order) {
    sorted.frequency_hz.push_back(s.response.frequency_hz[i]);
    sorted.value.push_back(s.response.value[i]);
    sorted.coherence.push_back(s.response.coherence[i]);
    sorted.relative_sigma.push_back(s.response.relative_sigma[i]);
    sorted.snr_db.push_back(s.response.snr_db[i]);
  }
  sorted.method = {ResponseMethodKind::kSteppedSine, sorted.size(), 1.0};
  return sorted;
}

}  // namespace loopaudit
