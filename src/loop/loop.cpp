#include "loopaudit/loop/loop.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>

#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

// The plausibility check looks at lines with |L| above this gain in the
// lowest fifth of the band (in log frequency), or the lowest few lines, and
// needs at least this many of them.
constexpr double kHighGain = 2.0;
constexpr std::size_t kMinLowLines = 3;
// Lines noisier than this (relative standard deviation, 14 deg) do not vote.
constexpr double kTrustedSigma = 0.25;
constexpr double kSuspectPhaseLowDeg = 30.0;
constexpr double kSuspectPhaseHighDeg = 179.0;

void check_sign(const Response& loop, Diagnostics& findings) {
  if (loop.size() < kMinLowLines) return;
  const double low_end = std::max(loop.frequency_hz[kMinLowLines - 1],
                                  loop.frequency_hz.front() * std::pow(loop.frequency_hz.back() / loop.frequency_hz.front(), 0.2));
  std::vector<double> phases_deg;
  for (std::size_t k = 0; k < loop.size() && loop.frequency_hz[k] <= low_end; ++k) {
    const bool trusted = loop.relative_sigma.empty() || loop.relative_sigma[k] < kTrustedSigma;
    if (trusted && std::abs(loop.value[k]) > kHighGain) phases_deg.push_back(deg_from_rad(std::arg(loop.value[k])));
  }
  if (phases_deg.size() < kMinLowLines) return;
  std::nth_element(phases_deg.begin(), phases_deg.begin() + phases_deg.size() / 2, phases_deg.end());
  const double median = phases_deg[phases_deg.size() / 2];
  if (median > kSuspectPhaseLowDeg && median < kSuspectPhaseHighDeg) {
    std::ostringstream message;
    message << "at the low end of the band |L| is high and its phase is " << std::lround(median)
            << " deg: a negative-feedback loop does not do that; check the probe polarity, the x/y channel roles "
               "and the convention";
    findings.push_back(make_warning("loop.sign-suspect", message.str(),
                                    {.low_hz = loop.frequency_hz.front(), .high_hz = low_end}));
  }
}

}  // namespace

Convention convention_from_name(std::string_view name) { return value_of(kConventionNames, name, {"convention"}); }

const char* convention_name(Convention convention) { return name_of(kConventionNames, convention); }

const char* convention_formula(Convention convention) {
  switch (convention) {
    case Convention::kSeriesInjection: return "L = -Y/X";
    case Convention::kDirect: return "L = H";
    case Convention::kClosedLoop: return "L = T/(1-T)";
  }
  return "";
}

LoopResponse to_loop(const Response& measured, Convention convention, Diagnostics& findings) {
  LoopResponse loop{measured, convention};
  for (std::size_t k = 0; k < measured.size(); ++k) {
    const std::complex<double> h = measured.value[k];
    switch (convention) {
      case Convention::kSeriesInjection: loop.lines.value[k] = -h; break;
      case Convention::kDirect: break;
      case Convention::kClosedLoop:
        loop.lines.value[k] = h / (1.0 - h);
        // d ln L = d ln T / (1 - T): the relative error grows near T = 1.
        loop.lines.relative_sigma[k] = measured.relative_sigma[k] / std::abs(1.0 - h);
        break;
    }
  }
  check_sign(loop.lines, findings);
  return loop;
}

Response measured_ratio(const LoopResponse& loop) {
  Response measured = loop.lines;
  for (std::size_t k = 0; k < measured.size(); ++k) {
    const std::complex<double> l = loop.lines.value[k];
    switch (loop.convention) {
      case Convention::kSeriesInjection: measured.value[k] = -l; break;
      case Convention::kDirect: break;
      case Convention::kClosedLoop:
        measured.value[k] = l / (1.0 + l);
        measured.relative_sigma[k] = loop.lines.relative_sigma[k] * std::abs(1.0 - measured.value[k]);
        break;
    }
  }
  return measured;
}

}  // namespace loopaudit
