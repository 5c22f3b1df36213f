// Frequency-response tables, such as a circuit simulator's AC sweep, an
// analyzer's export, or the response CSV that `loopaudit analyze --csv`
// writes.
//
// Delimited text with a header; metadata lines above the header are skipped
// as for recordings. Columns are found by name, case aside and with a unit
// in brackets or parentheses taken off (`Frequency (Hz)`, `Gain (dB)`):
//   frequency  freq_hz, freq, frequency, f        unit Hz (default), kHz, MHz, GHz
//   gain       mag_db, gain_db, gain              in dB
//   magnitude  magnitude, mag, amplitude, abs     a ratio, or dB when its unit says dB
//   phase      phase_deg, phase, angle, arg       unit deg (default) or rad
//   real       re, real;  imaginary: im, imag, imaginary
// Optional: coherence, mag_sigma_db (the standard deviation of the magnitude
// in dB; it weights the crossing fits). Other columns are ignored.
// Rows may come in any order of frequency: they are sorted, with a note
// (table.sorted). Frequencies must be positive and distinct.
#pragma once

#include <string>

#include "loopaudit/record/diagnostic.hpp"
#include "loopaudit/record/response.hpp"

namespace loopaudit {

// Columns named by the user (the header text, with or without its unit,
// case aside); an empty name: found by the names above.
struct TableColumns {
  std::string frequency;
  std::string gain_db;    // a gain in dB
  std::string magnitude;  // a ratio
  std::string phase;      // degrees, or radians when its unit says rad
  std::string real;
  std::string imag;
};

struct ResponseTable {
  Response response;     // in increasing frequency
  Diagnostics findings;  // table.sorted
};

// Throws InputError naming the file, line and column of any problem, and
// ConfigError for a named column the header does not have.
ResponseTable read_response_table(const std::string& path, const TableColumns& columns = {});

}  // namespace loopaudit
