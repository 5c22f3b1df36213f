#include "ingest/stamp_check.hpp"

#include <cmath>
#include <sstream>

#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

// Steps may differ from the expected one by this fraction (clock jitter)
// plus the printed resolution (half a unit of rounding on each stamp).
constexpr double kStepTolerance = 0.25;
// Stamps kept before the expected step is fixed: enough for the span to be
// large against the printed resolution.
constexpr std::size_t kMinReferenceStamps = 16;
constexpr double kReferenceSpanInResolutions = 200.0;
constexpr std::size_t kMaxReferenceStamps = 1 << 20;

}  // namespace

void StampChecker::add(double stamp_s, double resolution_s, std::size_t line) {
  // Trailing zeros are not printed ("0.05" beside "0.051", "0" at the start),
  // so a cell may look coarser than its column: a step is as fine as the
  // finer of its two stamps.
  if (count_ == 0) {
    first_s_ = stamp_s;
  } else {
    resolution_s_ = std::max(resolution_s_, std::min(resolution_s, previous_resolution_s_));
  }
  previous_resolution_s_ = resolution_s;
  const double previous_s = last_s_;
  last_s_ = stamp_s;
  ++count_;
  if (reference_step_s_ > 0.0) {
    check_step(previous_s, stamp_s, line);
    return;
  }
  early_stamps_.push_back(stamp_s);
  early_lines_.push_back(line);
  const double span = stamp_s - first_s_;
  if ((early_stamps_.size() >= kMinReferenceStamps && span >= kReferenceSpanInResolutions * resolution_s_) ||
      early_stamps_.size() >= kMaxReferenceStamps) {
    fix_reference_step();
  }
}

void StampChecker::fix_reference_step() {
  const std::size_t n = early_stamps_.size();
  if (n < 2) return;
  reference_step_s_ = (early_stamps_.back() - early_stamps_.front()) / static_cast<double>(n - 1);
  if (!(reference_step_s_ > 0.0)) {
    std::ostringstream message;
    message << origin_ << ": line " << early_lines_.back() << ": the time column does not increase over its first "
            << n << " rows";
    throw InputError(message.str());
  }
  for (std::size_t i = 1; i < n; ++i) check_step(early_stamps_[i - 1], early_stamps_[i], early_lines_[i]);
  early_stamps_.clear();
  early_stamps_.shrink_to_fit();
  early_lines_.clear();
  early_lines_.shrink_to_fit();
}

void StampChecker::check_step(double previous_s, double stamp_s, std::size_t line) {
  const double step = stamp_s - previous_s;
  // Two stamps one step apart can print alike once the resolution reaches
  // about the step (a value at a rounding half-point goes either way).
  const bool rounding_hides_step = resolution_s_ >= 0.5 * reference_step_s_;
  if (step < 0.0 || (step == 0.0 && !rounding_hides_step)) {
    std::ostringstream message;
    message << origin_ << ": line " << line << ": time " << stamp_s << " s does not increase (previous row " << previous_s
            << " s)";
    throw InputError(message.str());
  }
  jitter_sum_squares_ += (step - reference_step_s_) * (step - reference_step_s_);
  ++jitter_steps_;
  const double tolerance = kStepTolerance * reference_step_s_ + resolution_s_;
  if (std::abs(step - reference_step_s_) > tolerance) {
    std::ostringstream message;
    message << origin_ << ": line " << line << ": time step " << step << " s where " << reference_step_s_
            << " s is expected (tolerance " << tolerance << " s); the time column is not uniform";
    throw InputError(message.str());
  }
}

double StampChecker::jitter_rms_s() const {
  return jitter_steps_ == 0 ? 0.0 : std::sqrt(jitter_sum_squares_ / static_cast<double>(jitter_steps_));
}

double StampChecker::finish() {
  if (count_ < 2) throw InputError(origin_ + ": fewer than two rows of data");
  if (reference_step_s_ == 0.0) fix_reference_step();
  const double span = last_s_ - first_s_;
  if (!(span > 0.0)) throw InputError(origin_ + ": the time column spans no time");
  return static_cast<double>(count_ - 1) / span;
}

}  // namespace loopaudit::detail
