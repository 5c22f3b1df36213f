// Where the header of a delimited text file is. Scopes and DAQs often write
// metadata lines (instrument, serial number, sample interval) above it,
// without marking them as comments.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "ingest/line_reader.hpp"

namespace loopaudit::detail {

// The most lines read while looking for the header, and the most bytes
// they may hold together (the search stops at whichever comes first).
inline constexpr std::size_t kHeaderSearchLines = 100;
inline constexpr std::size_t kHeaderSearchBytes = std::size_t{16} << 20;

// The most columns a text recording or a frequency-response table may have
// (a delimiter at the end of every line aside). A wider header is refused
// (InputError naming the file, the line, the count and this limit) before
// any per-column storage is taken; rows are split no further than this.
inline constexpr std::size_t kMaxColumns = 1024;

struct NumberedLine {
  std::size_t number = 0;  // 1-based line number in the file
  std::string text;
};

struct FoundHeader {
  NumberedLine header;
  char delimiter = ',';
  std::vector<NumberedLine> before;  // lines above the header (metadata, comments, blanks)
  std::vector<NumberedLine> after;   // rows read past the header while looking; to be parsed first
  bool searched = false;             // true: looked for it and took the first line, finding no better
  // A line of units right under the header ("Second,Volt,Volt"), not among `after`.
  std::optional<NumberedLine> units;
  // The header ended with a delimiter (an empty last cell), as do the rows:
  // `header.text` and `units` have it taken off; each row still has it.
  bool trailing_delimiter = false;
};

// Without `lines_before_header`: the header is the first line of names
// (no cell empty or a number) followed by rows of numbers of the same width
// (up to 3 checked), within the first kHeaderSearchLines lines, or by one
// line of units (every cell blank or a unit, see is_unit_cell) and then such
// rows; if there is none, the first line that is not blank or a comment.
// With it: the first such line after that many lines (a line of units under
// it is taken as such). An empty last cell in the header, as a delimiter at
// the end of every line leaves, is allowed when the rows end the same way.
// Blank lines and lines starting with '#' or '%' are never the header. Throws
// InputError for a file with no such line, or a header of more than
// kMaxColumns columns.
FoundHeader find_header(LineReader& lines, const std::string& path, std::optional<std::size_t> lines_before_header,
                        std::optional<char> delimiter);

// A cell of a units row: a unit of time, voltage, current, frequency, gain
// or angle, with an SI prefix, in brackets or not ("Second", "Volt", "mV", "(A)").
bool is_unit_cell(std::string_view cell);

// A units row's cell with blanks and brackets taken off: "(V)" -> "V".
std::string unit_of_cell(std::string_view cell);

// Blank, or a comment ('#' or '%' first).
bool is_skipped_line(std::string_view line);

// A cell as a number, with a decimal comma when `decimal_comma`.
std::optional<double> parse_cell(std::string_view cell, bool decimal_comma);

// A line above the header that states the sampling ("Sample Interval,1e-06",
// "Sampling rate: 250000", "XInc;2,0E-06"): the rate it gives, in Hz.
struct RateHint {
  std::size_t line_number = 0;
  std::string text;
  double sample_rate_hz = 0.0;
};
std::optional<RateHint> find_rate_hint(const std::vector<NumberedLine>& lines);

}  // namespace loopaudit::detail
