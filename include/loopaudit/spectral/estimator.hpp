// One shape for every estimator of a response from a stream of samples: the
// pipeline hands each the blocks of (injection, x, y) in order, then asks for
// the response once the stream has ended and the sample rate is known. The
// estimators keep memory bounded (a segment, a period, a dwell).
//
// A new estimator implements ResponseEstimator here and gets one entry in the
// pipeline's table of excitation kinds (src/pipeline/pipeline.cpp).
#pragma once

#include <array>
#include <cstddef>
#include <memory>
#include <span>
#include <string>

#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/response.hpp"
#include "loopaudit/spectral/periodic.hpp"
#include "loopaudit/spectral/response.hpp"
#include "loopaudit/spectral/stepped.hpp"
#include "loopaudit/spectral/welch.hpp"

namespace loopaudit {

// The injection (the reference), x and y of one block, equal lengths.
using RoleChannels = std::array<std::span<const double>, 3>;

// What an estimator knows only at the end of the stream.
struct StreamEnd {
  double sample_rate_hz = 0.0;
  std::size_t sample_count = 0;
  std::string origin;  // the recording, for messages
};

class ResponseEstimator {
 public:
  virtual ~ResponseEstimator() = default;
  // Samples first_sample onwards, in order.
  virtual void push(const RoleChannels& channels, std::size_t first_sample) = 0;
  // Throws InputError or NumericalError when the stream holds no usable line.
  virtual Response finish(const StreamEnd& end, Diagnostics& findings) = 0;
};

// Welch averaging of the cross-spectra, then the response lines; `names` are
// the channels' names in role order, for findings.
std::unique_ptr<ResponseEstimator> make_welch_estimator(const WelchOptions& welch, const ResponseOptions& response,
                                                        std::array<std::string, 3> names);
std::unique_ptr<ResponseEstimator> make_periodic_estimator(const PeriodicOptions& options);
std::unique_ptr<ResponseEstimator> make_stepped_estimator(SteppedOptions options);

}  // namespace loopaudit
