// Delimited-text outputs.
#pragma once

#include <ostream>

#include "loopaudit/record/record.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

// Columns freq_hz, re, im, mag_db, phase_deg (wrapped into (-180, 180]),
// coherence, mag_sigma_db, phase_sigma_deg; readable by read_response_table.
void write_response_csv(std::ostream& out, const Response& response);

// Columns t (seconds from the first sample), then every channel.
void write_record_csv(std::ostream& out, const Record& record);

}  // namespace loopaudit
