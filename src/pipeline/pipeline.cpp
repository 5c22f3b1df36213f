#include "loopaudit/pipeline/pipeline.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/excitation/schedule.hpp"
#include "loopaudit/ingest/quality.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/spectral/estimator.hpp"
#include "pipeline/refusals.hpp"

namespace loopaudit {
namespace {

std::size_t channel_index(const SampleSource& source, const std::string& name, const std::string& role,
                          const std::string& option, const std::string& key, const std::string& hint = "") {
  const auto& names = source.channel_names();
  const auto it = std::find(names.begin(), names.end(), name);
  if (it != names.end()) return static_cast<std::size_t>(it - names.begin());
  std::ostringstream message;
  message << source.origin() << ": no channel named '" << name << "' for " << role << " (channels:";
  for (const auto& n : names) message << " '" << n << "'";
  message << "); name the channel with " << option << " NAME (or " << key << " in a settings file)" << hint;
  throw InputError(message.str());
}

// The roles whose channel the source lacks, as (option, name).
std::vector<std::pair<std::string, std::string>> missing_roles(const SampleSource& source, const ChannelRoles& roles) {
  const auto& names = source.channel_names();
  const auto has = [&](const std::string& name) { return std::find(names.begin(), names.end(), name) != names.end(); };
  std::vector<std::pair<std::string, std::string>> missing;
  if (roles.injection != kInjectionFromDifference && !has(roles.injection)) missing.emplace_back("--z", roles.injection);
  if (!has(roles.x)) missing.emplace_back("--x", roles.x);
  if (!has(roles.y)) missing.emplace_back("--y", roles.y);
  return missing;
}

// "no channel 'z' (--z), 'x' (--x) among the channels ...; say which is which with ...".
std::string missing_roles_text(const SampleSource& source, const ChannelRoles& roles,
                               const std::vector<std::pair<std::string, std::string>>& missing) {
  std::ostringstream message;
  message << source.origin() << ": no channel";
  for (std::size_t i = 0; i < missing.size(); ++i) {
    message << (i == 0 ? " " : ", ") << "'" << missing[i].second << "' (" << missing[i].first << ")";
  }
  message << " among the channels";
  for (const auto& n : source.channel_names()) message << " '" << n << "'";
  message << "; say which is which with";
  for (const auto& m : missing) message << " " << m.first << " NAME";
  message << " (or z, x, y under [roles] in a settings file)";
  if (roles.injection != kInjectionFromDifference) {
    message << "; --z " << kInjectionFromDifference << " computes the injection as x - y";
  }
  return message.str();
}

const ChannelRoles& checked_roles(const SampleSource& source, const ChannelRoles& roles) {
  const auto missing = missing_roles(source, roles);
  if (missing.size() < 2) return roles;  // one: channel_index says which
  throw InputError(missing_roles_text(source, roles, missing));
}

// The reference, x and y of a block, in the order the spectral stage expects.
class RoleSelector {
 public:
  RoleSelector(const SampleSource& source, const ChannelRoles& roles)
      : from_difference_(checked_roles(source, roles).injection == kInjectionFromDifference),
        x_(channel_index(source, roles.x, "x", "--x", "x under [roles]")),
        y_(channel_index(source, roles.y, "y", "--y", "y under [roles]")),
        z_(from_difference_ ? 0
                            : channel_index(source, roles.injection, "the injection z", "--z", "z under [roles]",
                                            std::string("; to compute the injection as x - y, give --z ") +
                                                kInjectionFromDifference)) {
    check_distinct(source);
  }

  // One channel in two roles makes no measurement: z = x turns the reference
  // method into the biased two-channel estimate, x = y gives L = -1.
  void check_distinct(const SampleSource& source) const {
    const auto clash = [&](std::size_t a, std::size_t b, const char* first, const char* second) {
      if (a != b) return;
      throw ConfigError(source.origin() + ": " + first + " and " + second + " are the same channel '" +
                        source.channel_names()[a] + "'; give each role its own channel (--z, --x, --y)");
    };
    clash(x_, y_, "x", "y");
    if (from_difference_) return;
    clash(z_, x_, "the injection z", "x");
    clash(z_, y_, "the injection z", "y");
  }

  RoleChannels select(const SampleBlock& block) {
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

bool sign_doubted(const Diagnostics& findings) {
  return std::any_of(findings.begin(), findings.end(), [](const Diagnostic& d) { return d.code == "loop.sign-suspect"; });
}

// Blocks already read, then the rest of a source (none when it has ended):
// lets the analysis start from what detection read, in the same pass.
class ReplaySource final : public SampleSource {
 public:
  ReplaySource(std::vector<SampleBlock> blocks, SampleSource& rest, bool rest_ended)
      : blocks_(std::move(blocks)), rest_(rest), rest_ended_(rest_ended) {}
  const std::vector<std::string>& channel_names() const override { return rest_.channel_names(); }
  std::vector<std::string> channel_units() const override { return rest_.channel_units(); }
  const std::string& origin() const override { return rest_.origin(); }
  SourceSummary summary() const override { return rest_.summary(); }
  std::string one_pass_kind() const override { return rest_.one_pass_kind(); }
  bool next(SampleBlock& block) override {
    if (next_ < blocks_.size()) {
      block = std::move(blocks_[next_++]);
      return true;
    }
    return !rest_ended_ && rest_.next(block);
  }

 private:
  std::vector<SampleBlock> blocks_;
  std::size_t next_ = 0;
  SampleSource& rest_;
  bool rest_ended_;
};

// What is kept for replay: the detection prefix and more, in rows and in
// values (rows times channels, 64 MiB of doubles). Past either the kept
// blocks are let go and the record is analysed in a second pass; before,
// every block read is kept, so that none is lost in the replay whatever the
// reader's block size.
constexpr std::size_t kMaxPrefixRows = 4 * ExcitationDetector::kPeriodSearchSamples;
constexpr std::size_t kMaxPrefixValues = std::size_t{1} << 23;


// The block loop, the one place that reads a source: channel roles, the
// screening (when given), then `consume` for each block of (injection, x, y)
// until it returns false or the source ends.
template <typename Consume>
void stream(SampleSource& source, const ChannelRoles& roles, QualityMonitor* quality, Consume consume,
            const ProgressFunction& progress) {
  RoleSelector selector(source, roles);
  SampleBlock block;
  std::size_t samples = 0;
  while (source.next(block)) {
    const RoleChannels selected = selector.select(block);
    if (quality) quality->push(selected, block.first_sample);
    samples += block.size();
    if (progress) progress(samples);
    if (!consume(selected, block)) return;
  }
  detail::refuse_implausible_rate(source);  // the rate a file states or its time column gives is known only now
}


QualityMonitor quality_monitor(const SampleSource& source, const AnalysisOptions& options) {
  return QualityMonitor({options.roles.injection, options.roles.x, options.roles.y}, kReferenceChannel, source.origin());
}


// The stages after the response: loop, margins (from the excited band unless
// a band is given), findings.
AnalysisResult finish_result(SampleSource& source, const AnalysisOptions& options, SourceSummary summary,
                             const Response& measured, Diagnostics findings, std::optional<Interval> excited_hz) {
  detail::refuse_weak(measured, options, summary.sample_count, source.origin());
  AnalysisResult result;
  result.origin = source.origin();
  result.options = options;
  if (!options.margins.band_hz && excited_hz) {
    result.options.margins.band_hz = excited_hz;
    result.options.margins.band_source = "the band the injection excites";
  }
  result.record = RecordFacts{summary.sample_rate_hz, summary.sample_count, source.channel_names(), options.roles,
                              summary.layout};
  result.findings = std::move(summary.findings);
  append(result.findings, findings);
  result.loop = to_loop(measured, options.convention, result.findings);
  result.options.margins.sign_doubted = sign_doubted(result.findings);
  result.margins = find_margins(result.loop.lines, result.options.margins);
  append(result.findings, result.margins.findings);
  return result;
}

// The one table of estimators: which serves which excitation kind. The
// period and the dwells come from the settings or from detection.
std::unique_ptr<ResponseEstimator> make_estimator(ExcitationKind kind, const ExcitationPlan& plan,
                                                  double sample_rate_hz, const AnalysisOptions& options,
                                                  const std::string& origin) {
  switch (kind) {
    case ExcitationKind::kBroadband:
    case ExcitationKind::kChirp:
      return make_welch_estimator(options.welch, options.response,
                                  {options.roles.injection, options.roles.x, options.roles.y});
    case ExcitationKind::kPeriodic: {
      const std::size_t period = options.period_samples ? options.period_samples : plan.period_samples;
      if (period == 0) throw NumericalError(origin + ": no period found in the injection; give the period in samples");
      return make_periodic_estimator({period, options.skip_periods, options.response.injection_floor_db});
    }
    case ExcitationKind::kStepped:
      if (plan.dwells.empty()) {
        throw NumericalError(origin + ": no dwells of a stepped sine found in the injection (the detector found no run "
                                      "of steady tones: a chirp, or tones too short or noisy); give the dwells with --schedule FILE or --marker CHANNEL, or "
                                      "let the excitation be found (--excitation auto)");
      }
      return make_stepped_estimator({plan.dwells, sample_rate_hz, options.settle_cycles, options.settle_s});
  }
  throw ConfigError("unknown excitation kind");
}

// The band a broadband or swept injection excites, in Hz, from a plan made
// at plan_rate_hz (1 when made in cycles per sample); unset for the other
// kinds, whose estimators keep only the lines they excite.
std::optional<Interval> excited_band(ExcitationKind kind, const ExcitationPlan& plan, double plan_rate_hz,
                                     double sample_rate_hz) {
  const bool spread = kind == ExcitationKind::kBroadband || kind == ExcitationKind::kChirp;
  if (!spread || !(plan.high_hz > plan.low_hz) || !(plan_rate_hz > 0.0)) return std::nullopt;
  const double factor = sample_rate_hz / plan_rate_hz;
  return Interval{plan.low_hz * factor, plan.high_hz * factor};
}

// Reads the source to its end through the kind's estimator, then the later
// stages.
AnalysisResult run_kind(SampleSource& source, const AnalysisOptions& options, ExcitationKind kind,
                        const ExcitationPlan& plan, double plan_rate_hz, const ProgressFunction& progress) {
  const auto estimator = make_estimator(kind, plan, plan_rate_hz, options, source.origin());
  QualityMonitor quality = quality_monitor(source, options);
  stream(
      source, options.roles, &quality,
      [&](const RoleChannels& selected, const SampleBlock& block) {
        estimator->push(selected, block.first_sample);
        return true;
      },
      progress);
  detail::refuse_out_of_scale(quality, options.roles, source.origin());
  SourceSummary summary = source.summary();
  Diagnostics findings = quality.findings();
  const Response measured =
      estimator->finish({summary.sample_rate_hz, summary.sample_count, source.origin()}, findings);
  const auto excited = excited_band(kind, plan, plan_rate_hz, summary.sample_rate_hz);
  AnalysisResult result = finish_result(source, options, std::move(summary), measured, std::move(findings), excited);
  result.excitation_kind = kind;
  return result;
}

// The first pass: the detector over the injection (and the marker channel).
// A noise or periodic injection shows what it is within its first
// ExcitationDetector::kPeriodSearchSamples samples: those are kept in
// `prefix`, and the analysis goes on from them in the same pass. Tones
// (stepped, chirp) and given dwells need the whole record (`whole` is set);
// when it fits in the prefix's bounds, it is analysed from the prefix, else
// read a second time.
struct FirstPass {
  ExcitationDetector detector;
  MarkerDwells marker;
  std::vector<SampleBlock> prefix;
  bool prefix_whole = true;  // `prefix` holds every block read so far
  std::size_t prefix_rows = 0;
  std::optional<SourceSummary> whole;

  // Keeps the block for replay while the prefix stays within its bounds;
  // past them lets the prefix go. Returns whether the prefix is still whole.
  bool keep(const SampleBlock& block) {
    const std::size_t rows = prefix_rows + block.size();
    if (prefix_whole && rows <= kMaxPrefixRows && rows * block.channels.size() <= kMaxPrefixValues) {
      prefix.push_back(block);
      prefix_rows = rows;
      return true;
    }
    prefix_whole = false;
    std::vector<SampleBlock>().swap(prefix);
    return false;
  }
};

FirstPass first_pass(SampleSource& source, const AnalysisOptions& options, bool needs_whole) {
  FirstPass pass;
  const bool has_marker = !options.marker_channel.empty();
  const std::size_t marker_index =
      has_marker ? channel_index(source, options.marker_channel, "the frequency marker", "--marker", "marker under [excitation]")
                 : 0;
  bool decided = false;
  stream(
      source, options.roles, nullptr,
      [&](const RoleChannels& selected, const SampleBlock& block) {
        pass.detector.push(selected[0]);
        if (has_marker) pass.marker.push(block.channels[marker_index], block.first_sample);
        const bool kept = pass.keep(block);
        if (needs_whole || !kept) return true;
        decided = pass.detector.samples_seen() >= ExcitationDetector::kPeriodSearchSamples && !pass.detector.looks_tonal();
        return !decided;
      },
      {});
  if (!decided) pass.whole = source.summary();
  return pass;
}

// A periodic injection's band as its excited lines give it: the detector
// sees the band only at its frame's resolution (the sample rate over 1024),
// the periodic estimator line by line.
ExcitationPlan with_excited_lines(ExcitationPlan plan, const AnalysisResult& result) {
  const Response& lines = result.loop.lines;
  if (result.excitation_kind == ExcitationKind::kPeriodic && plan.kind == ExcitationKind::kPeriodic && lines.size()) {
    plan.low_hz = lines.frequency_hz.front();
    plan.high_hz = lines.frequency_hz.back();
  }
  return plan;
}

bool needs_plan(const AnalysisOptions& options) {
  const auto forced = options.excitation;
  return !forced || *forced == ExcitationKind::kStepped || !options.schedule_path.empty() ||
         !options.marker_channel.empty() || (*forced == ExcitationKind::kPeriodic && options.period_samples == 0);
}

// The facts of a source read to its end, for inspect.
Inspection inspection_of(const SampleSource& source, SourceSummary summary) {
  Inspection out;
  out.origin = source.origin();
  out.sample_rate_hz = summary.sample_rate_hz;
  out.sample_count = summary.sample_count;
  out.channel_names = source.channel_names();
  out.layout = summary.layout;
  out.findings = std::move(summary.findings);
  return out;
}

// What inspect can say when the roles name channels the file lacks: the
// channels, the length and the rate, and how to name the roles.
Inspection inspect_channels_only(SampleSource& source, const std::string& roles_message,
                                 const ProgressFunction& progress) {
  SampleBlock block;
  std::size_t samples = 0;
  while (source.next(block)) {
    samples += block.size();
    if (progress) progress(samples);
  }
  Inspection out = inspection_of(source, source.summary());
  out.roles_found = false;
  out.findings.push_back(make_warning("inspect.roles-missing", roles_message + "; the excitation is found once the "
                                                                               "roles are named"));
  return out;
}

}  // namespace

AnalysisResult analyze_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress) {
  return run_kind(source, options, ExcitationKind::kBroadband, {}, 0.0, progress);
}

Inspection inspect_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress) {
  if (const auto missing = missing_roles(source, options.roles); !missing.empty()) {
    return inspect_channels_only(source, missing_roles_text(source, options.roles, missing), progress);
  }
  ExcitationDetector detector;
  QualityMonitor quality = quality_monitor(source, options);
  stream(
      source, options.roles, &quality,
      [&](const RoleChannels& selected, const SampleBlock&) {
        detector.push(selected[0]);
        return true;
      },
      progress);
  Inspection out = inspection_of(source, source.summary());
  out.excitation = detector.finish(out.sample_rate_hz);
  append(out.findings, quality.findings());
  append(out.findings, out.excitation.findings);
  return out;
}

AnalysisResult analyze(const SourceOpener& open, const AnalysisOptions& options, const ProgressFunction& progress) {
  if (!needs_plan(options)) {
    const auto source = open();
    return run_kind(*source, options, *options.excitation, {}, 0.0, progress);
  }
  const bool dwells_given = !options.schedule_path.empty() || !options.marker_channel.empty();
  const bool needs_whole = dwells_given || options.excitation == ExcitationKind::kStepped;
  auto source = open();
  FirstPass pass = first_pass(*source, options, needs_whole);
  // Without the whole first pass the sample rate is known only at the end:
  // the plan is made in cycles per sample and rescaled then.
  const double sample_rate_hz = pass.whole ? pass.whole->sample_rate_hz : 1.0;
  ExcitationPlan plan = pass.detector.finish(sample_rate_hz);
  if (!pass.whole) {  // go on in the same pass: replay the prefix, then the rest
    ReplaySource replay(std::move(pass.prefix), *source, false);
    AnalysisResult result =
        run_kind(replay, options, options.excitation.value_or(plan.kind), plan, sample_rate_hz, progress);
    plan.rescale_frequencies(result.record->sample_rate_hz);
    result.excitation = with_excited_lines(std::move(plan), result);
    return result;
  }
  if (!options.schedule_path.empty()) {
    plan.dwells = dwells_in_samples(read_dwell_schedule(options.schedule_path), sample_rate_hz,
                                    pass.whole->sample_count, options.schedule_path);
  } else if (!options.marker_channel.empty()) {
    plan.dwells = pass.marker.finish();
  }
  const ExcitationKind kind = dwells_given ? ExcitationKind::kStepped : options.excitation.value_or(plan.kind);
  // A record short enough to be kept whole is analysed from memory; any
  // other is read again.
  std::unique_ptr<SampleSource> replay;
  if (pass.prefix_whole) {
    replay = std::make_unique<ReplaySource>(std::move(pass.prefix), *source, true);
  } else {
    detail::refuse_second_pass(*source, kind);
    source = open();
  }
  AnalysisResult result = run_kind(replay ? *replay : *source, options, kind, plan, sample_rate_hz, progress);
  result.excitation = with_excited_lines(std::move(plan), result);
  return result;
}

AnalysisResult analyze_response(const std::string& origin, const Response& measured, Convention convention,
                                const MarginOptions& options) {
  AnalysisResult result;
  result.origin = origin;
  result.options.convention = convention;
  result.options.margins = options;
  result.loop = to_loop(measured, convention, result.findings);
  result.options.margins.sign_doubted = sign_doubted(result.findings);
  result.margins = find_margins(result.loop.lines, result.options.margins);
  append(result.findings, result.margins.findings);
  return result;
}

}  // namespace loopaudit
