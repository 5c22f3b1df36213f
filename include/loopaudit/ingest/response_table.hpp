// Frequency-response tables, such as a circuit simulator's AC sweep or the
// response CSV that `loopaudit analyze --csv` writes.
//
// Delimited text with a header. Required: freq_hz, and either re and im or
// mag_db and phase_deg. Optional: coherence, mag_sigma_db (the standard
// deviation of the magnitude in dB; it weights the crossing fits). Other
// columns are ignored. Frequencies must be positive and increasing.
#pragma once

#include <string>

#include "loopaudit/record/response.hpp"

namespace loopaudit {

// Throws InputError naming the file, line and column of any problem.
Response read_response_table(const std::string& path);

}  // namespace loopaudit
