#include <algorithm>
#include <cmath>
#include <deque>
#include <limits>
#include <numbers>
#include <numeric>
#include <sstream>

#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/fft/window.hpp"
#include "excitation/dwell_finder.hpp"
#include "fft/fft_plan.hpp"

namespace loopaudit {
namespace {

// A frame holds one tone when this share of its power sits within two bins
// of its peak (a Hann-windowed tone puts about 0.99 there; white noise 5/512).
constexpr double kTonalShare = 0.5;
// The injection is a tone (stepped or chirp) when this share of frames is tonal.
constexpr double kTonalFrames = 0.6;
// Frames quieter than this share of the median frame are gaps, not signal.
constexpr double kActiveShare = 0.1;
// An upward zero crossing counts once the injection has gone below minus
// this share of its RMS over the latest kHysteresisFrames frames since the
// one before (hysteresis). Eight frames hold a cycle of any tone above 1/8192
// of the sample rate (122 Hz at 1 MS/s): one frame of a slower tone, near its
// zero crossing, would set the level far too low. Half
// the RMS is 0.35 of a sine's amplitude: noise at a tenth of the RMS reaches
// it once in 3 million samples, where at a quarter of the RMS (2.5 sigma) it
// added crossings near the zero crossings of a slow tone, whose slope there is
// small. A tone may drop 2.8 times in level from one frame to the next.
constexpr double kHysteresis = 0.5;
constexpr std::size_t kHysteresisFrames = 8;
constexpr double kSineCrossingPeriod = 16.0;
// Within a dwell of a stepped sine the period holds steady, and it steps at
// the dwell's edges: the crossings either side of an edge lie on two lines.
// A chirp is cut into pieces by the same rules, but its crossings curve
// through the cuts, on a parabola. Stepped when more than this share of the
// edges bend (edges between pieces that do not meet are not judged: a
// chirp's pieces meet).
constexpr double kMinBends = 0.5;
// Periodic: the normalised autocorrelation at the period reaches this.
constexpr double kPeriodicMatch = 0.9;
constexpr std::size_t kMinPeriod = 16;
// Band of a broadband or periodic injection: lines within this of its peak.
constexpr double kBandFloor = 0.01;  // 20 dB

struct Frame {
  double power = 0.0;
  double tonality = 0.0;
};

// Where between two samples `before` < 0 <= `after` a sine of `period`
// samples crosses zero, as a fraction of the sample interval. The straight
// line between the samples is off by up to 0.045 samples at 4 samples a
// period, 0.0065 at 10 and 0.0025 at 16: errors on a period of 2 %, 0.13 %
// and 0.03 %, against steps of 0.2 % and more that the dwell finder looks
// for. Below kSineCrossingPeriod samples the crossing is found on the sine
// through the two samples, from before = A sin(t) and after = A sin(t + w):
// exact for a pure tone of that period, off by 0.001 samples at 4 a period
// when the period is 1 % off (the current dwell's mean period is given; at a
// step it is the old dwell's).
// The sine and cosine of the phase step are kept while the period stays
// within 0.1 % (an error of 0.0001 samples at 4 a period).
struct CrossingFinder {
  double period = 0.0;
  double sin_w = 0.0, cos_w = 1.0;

  double fraction(double before, double after, double typical_period) {
    const double linear = before / (before - after);
    if (!(typical_period > 2.0 && typical_period < kSineCrossingPeriod)) return linear;
    if (std::abs(typical_period - period) > 1e-3 * period) {
      period = typical_period;
      sin_w = std::sin(2.0 * std::numbers::pi / period);
      cos_w = std::cos(2.0 * std::numbers::pi / period);
    }
    const double t = std::atan2(before * sin_w, after - before * cos_w);
    return std::clamp(-t * period / (2.0 * std::numbers::pi), 0.0, 1.0);
  }
};

}  // namespace

const char* excitation_name(ExcitationKind kind) { return name_of(kExcitationNames, kind); }

ExcitationKind excitation_from_name(const std::string& name) {
  return value_of(kExcitationNames, name, {"excitation"});
}

std::optional<ExcitationKind> excitation_setting_from_name(const std::string& name) {
  if (name == "auto") return std::nullopt;
  return value_of(kExcitationNames, name, {.what = "excitation", .also = "auto"});
}

struct ExcitationDetector::Impl {
  std::vector<double> window = make_window(WindowKind::kHann, kFrameSamples);
  detail::RealFft fft{kFrameSamples};
  std::vector<double> frame_buffer;
  std::vector<Frame> frames;
  std::vector<double> mean_spectrum = std::vector<double>(kFrameSamples / 2 + 1, 0.0);
  std::vector<double> head;  // the first kPeriodSearchSamples, for the period search
  std::size_t samples = 0;
  // Zero-crossing follower.
  double threshold = 0.0;
  std::deque<double> level;  // energy of the latest kHysteresisFrames frames
  double level_sum = 0.0;
  bool armed = false;
  double previous = 0.0;
  double last_crossing = -1.0;
  double last_period = 0.0;
  CrossingFinder crossings;
  detail::DwellFinder dwells;
  detail::FoundDwells found;  // set by finish()

  void analyse_frame() {
    const double mean = std::accumulate(frame_buffer.begin(), frame_buffer.end(), 0.0) / kFrameSamples;
    auto in = fft.input();
    double energy = 0.0;
    for (std::size_t i = 0; i < kFrameSamples; ++i) {
      in[i] = (frame_buffer[i] - mean) * window[i];
      energy += frame_buffer[i] * frame_buffer[i];
    }
    level.push_back(energy);
    level_sum += energy;
    if (level.size() > kHysteresisFrames) {
      level_sum -= level.front();
      level.pop_front();
    }
    threshold = kHysteresis * std::sqrt(std::max(level_sum, 0.0) / static_cast<double>(level.size() * kFrameSamples));
    fft.execute();
    const auto out = fft.output();
    std::vector<double> power(out.size());
    for (std::size_t k = 1; k < out.size(); ++k) power[k] = std::norm(out[k]);
    const auto peak = static_cast<std::size_t>(std::max_element(power.begin() + 1, power.end()) - power.begin());
    double total = 0.0, near = 0.0;
    for (std::size_t k = 1; k < power.size(); ++k) {
      total += power[k];
      mean_spectrum[k] += power[k];
      if (k + 2 >= peak && k <= peak + 2) near += power[k];
    }
    frames.push_back({total, total > 0.0 ? near / total : 0.0});
    frame_buffer.clear();
  }

  // Upward zero crossings with hysteresis, interpolated between samples;
  // the periods between them go to the dwell finder.
  void follow(double v) {
    const double position = static_cast<double>(samples);
    if (threshold > 0.0 && v < -threshold) armed = true;
    if (armed && previous < 0.0 && v >= 0.0) {
      armed = false;
      const double typical = dwells.period() > 0.0 ? dwells.period() : last_period;
      const double crossing = position - 1.0 + crossings.fraction(previous, v, typical);
      if (last_crossing >= 0.0) {
        dwells.add_period(last_crossing, crossing);
        last_period = crossing - last_crossing;
      }
      last_crossing = crossing;
    }
    previous = v;
  }

  std::optional<std::pair<std::size_t, double>> find_period() const;
  double tonal_fraction(double& active) const;
  void find_band(ExcitationPlan& plan, double fs) const;
  void classify_tone(ExcitationPlan& plan, double fs) const;
};

// Share of frames, among those louder than kActiveShare of the median, that
// hold one tone; `active` receives that loudness threshold.
double ExcitationDetector::Impl::tonal_fraction(double& active) const {
  if (frames.empty()) return 0.0;
  std::vector<double> powers;
  for (const Frame& f : frames) powers.push_back(f.power);
  std::nth_element(powers.begin(), powers.begin() + powers.size() / 2, powers.end());
  active = kActiveShare * powers[powers.size() / 2];
  std::size_t active_frames = 0, tonal_frames = 0;
  for (const Frame& f : frames) {
    if (f.power < active) continue;
    ++active_frames;
    if (f.tonality > kTonalShare) ++tonal_frames;
  }
  return active_frames ? static_cast<double>(tonal_frames) / static_cast<double>(active_frames) : 0.0;
}

void ExcitationDetector::Impl::find_band(ExcitationPlan& plan, double fs) const {
  const double peak = *std::max_element(mean_spectrum.begin() + 1, mean_spectrum.end());
  std::size_t low = 0, high = 0;
  for (std::size_t k = 1; k < mean_spectrum.size(); ++k) {
    if (peak <= 0.0 || mean_spectrum[k] < kBandFloor * peak) continue;
    if (low == 0) low = k;
    high = k;
  }
  plan.low_hz = static_cast<double>(low) * fs / kFrameSamples;
  plan.high_hz = static_cast<double>(high) * fs / kFrameSamples;
}

// The smallest lag at which the head of the record repeats itself, from its
// autocorrelation (computed by FFT, zero-padded so that it does not wrap).
std::optional<std::pair<std::size_t, double>> ExcitationDetector::Impl::find_period() const {
  const std::size_t n = head.size();
  if (n < 3 * kMinPeriod) return std::nullopt;
  std::size_t padded = 1;
  while (padded < 2 * n) padded <<= 1;
  detail::RealFft forward(padded);
  const double mean = std::accumulate(head.begin(), head.end(), 0.0) / static_cast<double>(n);
  auto in = forward.input();
  std::fill(in.begin(), in.end(), 0.0);
  for (std::size_t i = 0; i < n; ++i) in[i] = head[i] - mean;
  forward.execute();
  detail::InverseRealFft inverse(padded);
  auto lines = inverse.input();
  for (std::size_t k = 0; k < lines.size(); ++k) lines[k] = std::norm(forward.output()[k]);
  inverse.execute();
  const auto r = inverse.output();
  if (!(r[0] > 0.0)) return std::nullopt;
  // Unbiased and normalised: r(P) (N / (N - P)) / r(0); periods up to a third of the head.
  std::vector<double> match(n / 3 + 1, 0.0);
  for (std::size_t p = kMinPeriod; p < match.size(); ++p) {
    match[p] = r[p] / r[0] * static_cast<double>(n) / static_cast<double>(n - p);
  }
  const double best = *std::max_element(match.begin(), match.end());
  if (best < kPeriodicMatch) return std::nullopt;
  for (std::size_t p = kMinPeriod; p < match.size(); ++p) {
    const bool local_peak = match[p] >= match[p - 1] && (p + 1 >= match.size() || match[p] >= match[p + 1]);
    if (local_peak && match[p] >= 0.98 * best) return std::pair{p, match[p]};
  }
  return std::nullopt;
}

void ExcitationDetector::Impl::classify_tone(ExcitationPlan& plan, double fs) const {
  const auto& plateaus = found.plateaus;
  double covered = 0.0;
  for (const detail::Plateau& p : plateaus) covered += p.end - p.start;
  const bool bends = found.edges == 0 || static_cast<double>(found.bends) > kMinBends * static_cast<double>(found.edges);
  const bool stepped = plateaus.size() >= 2 && covered > 0.5 * static_cast<double>(samples) && bends;
  if (stepped) {
    plan.kind = ExcitationKind::kStepped;
    for (const detail::Plateau& p : plateaus) {
      plan.dwells.push_back({static_cast<std::size_t>(std::ceil(p.start)), static_cast<std::size_t>(std::floor(p.end)),
                             fs / p.mean_period()});
    }
    const auto [lo, hi] = std::minmax_element(plan.dwells.begin(), plan.dwells.end(),
                                              [](const Dwell& a, const Dwell& b) { return a.frequency_hz < b.frequency_hz; });
    plan.low_hz = lo->frequency_hz;
    plan.high_hz = hi->frequency_hz;
    return;
  }
  plan.kind = ExcitationKind::kChirp;
  find_band(plan, fs);
}

ExcitationDetector::ExcitationDetector() : impl_(std::make_unique<Impl>()) {}
ExcitationDetector::~ExcitationDetector() = default;
ExcitationDetector::ExcitationDetector(ExcitationDetector&&) noexcept = default;
ExcitationDetector& ExcitationDetector::operator=(ExcitationDetector&&) noexcept = default;

void ExcitationDetector::push(std::span<const double> injection) {
  Impl& s = *impl_;
  for (double v : injection) {
    if (s.head.size() < kPeriodSearchSamples) s.head.push_back(v);
    s.frame_buffer.push_back(v);
    if (s.frame_buffer.size() == kFrameSamples) s.analyse_frame();
    s.follow(v);
    ++s.samples;
  }
}

ExcitationPlan ExcitationDetector::finish(double sample_rate_hz) {
  Impl& s = *impl_;
  ExcitationPlan plan;
  s.found = s.dwells.finish();
  if (s.frames.empty()) return plan;  // too short to say: treated as broadband
  double active = 0.0;
  plan.tonal_fraction = s.tonal_fraction(active);
  if (plan.tonal_fraction > kTonalFrames) {
    s.classify_tone(plan, sample_rate_hz);
    std::vector<double> shares;
    for (const Frame& f : s.frames) {
      if (f.power >= active && f.tonality > kTonalShare) shares.push_back(f.tonality);
    }
    std::nth_element(shares.begin(), shares.begin() + shares.size() / 2, shares.end());
    const double share = std::min(shares[shares.size() / 2], 1.0 - 1e-12);
    plan.snr_db = 10.0 * std::log10(share / (1.0 - share));
    return plan;
  }
  s.find_band(plan, sample_rate_hz);
  if (const auto period = s.find_period()) {
    plan.kind = ExcitationKind::kPeriodic;
    plan.period_samples = period->first;
    plan.period_match = period->second;
    const double match = std::min(period->second, 1.0 - 1e-12);
    plan.snr_db = 10.0 * std::log10(match / (1.0 - match));
  }
  return plan;
}

std::size_t ExcitationDetector::samples_seen() const { return impl_->samples; }

bool ExcitationDetector::looks_tonal() const {
  double active = 0.0;
  return impl_->tonal_fraction(active) > kTonalFrames;
}

void ExcitationPlan::rescale_frequencies(double factor) {
  low_hz *= factor;
  high_hz *= factor;
  for (Dwell& d : dwells) d.frequency_hz *= factor;
}

std::string ExcitationPlan::describe(double sample_rate_hz) const {
  std::ostringstream out;
  out << excitation_name(kind);
  switch (kind) {
    case ExcitationKind::kPeriodic:
      out << ", period " << period_samples << " samples (" << format_time(static_cast<double>(period_samples) / sample_rate_hz)
          << ", match " << std::lround(100.0 * period_match) << " %)";
      break;
    case ExcitationKind::kStepped: out << ", " << dwells.size() << " dwells"; break;
    default: break;
  }
  out << ", " << format_frequency(low_hz) << " to " << format_frequency(high_hz);
  if (snr_db) out << ", SNR " << std::lround(*snr_db) << " dB";
  return out.str();
}

}  // namespace loopaudit
