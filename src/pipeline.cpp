#include "loopmargin/pipeline.hpp"

#include <algorithm>
#include <sstream>

#include "loopmargin/error.hpp"
#include "loopmargin/ingest/quality.hpp"

namespace loopmargin {
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

}  // namespace

AnalysisResult analyze_recording(SampleSource& source, const AnalysisOptions& options, const ProgressFunction& progress) {
  options.welch.validate();
  RoleSelector roles(source, options.roles);
  WelchAccumulator welch(3, options.welch);
  QualityMonitor quality({options.roles.injection, options.roles.x, options.roles.y}, kReferenceChannel,
                         source.origin());
  SampleBlock block;
  while (source.next(block)) {
    const auto selected = roles.select(block);
    quality.push(selected, block.first_sample);
    welch.push(selected);
    if (progress) progress(welch.samples_seen());
  }
  SourceSummary summary = source.summary();
  if (welch.segments_done() == 0) {
    std::ostringstream message;
    message << source.origin() << ": the record has " << summary.sample_count << " samples, fewer than one segment of "
            << options.welch.segment_length << "; choose a shorter segment length";
    throw InputError(message.str());
  }
  const CrossSpectra spectra = welch.finish(summary.sample_rate_hz);

  AnalysisResult result;
  result.origin = source.origin();
  result.options = options;
  result.record = RecordFacts{summary.sample_rate_hz, summary.sample_count, source.channel_names(), options.roles,
                              spectra.segments, spectra.effective_averages};
  result.findings = std::move(summary.findings);
  append(result.findings, quality.findings());
  append(result.findings, spectral_findings(spectra, {options.roles.injection, options.roles.x, options.roles.y}));
  const Response measured = estimate_response(spectra, options.response, result.findings);
  result.loop = to_loop(measured, options.convention, result.findings);
  result.margins = find_margins(result.loop.lines, options.margins);
  append(result.findings, result.margins.findings);
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

}  // namespace loopmargin
