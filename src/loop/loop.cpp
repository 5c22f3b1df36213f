#include "loopaudit/loop/loop.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <optional>
#include <sstream>
#include <string>

#include "loopaudit/format.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

// The plausibility check votes with the lowest reliable lines of high gain:
// walking up from the bottom of the band, the lines whose relative standard
// deviation is below kTrustedSigma (14 deg) and whose |L| exceeds kHighGain,
// over kVoteDecades from the first of them (wide enough for the slope not to
// follow line noise) and at least kMinVoteLines, stopping at the first
// reliable line with |L| below 1 (past a crossover the phase says nothing of
// the sign). Their phase is
// held against what the slope of |L| there predicts for a minimum-phase
// loop, Bode's gain-phase relation: 90 deg of lag per 20 dB a decade of
// fall (an integrator: -20 dB a decade and -90 deg; two: -180 deg; none: 0).
// An inverted sign adds 180 deg, so a phase within kInvertedWithinDeg of
// the prediction plus 180 deg is what an inverted loop shows and a
// negative-feedback loop at high gain does not (lead, lag and delay at the
// low end of the band move the phase by well under 120 deg from the
// prediction).
constexpr double kHighGain = 2.0;
constexpr std::size_t kMinVoteLines = 3;
constexpr double kVoteDecades = 0.3;
constexpr double kTrustedSigma = 0.25;
constexpr double kBodeDegPerDbPerDecade = 90.0 / 20.0;
constexpr double kInvertedWithinDeg = 60.0;

struct Vote {
  double phase_deg = 0.0;       // circular mean of the voting lines
  double predicted_deg = 0.0;   // from the slope of their |L|
  std::size_t lines = 0;
  std::size_t first = 0;        // index of the lowest voting line
  std::size_t last = 0;         // index of the highest voting line
};

// A line votes when it and the median of the five around it are below
// kTrustedSigma: a quiet line by chance among noisy ones does not.
bool trusted(const Response& loop, std::size_t k) {
  if (loop.relative_sigma.empty()) return true;
  if (!(loop.relative_sigma[k] < kTrustedSigma)) return false;
  const std::size_t first = k >= 2 ? k - 2 : 0;
  const std::size_t end = std::min(loop.size(), k + 3);
  std::vector<double> around(loop.relative_sigma.begin() + static_cast<std::ptrdiff_t>(first),
                             loop.relative_sigma.begin() + static_cast<std::ptrdiff_t>(end));
  std::nth_element(around.begin(), around.begin() + around.size() / 2, around.end());
  return around[around.size() / 2] < kTrustedSigma;
}

std::optional<Vote> vote(const Response& loop) {
  std::complex<double> phasor_sum = 0.0;
  double n = 0.0, sx = 0.0, sy = 0.0, sxx = 0.0, sxy = 0.0;
  Vote v;
  double first_log_f = 0.0;
  for (std::size_t k = 0; k < loop.size(); ++k) {
    if (!trusted(loop, k)) continue;
    const double gain = std::abs(loop.value[k]);
    if (gain < 1.0) break;
    if (!(gain > kHighGain) || !(loop.frequency_hz[k] > 0.0)) continue;
    const double x = std::log10(loop.frequency_hz[k]), y = 20.0 * std::log10(gain);
    if (v.lines == 0) first_log_f = x, v.first = k;
    if (x - first_log_f > kVoteDecades && v.lines >= kMinVoteLines) break;
    phasor_sum += loop.value[k] / gain;
    n += 1.0, sx += x, sy += y, sxx += x * x, sxy += x * y;
    ++v.lines;
    v.last = k;
  }
  if (v.lines < kMinVoteLines) return std::nullopt;
  const double spread = n * sxx - sx * sx;
  const double slope_db_per_decade = spread > 0.0 ? (n * sxy - sx * sy) / spread : 0.0;
  v.phase_deg = deg_from_rad(std::arg(phasor_sum));
  v.predicted_deg = kBodeDegPerDbPerDecade * slope_db_per_decade;
  return v;
}

void check_sign(const Response& loop, Diagnostics& findings) {
  const auto v = vote(loop);
  if (!v || std::abs(wrap_deg(v->phase_deg - v->predicted_deg - 180.0)) >= kInvertedWithinDeg) return;
  std::ostringstream message;
  message << "where |L| is high at the low end of the band its phase is " << std::lround(v->phase_deg)
          << " deg (the " << v->lines << " lowest reliable lines, " << format_frequency(loop.frequency_hz[v->first])
          << " to " << format_frequency(loop.frequency_hz[v->last]) << "), while its slope there predicts about "
          << std::lround(wrap_deg(v->predicted_deg)) << " deg for a negative-feedback loop: 180 deg away, as an "
          << "inverted sign gives. Check the probe polarity (an inverted probe on x or y: --scale NAME=-1 on that channel undoes it), "
             "the x/y channel roles and the convention; margins and the stability verdict assume the sign is right";
  findings.push_back(make_warning("loop.sign-suspect", message.str(),
                                  {.low_hz = loop.frequency_hz.front(), .high_hz = loop.frequency_hz[v->last]}));
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

namespace {

// L from the measured ratio H, and H from L.
std::complex<double> loop_from_ratio(std::complex<double> h, Convention convention) {
  switch (convention) {
    case Convention::kSeriesInjection: return -h;
    case Convention::kDirect: return h;
    case Convention::kClosedLoop: return h / (1.0 - h);
  }
  return h;
}

std::complex<double> ratio_from_loop(std::complex<double> l, Convention convention) {
  switch (convention) {
    case Convention::kSeriesInjection: return -l;
    case Convention::kDirect: return l;
    case Convention::kClosedLoop: return l / (1.0 + l);
  }
  return l;
}

}  // namespace

LoopResponse to_loop(const Response& measured, Convention convention, Diagnostics& findings) {
  LoopResponse loop{measured, convention};
  for (std::size_t k = 0; k < measured.size(); ++k) {
    const std::complex<double> h = measured.value[k];
    loop.lines.value[k] = loop_from_ratio(h, convention);
    // d ln L = d ln T / (1 - T): the relative error grows near T = 1.
    if (convention == Convention::kClosedLoop) loop.lines.relative_sigma[k] = measured.relative_sigma[k] / std::abs(1.0 - h);
  }
  for (auto& replicate : loop.lines.replicates) {
    for (auto& v : replicate) v = loop_from_ratio(v, convention);
  }
  check_sign(loop.lines, findings);
  return loop;
}

Response measured_ratio(const LoopResponse& loop) {
  Response measured = loop.lines;
  for (std::size_t k = 0; k < measured.size(); ++k) {
    measured.value[k] = ratio_from_loop(loop.lines.value[k], loop.convention);
    if (loop.convention == Convention::kClosedLoop) {
      measured.relative_sigma[k] = loop.lines.relative_sigma[k] * std::abs(1.0 - measured.value[k]);
    }
  }
  for (auto& replicate : measured.replicates) {
    for (auto& v : replicate) v = ratio_from_loop(v, loop.convention);
  }
  return measured;
}

}  // namespace loopaudit
