#include "loopaudit/spectral/stepped.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
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

// The noise beside a dwell's frequency: at each frequency f' beside it the
// residuals of x and y (after the sine and the drift) give phasors N_x, N_y
// that the same fit at f' would have taken for signal. Fewer than kBeside
// when the dwell is too short to hold them.
struct NoiseBeside {
  std::vector<double> frequency_hz;
  std::vector<Complex> x, y;
};

NoiseBeside noise_beside(const std::vector<double>& residual_x, const std::vector<double>& residual_y,
                         double frequency_hz, double sample_rate_hz) {
  const double bin_hz = sample_rate_hz / static_cast<double>(residual_x.size());
  NoiseBeside out;
  for (int j = kNearestBin; j <= kFarthestBin && out.x.size() < kBeside; ++j) {
    for (const int side : {-1, 1}) {
      const double f = frequency_hz + side * j * bin_hz;
      if (f < kLowestBin * bin_hz || f > sample_rate_hz / 2.0 - bin_hz || out.x.size() == kBeside) continue;
      out.frequency_hz.push_back(f);
      out.x.push_back(fit_sine_three(residual_x, f, sample_rate_hz).phasor());
      out.y.push_back(fit_sine_three(residual_y, f, sample_rate_hz).phasor());
    }
  }
  return out;
}

// The errors the line H = Y/X at f would show from that noise: at each f'
// beside it E = N_y - H(f') N_x, the noise that the ratio's own estimate
// would take in at f' (x and y share the loop's disturbance, so their noise
// is correlated and the combination, not either channel, is what a line
// carries), and dH = E / X. H(f') is the response read off the lines
// (`response_at`), not H(f): at the loop's sensitivity peak a disturbance
// inside the loop cancels in N_y - H(f) N_x at f alone, and the frequencies
// beside it showed the lines there too little noise (on the calibration
// check's resonant loop, rms z 1.5 for the lines within 10 % of the peak).
// The noise need not be white: the power of E is taken to follow a power of
// frequency across the neighbours (a straight line through ln |dH|^2
// against ln f'), and each error is brought to that line's level at the
// dwell's own frequency. Without this, a dwell of few cycles, whose
// neighbours lie mostly above it, took the noise of higher frequencies for
// its own (measured on the calibration check's conditional loop: the lines
// below 110 Hz claimed 1.6 times their real error).
template <typename ResponseAt>
std::vector<Complex> errors_of(const NoiseBeside& noise, Complex x, double frequency_hz, ResponseAt response_at) {
  std::vector<Complex> errors;
  std::vector<double> log_ratio;
  for (std::size_t j = 0; j < noise.x.size(); ++j) {
    errors.push_back((noise.y[j] - response_at(noise.frequency_hz[j]) * noise.x[j]) / x);
    log_ratio.push_back(std::log(noise.frequency_hz[j] / frequency_hz));
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

// The response between lines sorted by frequency: linear in log frequency
// for log |H| and the phase unwrapped along the lines, the end lines' value
// beyond them.
class LineInterpolation {
 public:
  explicit LineInterpolation(const Response& sorted) {
    double previous = 0.0;
    for (std::size_t k = 0; k < sorted.size(); ++k) {
      const double phase = std::arg(sorted.value[k]);
      const double unwrapped = k == 0 ? phase : previous + std::remainder(phase - previous, 2.0 * std::numbers::pi);
      log_f_.push_back(std::log(sorted.frequency_hz[k]));
      log_value_.push_back({std::log(std::abs(sorted.value[k])), unwrapped});
      previous = unwrapped;
    }
  }
  Complex operator()(double frequency_hz) const {
    const double u = std::log(frequency_hz);
    const auto above = std::upper_bound(log_f_.begin(), log_f_.end(), u);
    if (above == log_f_.begin()) return std::exp(log_value_.front());
    if (above == log_f_.end()) return std::exp(log_value_.back());
    const std::size_t k = static_cast<std::size_t>(above - log_f_.begin());
    const double t = (u - log_f_[k - 1]) / (log_f_[k] - log_f_[k - 1]);
    return std::exp(log_value_[k - 1] + t * (log_value_[k] - log_value_[k - 1]));
  }

 private:
  std::vector<double> log_f_;
  std::vector<Complex> log_value_;  // ln |H| + i arg H, unwrapped
};

// Two balanced rows of the Sylvester Hadamard matrix of order kBeside (+-1,
// each orthogonal to the others and to a constant), turning with the line's
// index so that neighbouring lines' pseudo-errors are uncorrelated, as their
// dwells' noise is.
struct SignRows {
  static_assert((kBeside & (kBeside - 1)) == 0, "Sylvester's Hadamard matrices have an order that is a power of two");
  std::size_t a, b;
  explicit SignRows(std::size_t line) {
    const std::size_t rows = kBeside - 1;  // the balanced ones: all but the first
    a = 1 + line % rows;
    b = 1 + (line + rows / 2) % rows;
  }
  static double sign(std::size_t row, std::size_t column) {
    return __builtin_popcountll(row & column) % 2 == 0 ? 1.0 : -1.0;
  }
};

// Replicates of a line from the errors beside it: H_(j) = H + c (s_j E_j -
// mean(s E)), s_j the signs of a balanced Hadamard row and
// c = sqrt(G)/(G - 1), so that the jackknife's (G - 1)/G sum (H_(j) - mean)^2
// is the errors' mean square, the line's own variance, and each error keeps
// its direction (a line's error need not be circular). The signs matter:
// the errors beside a dwell share part of their value (on the calibration
// check's conditional loop, below 70 Hz, centring them without signs left
// the replicates 0.76 of the line's variance, and its lower phase crossover's
// interval 1.5 times too narrow).
std::vector<Complex> replicates_of(Complex h, const std::vector<Complex>& errors, std::size_t line) {
  const double g = static_cast<double>(errors.size());
  const SignRows rows(line);
  Complex mean = 0.0;
  for (std::size_t j = 0; j < errors.size(); ++j) mean += SignRows::sign(rows.a, j) * errors[j] / g;
  const double c = std::sqrt(g) / (g - 1.0);
  std::vector<Complex> out;
  for (std::size_t j = 0; j < errors.size(); ++j) out.push_back(h + c * (SignRows::sign(rows.a, j) * errors[j] - mean));
  return out;
}

// Replicates of a line whose noise beside it could not be measured, from its
// first-order relative sigma: H_(j) = H (1 + c sigma (h_a[j] + i h_b[j]))
// with h_a, h_b the signs of two balanced Hadamard rows and
// c = 1/sqrt(G - 1), so that the jackknife gives ln|H| and arg H each the
// variance sigma^2.
std::vector<Complex> first_order_replicates(Complex h, double relative_sigma, std::size_t line) {
  const SignRows rows(line);
  const double c = relative_sigma / std::sqrt(static_cast<double>(kBeside) - 1.0);
  std::vector<Complex> out;
  for (std::size_t j = 0; j < kBeside; ++j) {
    out.push_back(h * (1.0 + c * Complex(SignRows::sign(rows.a, j), SignRows::sign(rows.b, j))));
  }
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
  // Per line, in dwell order: its replicates (left empty until finish()
  // for a line whose noise beside it was measured), the noise beside it and
  // the line's X.
  std::vector<std::vector<Complex>> line_replicates;
  std::vector<NoiseBeside> beside;
  std::vector<Complex> line_x;

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
    NoiseBeside noise = cycles >= kFewestCyclesBeside ? noise_beside(residual_x, residual_y, z.frequency_hz, fs)
                                                      : NoiseBeside{};
    double relative = 0.0;  // var(H) / |H|^2; set in finish() from the noise beside the line when measured
    if (noise.x.size() == kBeside) {
      line_replicates.emplace_back();
    } else {
      // Too short for the noise beside it: the residual as if white (a phasor
      // fitted to N samples with white residual s has variance 4 s^2 / N).
      relative = 4.0 * x.residual_rms * x.residual_rms / (n * std::norm(x.phasor())) +
                 4.0 * y.residual_rms * y.residual_rms / (n * std::norm(y.phasor()));
      unmeasured_hz.push_back(z.frequency_hz);
      line_replicates.push_back(first_order_replicates(h, std::sqrt(relative / 2.0), line_replicates.size()));
      noise = NoiseBeside{};
    }
    beside.push_back(std::move(noise));
    line_x.push_back(x.phasor());
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

  // Each line's sigma and replicates from the noise measured beside it,
  // once every line is known (the errors need the response beside each).
  void measure_noise(const LineInterpolation& response_at) {
    for (std::size_t k = 0; k < response.size(); ++k) {
      if (beside[k].x.empty()) continue;
      const Complex h = response.value[k];
      const auto errors = errors_of(beside[k], line_x[k], response.frequency_hz[k], response_at);
      double relative = 0.0;
      for (const Complex& e : errors) relative += std::norm(e);
      relative /= static_cast<double>(errors.size()) * std::norm(h);
      response.relative_sigma[k] = std::sqrt(relative / 2.0);
      line_replicates[k] = replicates_of(h, errors, k);
    }
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
  s.measure_noise(LineInterpolation(select_lines(s.response, order)));
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
  Response sorted = select_lines(s.response, order);
  sorted.method = {ResponseMethodKind::kSteppedSine, sorted.size(), 1.0};
  sorted.method.replicate_kind = ReplicateKind::kNoiseBeside;
  sorted.method.per_replicate = kBeside;
  return sorted;
}

}  // namespace loopaudit
