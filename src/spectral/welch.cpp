#include "loopaudit/spectral/welch.hpp"

#include <Eigen/Core>
#include <algorithm>
#include <iomanip>
#include <cmath>
#include <numeric>
#include <sstream>
#include <condition_variable>
#include <functional>
#include <mutex>
#include <thread>

#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "fft/fft_plan.hpp"
#include "spectral/group_sums.hpp"

namespace loopaudit {
namespace {

constexpr double kMaxOverlap = 0.9;
constexpr std::size_t kMinSegmentLength = 8;
// The longest segment: 2^22 samples (2^21 lines; 0.24 Hz apart at 1 MS/s),
// so that a segment's buffers (a few hundred MB at this length) are bounded
// before they are allocated.
constexpr std::size_t kMaxSegmentLength = std::size_t{1} << 22;

std::size_t pair_index(std::size_t i, std::size_t j, std::size_t channel_count) {
  // Row-major index of (i, j), i <= j, in the upper triangle.
  return i * channel_count - i * (i + 1) / 2 + j;
}

}  // namespace

void WelchOptions::validate() const {
  if (segment_length < kMinSegmentLength || segment_length > kMaxSegmentLength) {
    throw setting_out_of_range("segment", segment_length,
                               std::to_string(kMinSegmentLength) + " to " + std::to_string(kMaxSegmentLength) + " samples");
  }
  if (!(overlap >= 0.0 && overlap <= kMaxOverlap)) {
    throw setting_out_of_range("overlap", overlap, "a fraction from 0 to " + format_fixed(kMaxOverlap, 1));
  }
}

std::size_t WelchOptions::step() const {
  const auto shared = static_cast<std::size_t>(std::floor(overlap * static_cast<double>(segment_length)));
  return std::max<std::size_t>(segment_length - shared, 1);
}

const ComplexLines& CrossSpectra::at(std::size_t i, std::size_t j) const {
  return pairs.at(pair_index(i, j, channel_count));
}

const ComplexLines* CrossSpectra::group_at(std::size_t g, std::size_t i, std::size_t j) const {
  const auto it = std::find(grouped_pairs.begin(), grouped_pairs.end(), std::pair{i, j});
  if (it == grouped_pairs.end() || g >= groups.size()) return nullptr;
  return &groups[g][static_cast<std::size_t>(it - grouped_pairs.begin())];
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

double segments_of(std::size_t samples, double overlap, std::size_t length) {
  if (samples < length) return 0.0;
  const double step = std::max(1.0, std::floor(static_cast<double>(length) * (1.0 - overlap)));
  return std::floor(static_cast<double>(samples - length) / step) + 1.0;
}

std::size_t suggested_segment(std::size_t samples, double overlap, std::size_t longest, double segments) {
  std::size_t length = 64;
  while (length * 2 <= longest && segments_of(samples, overlap, length * 2) >= segments) length *= 2;
  return length;
}

Diagnostics spectral_findings(const CrossSpectra& spectra, const std::vector<std::string>& names) {
  // Below 12 the intervals of crossings run about 1.2 times too narrow
  // (measured: AnalysisOptions::min_effective_averages).
  constexpr double kMinAverages = 12.0;
  constexpr double kTopFraction = 0.9;        // the top tenth of the band
  constexpr double kNyquistPowerShare = 0.01;
  Diagnostics out;
  if (spectra.effective_averages < kMinAverages) {
    std::ostringstream message;
    const std::size_t samples = (spectra.segments - 1) * spectra.step + spectra.segment_length;
    const double overlap = 1.0 - static_cast<double>(spectra.step) / static_cast<double>(spectra.segment_length);
    const std::size_t shorter = suggested_segment(samples, overlap, spectra.segment_length / 2);
    message << "only " << std::fixed << std::setprecision(1) << spectra.effective_averages << " effective averages ("
            << spectra.segments << (spectra.segments == 1 ? " segment" : " segments")
            << "): the lines' uncertainty, and so every interval, may be underestimated; shorter segments (--segment "
            << shorter << " gives about " << std::lround(segments_of(samples, overlap, shorter)) << " segments) or a longer record help";
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

namespace {

// One worker's share of the averaging: an FFT per channel (each with its own
// output buffer, so nothing is copied) and its own running sums. The pairs
// the jackknife needs (`grouped`) go into the lane's own group sums instead
// of its totals: each lane keeps its own, so that the sums, added up in lane
// order at the end, do not depend on which lane finished first (one shared
// set, added to under a lock, gave results that differed in their last bits
// from run to run).
struct Lane {
  std::vector<detail::RealFft> ffts;
  std::vector<ComplexLines> sums;  // per pair
  detail::GroupSums groups;        // per group, per grouped pair
  std::size_t segments = 0;

  Lane(std::size_t channels, std::size_t n) : sums(channels * (channels + 1) / 2, ComplexLines(n / 2 + 1)) {
    for (std::size_t c = 0; c < channels; ++c) ffts.emplace_back(n);
  }

  // Where pair `pair` of segment `index` is summed.
  ComplexLines& target(std::size_t pair, std::size_t index, const std::vector<std::size_t>& grouped) {
    const auto it = std::find(grouped.begin(), grouped.end(), pair);
    if (it == grouped.end()) return sums[pair];
    return groups.at(groups.group_of(index), static_cast<std::size_t>(it - grouped.begin()));
  }

  void transform(const double* segment, const std::vector<double>& window, bool remove_mean, detail::RealFft& fft) {
    const auto n = static_cast<Eigen::Index>(window.size());
    const Eigen::Map<const Eigen::ArrayXd> x(segment, n);
    const Eigen::Map<const Eigen::ArrayXd> w(window.data(), n);
    // Eigen's sum is vectorised; a plain loop over doubles is not (reordering changes rounding).
    const double mean = remove_mean ? x.sum() / static_cast<double>(n) : 0.0;
    apply_window(segment, window.data(), mean, fft.input().data(), window.size());
    fft.execute();
  }

  // The hot loops are compiled twice, for AVX2 and for any x86-64, and the
  // processor picks at load time: fast where it can be, safe everywhere.
  [[gnu::target_clones("avx2", "default")]] static void apply_window(const double* x, const double* w, double mean,
                                                                   double* out, std::size_t n) {
    for (std::size_t i = 0; i < n; ++i) out[i] = (x[i] - mean) * w[i];
  }

  // conj(a) b, spelled out: std::complex's operator* takes a slow path to
  // honour infinities, which finite spectra never need.
  [[gnu::target_clones("avx2", "default")]] static void add_power(ComplexLines& sum,
                                                                  std::span<const std::complex<double>> a) {
    double* s = reinterpret_cast<double*>(sum.data());
    const double* p = reinterpret_cast<const double*>(a.data());
    for (std::size_t k = 0; k < sum.size(); ++k) s[2 * k] += p[2 * k] * p[2 * k] + p[2 * k + 1] * p[2 * k + 1];
  }

  [[gnu::target_clones("avx2", "default")]] static void add_cross(ComplexLines& sum,
                                                                  std::span<const std::complex<double>> a,
                                                                  std::span<const std::complex<double>> b) {
    double* s = reinterpret_cast<double*>(sum.data());
    const double* p = reinterpret_cast<const double*>(a.data());
    const double* q = reinterpret_cast<const double*>(b.data());
    for (std::size_t k = 0; k < sum.size(); ++k) {
      const double ar = p[2 * k], ai = p[2 * k + 1], br = q[2 * k], bi = q[2 * k + 1];
      s[2 * k] += ar * br + ai * bi;
      s[2 * k + 1] += ar * bi - ai * br;
    }
  }

  // Segment `index` (in order of time) of the record, at `offset` in `pending`.
  void accumulate(const std::vector<std::vector<double>>& pending, std::size_t offset, std::size_t index,
                  const std::vector<std::size_t>& grouped, const std::vector<double>& window, bool remove_mean) {
    for (std::size_t c = 0; c < ffts.size(); ++c) transform(pending[c].data() + offset, window, remove_mean, ffts[c]);
    std::size_t pair = 0;
    for (std::size_t i = 0; i < ffts.size(); ++i) {
      add_power(target(pair, index, grouped), ffts[i].output());
      ++pair;
      for (std::size_t j = i + 1; j < ffts.size(); ++j, ++pair) {
        add_cross(target(pair, index, grouped), ffts[i].output(), ffts[j].output());
      }
    }
    ++segments;
  }
};

// A thread that runs one job at a time while the caller goes on reading.
class Worker {
 public:
  Worker() : thread_([this] { loop(); }) {}
  ~Worker() {
    {
      std::lock_guard lock(mutex_);
      stopping_ = true;
    }
    wake_.notify_all();
    thread_.join();
  }
  Worker(const Worker&) = delete;
  Worker& operator=(const Worker&) = delete;

  void start(std::function<void()> job) {
    {
      std::lock_guard lock(mutex_);
      job_ = std::move(job);
    }
    wake_.notify_all();
  }

  void wait() {
    std::unique_lock lock(mutex_);
    done_.wait(lock, [&] { return !job_ && !running_; });
  }

 private:
  void loop() {
    std::unique_lock lock(mutex_);
    for (;;) {
      wake_.wait(lock, [&] { return stopping_ || job_; });
      if (!job_) return;
      auto job = std::move(job_);
      job_ = nullptr;
      running_ = true;
      lock.unlock();
      job();
      lock.lock();
      running_ = false;
      done_.notify_all();
    }
  }

  std::mutex mutex_;
  std::condition_variable wake_;
  std::condition_variable done_;
  std::function<void()> job_;
  bool running_ = false;
  bool stopping_ = false;
  std::thread thread_;
};

}  // namespace

// Complete segments go to the lanes in batches: each push hands the lanes the
// segments it completed and returns, so that reading the next block overlaps
// with the transforms of this one. One batch is in flight at a time.
struct WelchAccumulator::Impl {
  WelchOptions options;
  std::size_t channel_count;
  std::vector<double> window;
  std::vector<std::vector<double>> pending;    // samples not yet in a batch, per channel
  std::size_t offset = 0;                      // start of the next segment in `pending`
  std::vector<std::vector<double>> in_flight;  // the batch the lanes are working on
  std::vector<std::size_t> starts;             // its segment starts
  std::vector<Lane> lanes;                     // one per core
  std::size_t samples = 0;
  std::size_t segments_started = 0;            // segments handed to the lanes so far
  std::vector<std::size_t> grouped;            // pair indices of options.grouped_pairs, when they are kept in groups
  std::vector<std::unique_ptr<Worker>> workers;  // last: stopped before the data they use goes

  Impl(std::size_t channels, const WelchOptions& opts) : options(opts), channel_count(channels), pending(channels) {
    const std::size_t cores = std::clamp<std::size_t>(std::thread::hardware_concurrency(), 1, 2);
    for (std::size_t i = 0; i < cores; ++i) workers.push_back(std::make_unique<Worker>());
  }

  // The window and the lanes' transforms and sums, made when the first whole
  // segment has arrived: a record shorter than one segment never pays for a
  // long segment's buffers.
  void make_lanes() {
    if (!lanes.empty()) return;
    window = make_window(options.window, options.segment_length);
    for (std::size_t i = 0; i < workers.size(); ++i) lanes.emplace_back(channel_count, options.segment_length);
    const std::size_t lines = options.segment_length / 2 + 1;
    const std::size_t most = detail::groups_within_budget(options.grouped_pairs.size(), lines, lanes.size());
    if (most == 0) return;
    for (const auto& [i, j] : options.grouped_pairs) grouped.push_back(pair_index(i, j, channel_count));
    for (Lane& lane : lanes) lane.groups = detail::GroupSums(grouped.size(), lines, most);
  }

  void wait() {
    for (auto& w : workers) w->wait();
  }

  void take_groups(std::size_t segments, CrossSpectra& result);

  // Hands the complete segments of `pending` to the lanes, each a share, and
  // keeps the samples from the next segment start on for the next batch.
  void dispatch() {
    const std::size_t n = options.segment_length;
    const std::size_t available = pending.front().size();
    starts.clear();
    for (; offset + n <= available; offset += options.step()) starts.push_back(offset);
    if (starts.empty()) return;
    make_lanes();
    wait();
    const std::size_t keep_from = std::min(offset, available);
    for (std::size_t c = 0; c < channel_count; ++c) {
      in_flight.resize(channel_count);
      in_flight[c].swap(pending[c]);
      pending[c].assign(in_flight[c].begin() + static_cast<std::ptrdiff_t>(keep_from), in_flight[c].end());
    }
    offset -= keep_from;
    const std::size_t first_index = segments_started;
    segments_started += starts.size();
    if (!grouped.empty()) {
      for (Lane& lane : lanes) lane.groups.make_room(segments_started - 1);
    }
    const std::size_t share = (starts.size() + lanes.size() - 1) / lanes.size();
    for (std::size_t l = 0; l < lanes.size(); ++l) {
      const std::size_t first = std::min(l * share, starts.size());
      const std::size_t last = std::min(first + share, starts.size());
      workers[l]->start([this, l, first, last, first_index] {
        Lane& lane = lanes[l];
        for (std::size_t i = first; i < last; ++i) {
          lane.accumulate(in_flight, starts[i], first_index + i, grouped, window, options.remove_segment_mean);
        }
      });
    }
  }
};

WelchAccumulator::WelchAccumulator(std::size_t channel_count, const WelchOptions& options) {
  options.validate();
  impl_ = std::make_unique<Impl>(channel_count, options);
}
WelchAccumulator::~WelchAccumulator() {
  if (impl_) impl_->wait();
}
WelchAccumulator::WelchAccumulator(WelchAccumulator&&) noexcept = default;
WelchAccumulator& WelchAccumulator::operator=(WelchAccumulator&&) noexcept = default;

void WelchAccumulator::push(std::span<const std::span<const double>> channels) {
  Impl& s = *impl_;
  if (channels.size() != s.channel_count) throw std::invalid_argument("WelchAccumulator: channel count changed");
  for (std::size_t c = 0; c < s.channel_count; ++c) {
    s.pending[c].insert(s.pending[c].end(), channels[c].begin(), channels[c].end());
  }
  s.samples += channels.empty() ? 0 : channels[0].size();
  if (s.channel_count > 0) s.dispatch();
}

std::size_t WelchAccumulator::samples_seen() const { return impl_->samples; }
std::size_t WelchAccumulator::segments_done() {
  impl_->wait();
  std::size_t total = 0;
  for (const Lane& lane : impl_->lanes) total += lane.segments;
  return total;
}

// The grouped pairs were summed in the lanes' groups only: the groups,
// added up in lane order, and their totals, into `result`.
void WelchAccumulator::Impl::take_groups(std::size_t segments, CrossSpectra& result) {
  result.segments_per_group = lanes[0].groups.per_group();
  result.grouped_pairs = options.grouped_pairs;
  const std::size_t m = result.segments_per_group;
  result.group_variance_factor = (static_cast<double>(segments) / result.effective_averages) /
                                 (static_cast<double>(m) / effective_averages(window, result.step, m));
  result.groups = lanes[0].groups.finish(segments);
  for (std::size_t lane = 1; lane < lanes.size(); ++lane) {
    const auto more = lanes[lane].groups.finish(segments);
    for (std::size_t g = 0; g < result.groups.size(); ++g) {
      for (std::size_t a = 0; a < grouped.size(); ++a) {
        for (std::size_t k = 0; k < result.groups[g][a].size(); ++k) result.groups[g][a][k] += more[g][a][k];
      }
    }
  }
  for (std::size_t a = 0; a < grouped.size(); ++a) {
    ComplexLines& total = result.pairs[grouped[a]];
    for (const auto& group : result.groups) {
      for (std::size_t k = 0; k < total.size(); ++k) total[k] += group[a][k];
    }
  }
}

CrossSpectra WelchAccumulator::finish(double sample_rate_hz) {
  Impl& s = *impl_;
  const std::size_t segments = segments_done();
  if (segments == 0) {
    std::ostringstream message;
    message << "the record has " << s.samples << " samples, fewer than one segment of " << s.options.segment_length
            << "; use a shorter segment (--segment " << suggested_segment(s.samples, s.options.overlap, s.options.segment_length / 2)
            << ") or a longer record";
    throw NumericalError(message.str());
  }
  const double power = std::inner_product(s.window.begin(), s.window.end(), s.window.begin(), 0.0);
  const double scale = 1.0 / (sample_rate_hz * power * static_cast<double>(segments));
  const std::size_t n = s.options.segment_length;
  CrossSpectra result;
  result.channel_count = s.channel_count;
  result.segment_length = n;
  result.segments = segments;
  result.effective_averages = effective_averages(s.window, s.options.step(), segments);
  result.step = s.options.step();
  result.sample_rate_hz = sample_rate_hz;
  result.pairs = s.lanes[0].sums;
  for (std::size_t lane = 1; lane < s.lanes.size(); ++lane) {
    for (std::size_t p = 0; p < result.pairs.size(); ++p) {
      for (std::size_t k = 0; k < result.pairs[p].size(); ++k) result.pairs[p][k] += s.lanes[lane].sums[p][k];
    }
  }
  const auto to_density = [&](ComplexLines& lines) {
    for (std::size_t k = 0; k < lines.size(); ++k) {
      const bool single_sided = (k == 0) || (n % 2 == 0 && k == n / 2);
      lines[k] *= single_sided ? scale : 2.0 * scale;
    }
  };
  if (!s.grouped.empty()) {
    s.take_groups(segments, result);
  } else if (!s.options.grouped_pairs.empty()) {
    result.no_groups_reason = "the segments are too long for the jackknife's group sums to fit their memory budget";
  }
  for (auto& lines : result.pairs) to_density(lines);
  for (auto& group : result.groups) {
    for (auto& lines : group) to_density(lines);
  }
  if (result.groups.size() < 2) {
    result.groups.clear();
    result.grouped_pairs.clear();
  }
  return result;
}

}  // namespace loopaudit
