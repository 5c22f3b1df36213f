// Dwells of a stepped sine given from outside the injection: a schedule file
// or a frequency-marker channel.
#pragma once

#include <string>
#include <vector>

#include "loopaudit/excitation/excitation.hpp"
#include "loopaudit/record/record.hpp"

namespace loopaudit {

// A schedule: delimited text with the columns freq_hz, start_s and length_s
// (any order; other columns ignored), one row a dwell. Throws InputError
// naming file, line and column; dwells that overlap or lie past the record's
// end are refused when the record is read (see dwells_in_samples).
struct ScheduledDwell {
  double frequency_hz = 0.0;
  double start_s = 0.0;
  double length_s = 0.0;
};
std::vector<ScheduledDwell> read_dwell_schedule(const std::string& path);

// The schedule in samples, sorted; throws InputError when two dwells overlap
// or one starts past the record's end.
std::vector<Dwell> dwells_in_samples(const std::vector<ScheduledDwell>& schedule, double sample_rate_hz,
                                     std::size_t sample_count, const std::string& origin);

// Follows a channel that holds the generator's frequency in Hz: each run of
// one positive value is a dwell at that frequency (0 or negative: no tone).
class MarkerDwells {
 public:
  void push(std::span<const double> marker, std::size_t first_sample);
  std::vector<Dwell> finish();

 private:
  std::vector<Dwell> dwells_;
  double value_ = 0.0;
  std::size_t start_ = 0;
  std::size_t next_ = 0;
};

}  // namespace loopaudit
