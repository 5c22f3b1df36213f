// Checks a time column as it streams past and derives the sample rate from its
// whole span. Stamps are compared with the tolerance their printed precision
// allows: a column printed to 7 significant digits repeats or skips values
// once it passes about 10^6 samples, and that is normal.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace loopaudit::detail {

class StampChecker {
 public:
  explicit StampChecker(std::string origin) : origin_(std::move(origin)) {}

  // Throws InputError naming the line when a stamp goes backwards or the step
  // departs from the expected one by more than the tolerance.
  void add(double stamp_s, double resolution_s, std::size_t line);

  // Checks the stamps still held back and returns the sample rate from the
  // span of all stamps; throws if there are fewer than two.
  double finish();
  std::size_t count() const { return count_; }
  // RMS departure of the steps from the expected step, and the expected step.
  double jitter_rms_s() const;
  double step_s() const { return reference_step_s_; }
  double resolution_s() const { return resolution_s_; }

 private:
  void fix_reference_step();
  void check_step(double previous_s, double stamp_s, std::size_t line);

  std::string origin_;
  std::size_t count_ = 0;
  double first_s_ = 0.0;
  double last_s_ = 0.0;
  double resolution_s_ = 0.0;           // the column's, from the steps seen
  double previous_resolution_s_ = 0.0;  // of the last stamp's text
  double reference_step_s_ = 0.0;  // 0 until enough stamps are seen
  double jitter_sum_squares_ = 0.0;
  std::size_t jitter_steps_ = 0;
  std::vector<double> early_stamps_;
  std::vector<std::size_t> early_lines_;
};

}  // namespace loopaudit::detail
