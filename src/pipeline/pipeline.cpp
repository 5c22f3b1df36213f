#include "loopaudit/pipeline/pipeline.hpp"

#include <algorithm>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/excitation/schedule.hpp"
#include "loopaudit/ingest/quality.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/spectral/periodic.hpp"
#include "loopaudit/spectral/stepped.hpp"

namespace loopaudit {
namespace {

std::size_t channel_index(const SampleSource& source, const std::string& name, const std::string& role,
                          const std::string& hint = "") {
  const auto& names = source.channel_names();
  const auto it = std::find(names.begin(), names.end(), name);
  if (it != names.end()) return static_cast<std::size_t>(it - names.begin());
  std::ostringstream message;
  message << source.origin() << ": no channel named '" << name << "' for " << role << " (channels:";
  for (const auto& n : names) message << " '" << n << "'";
  message << ")" << hint;
  throw InputError(message.str());
}

// The reference, x and y of a block, in the order the spectral stage expects.
class RoleSelector {
 public:
  RoleSelector(const SampleSource& source, const ChannelRoles& roles)
      : from_difference_(roles.injection == kInjectionFromDifference),
        x_(channel_index(source, roles.x, "x")),
        y_(channel_index(source, roles.y, "y")),
        z_(from_difference_ ? 0
                            : channel_index(source, roles.injection, "the injection z",
                                            std::string("; to compute the injection as x - y, name it ") +
                                                kInjectionFromDifference)) {}

  std::array<std::span<const double>, 3> select(const SampleBlock& block) {
    const auto& x = block.channels[x_];
    const auto& y = block.channels[y_];
    if (!from_difference_) return {block.channels[z_], x, y};
    difference_.resize(x.size());
    for (std::size_t i = 0; i < x.size(); ++i) difference_[i] = x[i] - y[i];
    return {difference_, x, y};
  }

 private:
  bool from_difference_;
  std::size_t x_;
  std::size_t y_;
  std::size_t z_;
  std::vector<double> difference_;
};

void append(Diagnostics& to, const Diagnostics& from) { to.insert(to.end(), from.begin(), from.end()); }

// Blocks already read, then the rest of a source: lets the analysis start
// from what detection read, in the same pass over the file.
class ReplaySource final : public SampleSource {
 public:
  ReplaySource(std::vector<SampleBlock> blocks, SampleSource& rest) : blocks_(std::move(blocks)), rest_(rest) {}
  const std::vector<std::string>& channel_names() const override { return rest_.channel_names(); }
  std::vector<std::string> channel_units() const override { return rest_.channel_units(); }
  const std::string& origin() const override { return rest_.origin(); }
  SourceSummary summary() const override { return rest_.summary(); }
  bool next(SampleBlock& block) override {
    if (next_ < blocks_.size()) {
      block = std::move(blocks_[next_++]);
      return true;
    }
    return rest_.next(block);
  }

 private:
  std::vector<SampleBlock> blocks_;
  std::size_t next_ = 0;
  SampleSource& rest_;
};

// Blocks kept for replay: enough for the detection prefix with any reader's
// block size (readers hand out at most 65536 samples a block).
constexpr std::size_t kMaxPrefixBlocks = 64;

}  // namespace

namespace {

// Reads the source to its end: channel roles, screening, then `consume` for
// each block of (injection, x, y). Returns what the reader knew at the end.
template <typename Consume>
SourceSummary stream(SampleSource& source, const AnalysisOptions& options, QualityMonitor* quality, Consume consume,
                     const ProgressFunction& progress) {
  RoleSelector roles(source, options.roles);
  SampleBlock block;
  std::size_t samples = 0;
  while (source.next(block)) {
    const auto selected = roles.select(block);
    if (quality) quality->push(selected, block.first_sample);
    consume(selected, block.first_sample);
    samples += block.size();
    if (progress) progress(samples);
  }
  return source.summary();
}

QualityMonitor quality_monitor(const SampleSource& source, const AnalysisOptions& options) {
  return QualityMonitor({options.roles.injection, options.roles.x, options.roles.y}, kReferenceChannel, source.origin());
}

// The stages after the response: loop, margins, findings.
AnalysisResult finish_result(SampleSource& source, const AnalysisOptions& options, SourceSummary summary,
                             const Response& measured, Diagnostics findings, std::size_t averages_segments,
                             double effective_averages) {
  AnalysisResult result;
  result.origin = source.origin();
  result.options = options;
  result.record = RecordFacts{summary.sample_rate_hz, summary.sample_count, source.channel_names(), options.roles,
                              averages_segments, effective_averages};
  result.findings = std::move(summary.findings);
  append(result.findings, findings);
  result.loop = to_loop(measured, options.convention, result.findings);
  result.margins = find_margins(result.loop.lines, options.margins);
  append(result.findings, result.margins.findings);
  return result;
}

AnalysisResult analyze_periodic(SampleSource& source, const AnalysisOptions& options, std::size_t period,
                                const ProgressFunction& progress) {
  PeriodicAccumulator periodic({period, options.skip_periods, options.response.injection_floor_db});
  QualityMonitor quality = quality_monitor(source, options);
  SourceSummary summary = stream(
      source, options, &quality, [&](const auto& selected, std::size_t) { periodic.push(selected); }, progress);
  Diagnostics findings = quality.findings();
  const Response measured = periodic.finish(summary.sample_rate_hz, findings);
  return finish_result(source, options, std::move(summary), measured, std::move(findings), periodic.periods_used(),
                       static_cast<double>(periodic.periods_used()));
}

AnalysisResult analyze_stepped(SampleSource& source, const AnalysisOptions& options, const ExcitationPlan& plan,
                               double sample_rate_hz, const ProgressFunction& progress) {
  SteppedSineEstimator stepped({plan.dwells, sample_rate_hz, options.settle_cycles, options.settle_s});
  QualityMonitor quality = quality_monitor(source, options);
  SourceSummary summary = stream(
      source, options, &quality, [&](const auto& selected, std::size_t first) { stepped.push(selected, first); },
      progress);
  Diagnostics findings = quality.findings();
  const Response measured = stepped.finish(findings);
  return finish_result(source, options, std::move(summary), measured, std::move(findings), measured.size(), 1.0);
}

}  // namespace

AnalysisResult analyze_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress) {
  WelchAccumulator welch(3, options.welch);
  QualityMonitor quality = quality_monitor(source, options);
  SourceSummary summary = stream(
      source, options, &quality, [&](const auto& selected, std::size_t) { welch.push(selected); }, progress);
  if (welch.segments_done() == 0) {
    std::ostringstream message;
    message << source.origin() << ": the record has " << summary.sample_count << " samples, fewer than one segment of "
            << options.welch.segment_length << "; choose a shorter segment length";
    throw InputError(message.str());
  }
  const CrossSpectra spectra = welch.finish(summary.sample_rate_hz);
  Diagnostics findings = quality.findings();
  append(findings, spectral_findings(spectra, {options.roles.injection, options.roles.x, options.roles.y}));
  const Response measured = estimate_response(spectra, options.response, findings);
  return finish_result(source, options, std::move(summary), measured, std::move(findings), spectra.segments,
                       spectra.effective_averages);
}

Inspection inspect_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress) {
  ExcitationDetector detector;
  QualityMonitor quality = quality_monitor(source, options);
  SourceSummary summary = stream(
      source, options, &quality, [&](const auto& selected, std::size_t) { detector.push(selected[0]); }, progress);
  Inspection out;
  out.origin = source.origin();
  out.sample_rate_hz = summary.sample_rate_hz;
  out.sample_count = summary.sample_count;
  out.channel_names = source.channel_names();
  out.excitation = detector.finish(summary.sample_rate_hz);
  out.findings = std::move(summary.findings);
  append(out.findings, quality.findings());
  append(out.findings, out.excitation.findings);
  return out;
}

AnalysisResult analyze(const SourceOpener& open, const AnalysisOptions& options, const ProgressFunction& progress) {
  const auto forced = options.excitation;
  const bool need_plan = !forced || *forced == ExcitationKind::kStepped || !options.schedule_path.empty() ||
                         !options.marker_channel.empty() ||
                         (*forced == ExcitationKind::kPeriodic && options.period_samples == 0);
  if (!need_plan) {
    const auto source = open();
    AnalysisResult result = *forced == ExcitationKind::kPeriodic
                                ? analyze_periodic(*source, options, options.period_samples, progress)
                                : analyze_recording(*source, options, progress);
    result.excitation_kind = *forced;
    return result;
  }
  // A noise or periodic injection shows what it is within its first
  // ExcitationDetector::kPeriodSearchSamples samples: those are kept, and
  // the analysis goes on from them in the same pass. Tones (stepped, chirp)
  // and given dwells need the whole record first, and a second pass.
  const bool dwells_given = !options.schedule_path.empty() || !options.marker_channel.empty();
  const bool needs_whole = dwells_given || forced == ExcitationKind::kStepped;
  ExcitationDetector detector;
  MarkerDwells marker;
  std::optional<SourceSummary> first_pass;
  auto source = open();
  std::vector<SampleBlock> prefix;
  {
    const bool has_marker = !options.marker_channel.empty();
    const std::size_t marker_index =
        has_marker ? channel_index(*source, options.marker_channel, "the frequency marker") : 0;
    RoleSelector roles(*source, options.roles);
    SampleBlock block;
    bool decided = false;
    while (source->next(block)) {
      detector.push(roles.select(block)[0]);
      if (has_marker) marker.push(block.channels[marker_index], block.first_sample);
      if (!needs_whole && prefix.size() < kMaxPrefixBlocks) prefix.push_back(block);
      if (!needs_whole && detector.samples_seen() >= ExcitationDetector::kPeriodSearchSamples) {
        decided = !detector.looks_tonal();
        if (decided) break;
      }
    }
    if (!decided) first_pass = source->summary();
  }
  // Without the whole first pass the sample rate is known only at the end:
  // the plan is made in cycles per sample and rescaled then.
  const double sample_rate_hz = first_pass ? first_pass->sample_rate_hz : 1.0;
  ExcitationPlan plan = detector.finish(sample_rate_hz);
  if (!first_pass) {  // go on in the same pass: replay the prefix, then the rest
    const ExcitationKind kind = forced.value_or(plan.kind);
    const std::size_t period = options.period_samples ? options.period_samples : plan.period_samples;
    if (kind == ExcitationKind::kPeriodic && period == 0) {
      throw NumericalError(source->origin() + ": no period found in the injection; give the period in samples");
    }
    ReplaySource replay(std::move(prefix), *source);
    AnalysisResult result = kind == ExcitationKind::kPeriodic ? analyze_periodic(replay, options, period, progress)
                                                              : analyze_recording(replay, options, progress);
    plan.rescale_frequencies(result.record->sample_rate_hz);
    result.excitation_kind = kind;
    result.excitation = std::move(plan);
    return result;
  }
  if (!options.schedule_path.empty()) {
    plan.dwells = dwells_in_samples(read_dwell_schedule(options.schedule_path), sample_rate_hz, first_pass->sample_count,
                                    options.schedule_path);
  } else if (!options.marker_channel.empty()) {
    plan.dwells = marker.finish();
  }
  const ExcitationKind kind = dwells_given ? ExcitationKind::kStepped : forced.value_or(plan.kind);
  source = open();
  AnalysisResult result;
  if (kind == ExcitationKind::kPeriodic) {
    if (plan.period_samples == 0) {
      throw NumericalError(source->origin() + ": no period found in the injection; give the period in samples");
    }
    result = analyze_periodic(*source, options, options.period_samples ? options.period_samples : plan.period_samples,
                              progress);
  } else if (kind == ExcitationKind::kStepped) {
    if (plan.dwells.empty()) throw NumericalError(source->origin() + ": no dwells of a stepped sine found in the injection");
    result = analyze_stepped(*source, options, plan, sample_rate_hz, progress);
  } else {
    result = analyze_recording(*source, options, progress);
  }
  result.excitation_kind = kind;
  result.excitation = std::move(plan);
  return result;
}

AnalysisResult analyze_response(const std::string& origin, const Response& measured, Convention convention,
                                const MarginOptions& options) {
  AnalysisResult result;
  result.origin = origin;
  result.options.convention = convention;
  result.options.margins = options;
  result.loop = to_loop(measured, convention, result.findings);
  result.margins = find_margins(result.loop.lines, options);
  append(result.findings, result.margins.findings);
  return result;
}

}  // namespace loopaudit
