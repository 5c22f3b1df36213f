// The margins of a loop as values: crossovers, the modulus and disk margins,
// the stability verdict and the summary, each number with its interval.
// Found by analysis/ (find_margins, exact_margins, assess_stability); read
// by every stage after it. Definitions in analysis/margins.hpp.
#pragma once

#include <cstddef>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "loopaudit/record/diagnostic.hpp"

namespace loopaudit {

enum class StabilityVerdict { kStable, kUnstable, kUndecided };
inline constexpr NameTable<StabilityVerdict, 3> kVerdictNames{{{StabilityVerdict::kStable, "stable"},
                                                               {StabilityVerdict::kUnstable, "unstable"},
                                                               {StabilityVerdict::kUndecided, "undecided"}}};
static_assert(one_to_one(kVerdictNames));
const char* verdict_name(StabilityVerdict verdict);

struct StabilityAssessment {
  StabilityVerdict verdict = StabilityVerdict::kUndecided;
  int open_loop_rhp_poles = 0;               // P, as given
  std::optional<int> encirclements;          // N, clockwise; unset when undecided for lack of band
  std::optional<int> closed_loop_rhp_poles;  // Z = N + P
  int low_frequency_integrators = 0;         // n, read from the slope at the bottom of the band
  std::string reason;                        // one sentence: why this verdict
  std::vector<std::string> assumptions;
};

enum class GainDirection { kIncrease, kDecrease };

// Reasons to trust a crossing less than its interval says, as stable names:
//   "low-coherence"  a line of its local fit has coherence at or below 0.5
//   "band-edge"      it lies within two lines of the end of the band
//   "sparse-lines"   its neighbouring lines are more than 10 % apart in frequency
inline constexpr const char* kTrustLowCoherence = "low-coherence";
inline constexpr const char* kTrustBandEdge = "band-edge";
inline constexpr const char* kTrustSparseLines = "sparse-lines";

// A two-sided interval at the result's confidence level (Margins::confidence).
struct Interval {
  double low = 0.0;
  double high = 0.0;
};

// How an interval was made.
enum class IntervalMethod {
  kFirstOrder,  // the lines' sigmas propagated through the local fits
  kJackknife,   // the margin found again on every replicate of the lines
};
inline constexpr NameTable<IntervalMethod, 2> kIntervalMethodNames{
    {{IntervalMethod::kFirstOrder, "first-order"}, {IntervalMethod::kJackknife, "jackknife"}}};
static_assert(one_to_one(kIntervalMethodNames));
const char* interval_method_name(IntervalMethod method);

// A value and its interval. The interval is absent for lines without
// uncertainty (an exact table or a model) and for values read from a file
// that states none.
struct Estimate {
  double value = 0.0;
  std::optional<Interval> interval;
  IntervalMethod method = IntervalMethod::kFirstOrder;
  // Jackknife only: the first-order interval, kept as a cross-check, and
  // the value before the bias correction where one was made (the modulus
  // and disk margins: the extreme of noisy lines is biased).
  std::optional<Interval> first_order;
  std::optional<double> uncorrected;
};

inline constexpr NameTable<GainDirection, 2> kDirectionNames{
    {{GainDirection::kIncrease, "increase"}, {GainDirection::kDecrease, "decrease"}}};
static_assert(one_to_one(kDirectionNames));
const char* direction_name(GainDirection direction);

struct GainCrossover {
  Estimate frequency_hz;
  Estimate phase_margin_deg;
  Estimate delay_margin_s;           // negative when PM is negative
  std::size_t merged_crossings = 1;  // noise crossings merged into this one
  std::vector<std::string> trust_flags;  // the kTrust names above; empty when nothing calls it into question
};

struct PhaseCrossover {
  Estimate frequency_hz;
  Estimate gain_margin_db;
  GainDirection limits = GainDirection::kIncrease;  // the gain change this crossing limits
  std::size_t merged_crossings = 1;
  std::vector<std::string> trust_flags;
};

struct ModulusPoint {
  double frequency_hz = 0.0;
  Estimate modulus_margin;       // min |1 + L|
  Estimate peak_sensitivity_db;  // 20 log10 (1 / min |1 + L|)
  bool at_band_edge = false;     // the minimum may lie outside the band
};

// Balanced disk margin (skew 0): alpha = 2 / max |S - T| over the band, with
// S = 1/(1+L), T = L/(1+L), so S - T = (1-L)/(1+L). The loop tolerates any
// simultaneous gain change within [(2-alpha)/(2+alpha), (2+alpha)/(2-alpha)]
// and phase change within +-2 atan(alpha/2) (P. Seiler, A. Packard,
// P. Gahinet, "An introduction to disk margins", IEEE Control Systems
// Magazine, 2020). Over the measured band only.
struct DiskMargin {
  Estimate alpha;
  double frequency_hz = 0.0;  // where |S - T| peaks
  double gain_low_db = 0.0;   // 20 log10 (2-alpha)/(2+alpha) = -gain_high_db; -inf when alpha >= 2
  // 20 log10 (2+alpha)/(2-alpha): +inf (unbounded) when alpha >= 2, and the
  // interval's high end +inf when it reaches alpha = 2.
  Estimate gain_high_db;
  Estimate phase_deg;  // 2 atan(alpha/2)
  bool at_band_edge = false;
};

// Which curve crosses its level: |L| = 1 (gain crossings) or angle L =
// -180 deg (phase crossings).
enum class CrossingLevel { kGain, kPhase };
inline constexpr NameTable<CrossingLevel, 2> kLevelNames{{{CrossingLevel::kGain, "gain"}, {CrossingLevel::kPhase, "phase"}}};
static_assert(one_to_one(kLevelNames));
const char* level_name(CrossingLevel level);

// A stretch of the band where crossings of one level could be neither placed
// nor ruled out: the lines are too noisy, the curve shows no clear side, or
// the intervals would be too wide to mean anything. Nothing there is listed.
struct UnresolvedStretch {
  CrossingLevel level = CrossingLevel::kPhase;
  double low_hz = 0.0;
  double high_hz = 0.0;
  std::size_t crossings = 0;  // noise crossings of the level seen there
  // The other curve over the stretch's lines: |L| in dB for phase crossings,
  // the phase margin 180 deg + angle L for gain crossings.
  Interval other;
};

// A margin an unresolved stretch may hold that the summary cannot show: one
// smaller than the summary's, or of a kind (gain reduction, gain increase)
// the summary has none of.
struct PossibleMargin {
  const char* key = "";  // the summary field it qualifies, e.g. "gain_reduction_margin_db"
  double low_hz = 0.0;   // the stretch
  double high_hz = 0.0;
  Interval range;        // the values the margin could take there

  bool is_phase() const;      // a phase margin (else a gain margin, in dB)
  const char* what() const;   // "a phase margin", "a gain reduction margin", "a gain increase margin"
};

// Why a summary value is what it is: measured (set), none in the band (the
// curve clearly stays on one side of its level), or unresolved (unset, but
// an unresolved stretch may hold it: the data cannot tell).
enum class SummaryStatus { kMeasured, kNoneInBand, kUnresolved };
inline constexpr NameTable<SummaryStatus, 3> kSummaryStatusNames{{{SummaryStatus::kMeasured, "measured"},
                                                                  {SummaryStatus::kNoneInBand, "none-in-band"},
                                                                  {SummaryStatus::kUnresolved, "unresolved"}}};
static_assert(one_to_one(kSummaryStatusNames));
const char* status_name(SummaryStatus status);

// The loop's margins in a few numbers, each from the crossing it came from.
// Unset: none in the band, or unresolved (status() says which).
struct MarginSummary {
  std::optional<Estimate> gain_crossover_hz;   // the crossover with the smallest phase margin
  std::optional<Estimate> phase_margin_deg;    // the smallest over gain crossovers
  std::optional<Estimate> phase_crossover_hz;  // the crossing with the smallest |GM|
  std::optional<Estimate> gain_margin_db;      // the smallest in magnitude, sign kept
  std::optional<Estimate> gain_increase_margin_db;   // smallest positive GM
  std::optional<Estimate> gain_reduction_margin_db;  // negative GM closest to 0
  std::optional<Estimate> delay_margin_s;      // smallest over gain crossovers
  std::optional<Estimate> modulus_margin;
  std::optional<Estimate> peak_sensitivity_db;
  std::optional<double> modulus_frequency_hz;
  // Where the values above may not be the loop's: unresolved stretches that
  // could hold a smaller margin or one in the other direction.
  std::vector<PossibleMargin> possible;

  // The status of the quantity of a summary key (summary_fields()): unset
  // and named by a possible margin (or, for a crossover frequency and the
  // smallest gain margin, by one of the margins read there) is unresolved.
  SummaryStatus status(std::string_view key) const;
};

// The summary's quantities by the names that the JSON results (and limits)
// use, in the order the JSON lists them; one table for every file that
// writes or reads a summary.
struct SummaryField {
  const char* key;  // e.g. "phase_margin_deg"
  std::optional<Estimate> MarginSummary::*member;
  bool interval_listed;  // schema 1 lists its interval under "intervals"
};
std::span<const SummaryField> summary_fields();
inline constexpr const char* kModulusFrequencyKey = "modulus_freq_hz";

// How a result's intervals were made, for the reports.
struct UncertaintyMethod {
  IntervalMethod method = IntervalMethod::kFirstOrder;
  std::size_t replicates = 0;        // jackknife: replicates of the lines
  double degrees_of_freedom = 0.0;   // jackknife: of its variance, replicates - 1
  double half_width_factor = 0.0;    // the interval's half-width over the standard error (t or normal quantile)
  std::string basis;                 // what a replicate leaves out, for people: "one of 20 groups of 12 segments"
  std::string first_order_reason;    // first order: why not the jackknife ("" for a table)
};

struct Margins {
  std::vector<GainCrossover> gain_crossovers;    // ascending frequency
  std::vector<PhaseCrossover> phase_crossovers;  // ascending frequency
  std::optional<ModulusPoint> modulus;
  std::optional<DiskMargin> disk;
  std::vector<UnresolvedStretch> unresolved;  // ascending frequency within each level
  MarginSummary summary;
  StabilityAssessment stability;
  double band_low_hz = 0.0;
  double band_high_hz = 0.0;
  std::size_t line_count = 0;
  double confidence = 0.95;  // of the intervals
  UncertaintyMethod uncertainty;
  Diagnostics findings;
};

}  // namespace loopaudit
