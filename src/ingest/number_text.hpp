// Numbers as printed in text files.
#pragma once

#include <complex>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace loopaudit::detail {

// Reads a double at the start of [first, last) (fast_float: correctly
// rounded, several times faster than stream extraction). Returns the end of
// the number, or nullptr when none starts there.
const char* read_double(const char* first, const char* last, double& value);

// Parses a whole cell (surrounding blanks allowed, a leading '+' allowed) as a
// double; nullopt when the cell is not entirely a number.
std::optional<double> parse_number(std::string_view cell);

// The step between adjacent values at the precision the cell was printed with:
// "0.00125" -> 1e-5, "1.234567e+00" -> 1e-6, "42" -> 1.
double printed_resolution(std::string_view cell);

std::string_view trim(std::string_view text);

// One complex value in a cell, as circuit simulators export an AC sweep:
// "(20.5dB,-90.3°)" (gain in dB, phase in degrees; the degree sign in UTF-8
// or Latin-1, or "deg"), "(1.2,-90.3°)" (a ratio and degrees) or "(re,im)".
// nullopt for anything else, a lone number or "1,5" (a decimal comma) too.
std::optional<std::complex<double>> parse_complex_cell(std::string_view cell);

// The most frequent of ',', ';' and tab in a header line (',' if none).
char detect_delimiter(std::string_view header);

// "vout [V]", "vout (V)" or "vout / V" -> name "vout", unit "V"; no unit: "".
std::pair<std::string, std::string> split_unit(const std::string& column);

// Cells of a header line, trimmed; no more than the first max_cells.
std::vector<std::string> split_names(std::string_view header, char delimiter,
                                     std::size_t max_cells = static_cast<std::size_t>(-1));

}  // namespace loopaudit::detail
