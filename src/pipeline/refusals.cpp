#include "pipeline/refusals.hpp"

#include <cmath>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/format.hpp"
#include "loopaudit/spectral/welch.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit::detail {

namespace {

// The largest and smallest peak a channel may have: the spectra square the
// samples and sum them over a segment, and beyond these the sums would leave
// double precision's range (come out 0 or infinite) and the run would end in
// a message about a flat channel instead of the real problem.
constexpr double kSmallestPeak = 1e-100;
constexpr double kLargestPeak = 1e100;

}  // namespace

void refuse_second_pass(const SampleSource& source, ExcitationKind kind) {
  const std::string stream = source.one_pass_kind();
  if (stream.empty()) return;
  const std::string why = kind == ExcitationKind::kStepped
                              ? "a stepped sine is read twice (once to find its dwells, then to fit them)"
                          : kind == ExcitationKind::kChirp
                              ? "a chirp is read twice (once to find its band, then to analyse it)"
                              : "this recording is read twice (once to find its excitation, then to analyse it)";
  throw InputError(source.origin() + " is " + stream + " and cannot be read twice; " + why +
                   ": save it to a file first and analyse the file");
}

void refuse_implausible_rate(const SampleSource& source) {
  const double rate_hz = source.summary().sample_rate_hz;
  if (rate_hz == 0.0 || plausible_sample_rate(rate_hz)) return;
  std::ostringstream message;
  message << source.origin() << ": the file gives a sample rate of " << rate_hz << " Hz, outside the rates taken ("
          << kSampleRateRangeText << "); if the file is wrong, give the rate with --sample-rate HZ";
  throw InputError(message.str());
}

void refuse_out_of_scale(const QualityMonitor& quality, const ChannelRoles& roles, const std::string& origin) {
  const std::string* names[] = {&roles.injection, &roles.x, &roles.y};
  for (const std::size_t c : {1, 2, 0}) {  // x and y first: the injection may be their difference
    const double peak = quality.peak_magnitude(c);
    if (peak == 0.0 || (peak >= kSmallestPeak && peak <= kLargestPeak)) continue;
    std::ostringstream message;
    message << origin << ": channel '" << *names[c] << "' peaks at " << peak << ", outside " << kSmallestPeak
            << " to " << kLargestPeak << ", where its spectra can be computed in double precision; give it a scale "
            << "in the right units (--scale " << *names[c] << "=" << std::pow(10.0, -std::round(std::log10(peak)))
            << ")";
    throw NumericalError(message.str());
  }
}

void refuse_weak(const Response& measured, const AnalysisOptions& options, std::size_t sample_count,
                 const std::string& origin) {
  const ResponseMethod& m = measured.method;
  const bool averaged = m.kind == ResponseMethodKind::kWelch || m.kind == ResponseMethodKind::kPeriodic;
  if (!averaged || m.effective_averages >= options.min_effective_averages) return;
  std::ostringstream message;
  message << origin << ": only " << format_fixed(m.effective_averages, 1) << " effective averages ("
          << m.averages << (m.kind == ResponseMethodKind::kWelch ? " segment" : " period") << (m.averages == 1 ? "" : "s")
          << "); at least "
          << options.min_effective_averages << " are needed for the lines' uncertainty, and so the margins and "
          << "their intervals, to mean anything. ";
  if (m.kind == ResponseMethodKind::kWelch) {
    const WelchOptions& w = options.welch;
    const std::size_t segment = suggested_segment(sample_count, w.overlap, w.segment_length / 2);
    const auto averages_at = [&](std::size_t length) { return segments_of(sample_count, w.overlap, length); };
    message << "Use shorter segments (--segment " << segment << " gives " << std::lround(averages_at(segment))
            << " segments) or a longer record";
  } else {
    message << "Record more periods, or skip fewer (skip_periods in the settings file)";
  }
  throw NumericalError(message.str());
}

}  // namespace loopaudit::detail
