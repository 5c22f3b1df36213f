#include "loopaudit/spectral/estimator.hpp"

#include <sstream>

#include "loopaudit/error.hpp"

namespace loopaudit {
namespace {

// The Welch options with the ratio's two cross-spectra kept per group of
// segments, for the lines' jackknife replicates.
WelchOptions grouped(WelchOptions welch, Estimator estimator) {
  welch.grouped_pairs = ratio_pairs(estimator);
  return welch;
}

class WelchEstimator final : public ResponseEstimator {
 public:
  WelchEstimator(const WelchOptions& welch, const ResponseOptions& response, std::array<std::string, 3> names)
      : welch_options_(welch),
        response_options_(response),
        names_(std::move(names)),
        welch_(3, grouped(welch, response.estimator)) {}

  void push(const RoleChannels& channels, std::size_t) override { welch_.push(channels); }

  Response finish(const StreamEnd& end, Diagnostics& findings) override {
    if (welch_.segments_done() == 0) {
      std::ostringstream message;
      message << end.origin << ": the record has " << end.sample_count << " samples, fewer than one segment of "
              << welch_options_.segment_length << "; use a shorter segment (--segment "
              << suggested_segment(end.sample_count, welch_options_.overlap, welch_options_.segment_length / 2)
              << ") or a longer record";
      throw InputError(message.str());
    }
    const CrossSpectra spectra = welch_.finish(end.sample_rate_hz);
    const Diagnostics spectral = spectral_findings(spectra, {names_.begin(), names_.end()});
    findings.insert(findings.end(), spectral.begin(), spectral.end());
    return estimate_response(spectra, response_options_, findings);
  }

 private:
  WelchOptions welch_options_;
  ResponseOptions response_options_;
  std::array<std::string, 3> names_;
  WelchAccumulator welch_;
};

class PeriodicEstimator final : public ResponseEstimator {
 public:
  explicit PeriodicEstimator(const PeriodicOptions& options) : periodic_(options) {}
  void push(const RoleChannels& channels, std::size_t) override { periodic_.push(channels); }
  Response finish(const StreamEnd& end, Diagnostics& findings) override {
    return periodic_.finish(end.sample_rate_hz, findings);
  }

 private:
  PeriodicAccumulator periodic_;
};

class SteppedEstimator final : public ResponseEstimator {
 public:
  explicit SteppedEstimator(SteppedOptions options) : stepped_(std::move(options)) {}
  void push(const RoleChannels& channels, std::size_t first_sample) override { stepped_.push(channels, first_sample); }
  Response finish(const StreamEnd&, Diagnostics& findings) override { return stepped_.finish(findings); }

 private:
  SteppedSineEstimator stepped_;
};

}  // namespace

std::unique_ptr<ResponseEstimator> make_welch_estimator(const WelchOptions& welch, const ResponseOptions& response,
                                                        std::array<std::string, 3> names) {
  return std::make_unique<WelchEstimator>(welch, response, std::move(names));
}

std::unique_ptr<ResponseEstimator> make_periodic_estimator(const PeriodicOptions& options) {
  return std::make_unique<PeriodicEstimator>(options);
}

std::unique_ptr<ResponseEstimator> make_stepped_estimator(SteppedOptions options) {
  return std::make_unique<SteppedEstimator>(std::move(options));
}

}  // namespace loopaudit
