#include "loopaudit/loop/loop.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>

#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

// The plausibility check votes with the lowest reliable lines of high gain:
// walking up from the bottom of the band, the first kVoteLines lines whose
// relative standard deviation is below kTrustedSigma (14 deg) and whose |L|
// exceeds kHighGain, stopping at the first reliable line with |L| below 1
// (past a crossover the phase says nothing of the sign). Their median phase
// in (kSuspectPhaseLowDeg, kSuspectPhaseHighDeg) is what an inverted sign
// shows and a negative-feedback loop at high gain does not (an integrator
// gives -90 deg, inverted +90; an inverted type-0 loop sits near 0 or 180
// and cannot be told apart). The upper end stays clear of a conditionally
// stable dip to about -210 deg (+150 deg wrapped).
constexpr double kHighGain = 2.0;
constexpr std::size_t kMinVoteLines = 3;
constexpr std::size_t kVoteLines = 12;
constexpr double kTrustedSigma = 0.25;
constexpr double kSuspectPhaseLowDeg = 30.0;
constexpr double kSuspectPhaseHighDeg = 150.0;

void check_sign(const Response& loop, Diagnostics& findings) {
  std::vector<double> phases_deg;
  std::size_t last = 0;
  for (std::size_t k = 0; k < loop.size() && phases_deg.size() < kVoteLines; ++k) {
    const bool trusted = loop.relative_sigma.empty() || loop.relative_sigma[k] < kTrustedSigma;
    if (!trusted) continue;
    const double gain = std::abs(loop.value[k]);
    if (gain < 1.0) break;
    if (gain > kHighGain) {
      phases_deg.push_back(deg_from_rad(std::arg(loop.value[k])));
      last = k;
    }
  }
  if (phases_deg.size() < kMinVoteLines) return;
  std::nth_element(phases_deg.begin(), phases_deg.begin() + phases_deg.size() / 2, phases_deg.end());
  const double median = phases_deg[phases_deg.size() / 2];
  if (median > kSuspectPhaseLowDeg && median < kSuspectPhaseHighDeg) {
    std::ostringstream message;
    message << "where |L| is high at the low end of the band its phase is " << std::lround(median)
            << " deg (median of the " << phases_deg.size() << " lowest reliable lines): a negative-feedback loop "
            << "does not do that, an inverted one does. Check the probe polarity (an inverted probe on x or y), "
               "the x/y channel roles and the convention; margins and the stability verdict assume the sign is right";
    findings.push_back(make_warning("loop.sign-suspect", message.str(),
                                    {.low_hz = loop.frequency_hz.front(), .high_hz = loop.frequency_hz[last]}));
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
