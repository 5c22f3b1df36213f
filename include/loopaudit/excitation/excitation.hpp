// What the injection is: broadband noise, a periodic signal (multisine,
// PRBS, periodic chirp), a stepped sine, or a chirp; found from the injection
// channel alone, in one streaming pass.
//
// The detector keeps, per frame of kFrameSamples, how tonal the injection is
// and where its peak lies; it follows the injection's zero crossings to find
// the dwells of a stepped sine; and it keeps the first kPeriodSearchSamples
// to look for a period by autocorrelation. Memory does not grow with the
// record beyond a few numbers per frame and per dwell.
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "loopaudit/names.hpp"
#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

enum class ExcitationKind { kBroadband, kPeriodic, kStepped, kChirp };
inline constexpr NameTable<ExcitationKind, 4> kExcitationNames{{{ExcitationKind::kBroadband, "broadband"},
                                                                {ExcitationKind::kPeriodic, "periodic"},
                                                                {ExcitationKind::kStepped, "stepped"},
                                                                {ExcitationKind::kChirp, "chirp"}}};
static_assert(one_to_one(kExcitationNames));
const char* excitation_name(ExcitationKind kind);
ExcitationKind excitation_from_name(const std::string& name);  // throws ConfigError
// A setting: "auto" (none: the detector finds the kind) or one of the names.
std::optional<ExcitationKind> excitation_setting_from_name(const std::string& name);


struct ExcitationPlan {
  ExcitationKind kind = ExcitationKind::kBroadband;
  double low_hz = 0.0;  // band the injection covers (lines with power, tones, sweep)
  double high_hz = 0.0;
  std::size_t period_samples = 0;  // periodic: the period
  double period_match = 0.0;       // periodic: normalised autocorrelation at the period
  std::vector<Dwell> dwells;       // stepped
  double tonal_fraction = 0.0;     // share of frames that hold one tone
  // The injection's power over what does not belong to it: for a tone, the
  // power near the peak over the rest (median over tonal frames); for a
  // periodic signal, the repeating part over the rest (from the period match).
  // Unset for broadband noise, which has no such split.
  std::optional<double> snr_db;
  Diagnostics findings;

  std::string describe(double sample_rate_hz) const;  // one line for people
  // Multiplies every frequency by `factor`: a plan made with a sample rate of
  // 1 (frequencies in cycles per sample) becomes one in Hz.
  void rescale_frequencies(double factor);
};

class ExcitationDetector {
 public:
  static constexpr std::size_t kFrameSamples = 1024;
  static constexpr std::size_t kPeriodSearchSamples = 1 << 16;

  ExcitationDetector();
  ~ExcitationDetector();
  ExcitationDetector(ExcitationDetector&&) noexcept;
  ExcitationDetector& operator=(ExcitationDetector&&) noexcept;

  void push(std::span<const double> injection);
  std::size_t samples_seen() const;
  // Whether the frames so far hold one tone (a stepped sine or a chirp), by
  // the rule finish() applies: only those need the whole record to decide.
  bool looks_tonal() const;
  ExcitationPlan finish(double sample_rate_hz);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace loopaudit
