#include "loopmargin/spectral/welch.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <sstream>

#include "loopmargin/error.hpp"
#include "spectral/fft_plan.hpp"

namespace loopmargin {
namespace {

constexpr double kMaxOverlap = 0.9;
constexpr std::size_t kMinSegmentLength = 8;

std::size_t pair_index(std::size_t i, std::size_t j, std::size_t channel_count) {
  // Row-major index of (i, j), i <= j, in the upper triangle.
  return i * channel_count - i * (i + 1) / 2 + j;
}

}  // namespace

void WelchOptions::validate() const {
  if (segment_length < kMinSegmentLength) {
    throw ConfigError("segment length " + std::to_string(segment_length) + " is too short; use at least " +
                      std::to_string(kMinSegmentLength) + " samples");
  }
  if (!(overlap >= 0.0 && overlap <= kMaxOverlap)) {
    std::ostringstream message;
    message << "overlap " << overlap << " is out of range; use a fraction from 0 to " << kMaxOverlap;
    throw ConfigError(message.str());
  }
}

std::size_t WelchOptions::step() const {
  const auto shared = static_cast<std::size_t>(std::floor(overlap * static_cast<double>(segment_length)));
  return std::max<std::size_t>(segment_length - shared, 1);
}

const ComplexLines& CrossSpectra::at(std::size_t i, std::size_t j) const {
  return pairs.at(pair_index(i, j, channel_count));
}

double CrossSpectra::frequency_hz(std::size_t line) const {
  return static_cast<double>(line) * sample_rate_hz / static_cast<double>(segment_length);
}

double effective_averages(const std::vector<double>& window, std::size_t step, std::size_t segments) {
  const double k = static_cast<double>(segments);
  double inflation = 1.0;
  for (std::size_t j = 1; j < segments && j * step < window.size(); ++j) {
    const double c = overlap_correlation(window, j * step);
    inflation += 2.0 * (k - static_cast<double>(j)) / k * c * c;
  }
  return k / inflation;
}

Diagnostics spectral_findings(const CrossSpectra& spectra, const std::vector<std::string>& names) {
  constexpr double kMinAverages = 8.0;
  constexpr double kTopFraction = 0.9;        // the top tenth of the band
  constexpr double kNyquistPowerShare = 0.01;
  Diagnostics out;
  if (spectra.effective_averages < kMinAverages) {
    std::ostringstream message;
    message << "only " << spectra.effective_averages << " effective averages (" << spectra.segments
            << " segments): each line is uncertain; a shorter segment or a longer record helps";
    out.push_back(make_warning("spectral.few-averages", message.str()));
  }
  // Loop channels only: power near Nyquist that the injection does not explain
  // (incoherent with channel 0) is what aliasing adds.
  const std::size_t lines = spectra.line_count();
  const auto top = static_cast<std::size_t>(kTopFraction * static_cast<double>(lines));
  for (std::size_t c = 1; c < spectra.channel_count && c < names.size(); ++c) {
    double total = 0.0, incoherent_high = 0.0;
    for (std::size_t k = 1; k < lines; ++k) {
      const double p = spectra.at(c, c)[k].real();
      total += p;
      const double reference = spectra.at(0, 0)[k].real();
      const double coherence = p > 0.0 && reference > 0.0 ? std::norm(spectra.at(0, c)[k]) / (p * reference) : 0.0;
      if (k >= top) incoherent_high += p * (1.0 - coherence);
    }
    if (total > 0.0 && incoherent_high > kNyquistPowerShare * total) {
      std::ostringstream message;
      message << "channel '" << names[c] << "' has " << std::lround(100.0 * incoherent_high / total)
              << " % of its power in the top tenth of the band, near the Nyquist frequency, unexplained by the "
                 "injection: check the anti-alias filter; content above Nyquist folds onto the lines below it";
      out.push_back(make_warning("spectral.near-nyquist", message.str(),
                                 {.channel = names[c], .low_hz = spectra.frequency_hz(top),
                                  .high_hz = spectra.frequency_hz(lines - 1)}));
    }
  }
  return out;
}

struct WelchAccumulator::Impl {
  WelchOptions options;
  std::size_t channel_count;
  std::vector<double> window;
  detail::RealFft fft;
  std::vector<std::vector<double>> pending;  // samples not yet consumed, per channel
  std::size_t offset = 0;                    // start of the next segment in `pending`
  std::vector<ComplexLines> spectra;         // per channel, for the current segment
  std::vector<ComplexLines> sums;            // per pair
  std::size_t samples = 0;
  std::size_t segments = 0;

  Impl(std::size_t channels, const WelchOptions& opts)
      : options(opts),
        channel_count(channels),
        window(make_window(opts.window, opts.segment_length)),
        fft(opts.segment_length),
        pending(channels),
        spectra(channels, ComplexLines(opts.segment_length / 2 + 1)),
        sums(channels * (channels + 1) / 2, ComplexLines(opts.segment_length / 2 + 1)) {}

  void transform(std::size_t channel) {
    const double* segment = pending[channel].data() + offset;
    const std::size_t n = options.segment_length;
    const double mean =
        options.remove_segment_mean ? std::accumulate(segment, segment + n, 0.0) / static_cast<double>(n) : 0.0;
    auto in = fft.input();
    for (std::size_t i = 0; i < n; ++i) in[i] = (segment[i] - mean) * window[i];
    fft.execute();
    std::copy(fft.output().begin(), fft.output().end(), spectra[channel].begin());
  }

  void accumulate_segment() {
    for (std::size_t c = 0; c < channel_count; ++c) transform(c);
    std::size_t pair = 0;
    for (std::size_t i = 0; i < channel_count; ++i) {
      for (std::size_t j = i; j < channel_count; ++j, ++pair) {
        auto& sum = sums[pair];
        const auto& a = spectra[i];
        const auto& b = spectra[j];
        for (std::size_t k = 0; k < sum.size(); ++k) sum[k] += std::conj(a[k]) * b[k];
      }
    }
    ++segments;
  }
};

WelchAccumulator::WelchAccumulator(std::size_t channel_count, const WelchOptions& options) {
  options.validate();
  impl_ = std::make_unique<Impl>(channel_count, options);
}
WelchAccumulator::~WelchAccumulator() = default;
WelchAccumulator::WelchAccumulator(WelchAccumulator&&) noexcept = default;
WelchAccumulator& WelchAccumulator::operator=(WelchAccumulator&&) noexcept = default;

void WelchAccumulator::push(std::span<const std::span<const double>> channels) {
  Impl& s = *impl_;
  if (channels.size() != s.channel_count) throw std::invalid_argument("WelchAccumulator: channel count changed");
  for (std::size_t c = 0; c < s.channel_count; ++c) {
    s.pending[c].insert(s.pending[c].end(), channels[c].begin(), channels[c].end());
  }
  s.samples += channels.empty() ? 0 : channels[0].size();
  const std::size_t n = s.options.segment_length;
  const std::size_t available = s.pending.empty() ? 0 : s.pending[0].size();
  while (s.offset + n <= available) {
    s.accumulate_segment();
    s.offset += s.options.step();
  }
  const std::size_t consumed = std::min(s.offset, available);
  for (auto& samples : s.pending) samples.erase(samples.begin(), samples.begin() + static_cast<std::ptrdiff_t>(consumed));
  s.offset -= consumed;
}

std::size_t WelchAccumulator::samples_seen() const { return impl_->samples; }
std::size_t WelchAccumulator::segments_done() const { return impl_->segments; }

CrossSpectra WelchAccumulator::finish(double sample_rate_hz) const {
  const Impl& s = *impl_;
  if (s.segments == 0) {
    std::ostringstream message;
    message << "the record has " << s.samples << " samples, fewer than one segment of " << s.options.segment_length
            << "; choose a shorter segment length";
    throw NumericalError(message.str());
  }
  const double power = std::inner_product(s.window.begin(), s.window.end(), s.window.begin(), 0.0);
  const double scale = 1.0 / (sample_rate_hz * power * static_cast<double>(s.segments));
  const std::size_t n = s.options.segment_length;
  CrossSpectra result;
  result.channel_count = s.channel_count;
  result.segment_length = n;
  result.segments = s.segments;
  result.effective_averages = effective_averages(s.window, s.options.step(), s.segments);
  result.sample_rate_hz = sample_rate_hz;
  result.pairs = s.sums;
  for (auto& lines : result.pairs) {
    for (std::size_t k = 0; k < lines.size(); ++k) {
      const bool single_sided = (k == 0) || (n % 2 == 0 && k == n / 2);
      lines[k] *= single_sided ? scale : 2.0 * scale;
    }
  }
  return result;
}

}  // namespace loopmargin
