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
// The drift fitted beside each dwell's sine: a slope and a curvature take
// what slow wander (load changes, thermal drift) would leak into it.
constexpr int kDriftOrder = 2;
// How many frequencies beside a dwell's own measure the noise its line
// carries, and how near and far they lie, in bins of the dwell (fs / N): two
// bins or more away, so that the fitted sine leaks little into them, and
// above the two and a half bins the drift polynomial spans. Sixteen give the
// margins' jackknife 15 degrees of freedom (eight, with 7, left the
// variance of a margin too uncertain from run to run: on the calibration
// check's resonant loop its phase crossover was held by the interval 86 % of
// the time).
constexpr std::size_t kBeside = 16;
constexpr int kNearestBin = 2;
constexpr int kFarthestBin = 12;
constexpr double kLowestBin = 2.5;
// A dwell of fewer cycles (after settling) has its neighbours too near the
// drift polynomial, which takes part of their noise, and too few below its
// own frequency: on the calibration check's conditional loop its lines
// claimed up to 2.7 times too little phase error. Its line's uncertainty
// takes the residual as white instead.
constexpr double kFewestCyclesBeside = 12.0;

using Complex = std::complex<double>;

// The errors the line H = Y/X would show from the noise beside the dwell's
// frequency: at each frequency f' beside it the residuals of x and y give
// phasors N_x, N_y that the same fit at f' would have taken for signal, and
// dH = (N_y - H N_x) / X, the first-order error of a ratio whose two
// channels carry correlated noise (x and y share the loop's disturbance).
// The noise need not be white: its power is taken to follow a power of
// frequency across the neighbours (a straight line through ln |dH|^2
// against ln f'), and each error is brought to that line's level at the
// dwell's own frequency. Without this, a dwell of few cycles, whose
// neighbours lie mostly above it, took the noise of higher frequencies for
// its own (measured on the calibration check's conditional loop: the lines
// below 110 Hz claimed 1.6 times their real error). Fewer than kBeside
// errors when the dwell is too short to hold them.
std::vector<Complex> errors_beside(const std::vector<double>& residual_x, const std::vector<double>& residual_y,
                                   Complex h, Complex x, double frequency_hz, double sample_rate_hz) {
  const double bin_hz = sample_rate_hz / static_cast<double>(residual_x.size());
  std::vector<Complex> errors;
  std::vector<double> log_ratio;
  for (int j = kNearestBin; j <= kFarthestBin && errors.size() < kBeside; ++j) {
    for (const int side : {-1, 1}) {
      const double f = frequency_hz + side * j * bin_hz;
      if (f < kLowestBin * bin_hz || f > sample_rate_hz / 2.0 - bin_hz || errors.size() == kBeside) continue;
      const Complex nx = fit_sine_three(residual_x, f, sample_rate_hz).phasor();
      const Complex ny = fit_sine_three(residual_y, f, sample_rate_hz).phasor();
      errors.push_back((ny - h * nx) / x);
      log_ratio.push_back(std::log(f / frequency_hz));
    }
  }
  if (errors.size() < 2) return errors;
  double mean_t = 0.0, mean_y = 0.0;
  const double n = static_cast<double>(errors.size());
  std::vector<double> log_power;
  for (const Complex& e : errors) log_power.push_back(std::log(std::max(std::norm(e), 1e-300)));
  for (std::size_t j = 0; j < errors.size(); ++j) {
    mean_t += log_ratio[j] / n;
    mean_y += log_power[j] / n;
  }
  double sxy = 0.0, sxx = 0.0;
  for (std::size_t j = 0; j < errors.size(); ++j) {
    sxx += (log_ratio[j] - mean_t) * (log_ratio[j] - mean_t);
    sxy += (log_ratio[j] - mean_t) * (log_power[j] - mean_y);
  }
  const double slope = sxx > 0.0 ? sxy / sxx : 0.0;
  for (std::size_t j = 0; j < errors.size(); ++j) errors[j] *= std::exp(-0.5 * slope * log_ratio[j]);
  return errors;
}

// Replicates of a line from the errors beside it, centred so that their
// mean is the line's value: H_(j) = H + c (E_j - mean E) with c = sqrt(G)/(G - 1),
// so that the jackknife's (G - 1)/G sum (H_(j) - mean)^2 is the unbiased
// variance of the errors, the line's own.
// Replicates of a line whose noise beside it could not be measured, from its
// first-order relative sigma: H_(j) = H (1 + c sigma (h_a[j] + i h_b[j]))
// with h_a, h_b two balanced rows of the Sylvester Hadamard matrix of order
// kBeside (+-1, each orthogonal to the others and to a constant) and
// c = 1/sqrt(G - 1), so that
// the jackknife gives ln|H| and arg H each the variance sigma^2. The rows
// turn with the line's index, so that neighbouring lines' pseudo-errors are
// uncorrelated, as their dwells' noise is.
std::vector<Complex> first_order_replicates(Complex h, double relative_sigma, std::size_t line) {
  static_assert((kBeside & (kBeside - 1)) == 0, "Sylvester's Hadamard matrices have an order that is a power of two");
  const auto hadamard = [](std::size_t row, std::size_t column) {
    return __builtin_popcountll(row & column) % 2 == 0 ? 1.0 : -1.0;
  };
  const std::size_t rows = kBeside - 1;  // the balanced ones: all but the first
  const std::size_t a = 1 + line % rows, b = 1 + (line + rows / 2) % rows;
  const double c = relative_sigma / std::sqrt(static_cast<double>(kBeside) - 1.0);
  std::vector<Complex> out;
  for (std::size_t j = 0; j < kBeside; ++j) out.push_back(h * (1.0 + c * Complex(hadamard(a, j), hadamard(b, j))));
  return out;
}

std::vector<Complex> replicates_of(Complex h, const std::vector<Complex>& errors) {
  const double g = static_cast<double>(errors.size());
  Complex mean = 0.0;
  for (const Complex& e : errors) mean += e;
  mean /= g;
  const double c = std::sqrt(g) / (g - 1.0);
  std::vector<Complex> out;
  for (const Complex& e : errors) out.push_back(h + c * (e - mean));
  return out;
}

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
  std::vector<double> unmeasured_hz;  // dwells too short to measure the noise beside their line
  std::vector<std::vector<Complex>> line_replicates;  // per line, in dwell order

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
    std::vector<double> residual_x, residual_y;
    const SineFit x = fit_sine_with_drift(buffer[1], z.frequency_hz, fs, kDriftOrder, &residual_x);
    const SineFit y = fit_sine_with_drift(buffer[2], z.frequency_hz, fs, kDriftOrder, &residual_y);
    if (x.amplitude() == 0.0 || y.amplitude() == 0.0) return;
    const Complex h = y.phasor() / x.phasor();
    const double cycles = static_cast<double>(n) * z.frequency_hz / fs;
    const auto errors = cycles >= kFewestCyclesBeside
                            ? errors_beside(residual_x, residual_y, h, x.phasor(), z.frequency_hz, fs)
                            : std::vector<Complex>{};
    double relative = 0.0;  // var(H) / |H|^2
    if (errors.size() == kBeside) {
      for (const Complex& e : errors) relative += std::norm(e);
      relative /= static_cast<double>(errors.size()) * std::norm(h);
      line_replicates.push_back(replicates_of(h, errors));
    } else {
      // Too short for the noise beside it: the residual as if white (a phasor
      // fitted to N samples with white residual s has variance 4 s^2 / N).
      relative = 4.0 * x.residual_rms * x.residual_rms / (n * std::norm(x.phasor())) +
                 4.0 * y.residual_rms * y.residual_rms / (n * std::norm(y.phasor()));
      unmeasured_hz.push_back(z.frequency_hz);
      line_replicates.push_back(first_order_replicates(h, std::sqrt(relative / 2.0), line_replicates.size()));
    }
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
    response.value.push_back(h);
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
  s.response.replicates.assign(kBeside, {});
  for (const auto& line : s.line_replicates) {
    for (std::size_t j = 0; j < kBeside; ++j) s.response.replicates[j].push_back(line[j]);
  }
  if (!s.unmeasured_hz.empty()) {
    findings.push_back(make_note("spectral.noise-unmeasured",
                                 std::to_string(s.unmeasured_hz.size()) + " dwells hold fewer than " +
                                     std::to_string(static_cast<int>(kFewestCyclesBeside)) +
                                     " cycles after settling (" + list(s.unmeasured_hz) +
                                     "): the noise beside their frequency cannot be told from the drift, so their "
                                     "lines' uncertainty takes the fit's residual as white noise; dwell longer for "
                                     "an uncertainty measured at the line's own frequency"));
  }
  // Dwells may come in any order; lines go out ascending.
  std::vector<std::size_t> order(s.response.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](auto a, auto b) { return s.response.frequency_hz[a] < s.response.frequency_hz[b]; });
  Response sorted = select_lines(s.response, order);
  sorted.method = {ResponseMethodKind::kSteppedSine, sorted.size(), 1.0};
  sorted.method.replicate_kind = ReplicateKind::kNoiseBeside;
  sorted.method.per_replicate = kBeside;
  return sorted;
}

}  // namespace loopaudit
