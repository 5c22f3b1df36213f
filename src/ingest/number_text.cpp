#include "ingest/number_text.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <fast_float/fast_float.h>
#include <cmath>
#include <cctype>
#include <cstdlib>
#include <initializer_list>

#include "loopaudit/units.hpp"

namespace loopaudit::detail {

std::string_view trim(std::string_view text) {
  const auto is_blank = [](char c) { return c == ' ' || c == '\t' || c == '\r' || c == '"'; };
  while (!text.empty() && is_blank(text.front())) text.remove_prefix(1);
  while (!text.empty() && is_blank(text.back())) text.remove_suffix(1);
  return text;
}

const char* read_double(const char* first, const char* last, double& value) {
  const auto [stop, error] = fast_float::from_chars(first, last, value);
  return error == std::errc{} && stop != first ? stop : nullptr;
}

std::optional<double> parse_number(std::string_view cell) {
  const auto is_blank = [](char c) { return c == ' ' || c == '\t' || c == '\r' || c == '"'; };
  if (!cell.empty() && (is_blank(cell.front()) || is_blank(cell.back()))) cell = trim(cell);
  if (!cell.empty() && cell.front() == '+') cell.remove_prefix(1);
  if (cell.empty()) return std::nullopt;
  double value = 0.0;
  const char* end = cell.data() + cell.size();
  if (read_double(cell.data(), end, value) != end) return std::nullopt;
  return value;
}

namespace {

// A number followed by one of `suffixes` (or by nothing, then `suffixed` is
// false), and nothing else.
std::optional<double> number_with_suffix(std::string_view text, std::initializer_list<std::string_view> suffixes,
                                         bool& suffixed) {
  text = trim(text);
  double value = 0.0;
  const char* stop = read_double(text.data(), text.data() + text.size(), value);
  if (stop == nullptr) return std::nullopt;
  std::string rest(trim(std::string_view(stop, static_cast<std::size_t>(text.data() + text.size() - stop))));
  std::transform(rest.begin(), rest.end(), rest.begin(), [](unsigned char c) { return std::tolower(c); });
  suffixed = !rest.empty();
  if (!suffixed || std::find(suffixes.begin(), suffixes.end(), rest) != suffixes.end()) return value;
  return std::nullopt;
}

}  // namespace

std::optional<std::complex<double>> parse_complex_cell(std::string_view cell) {
  cell = trim(cell);
  if (cell.size() < 2 || cell.front() != '(' || cell.back() != ')') return std::nullopt;
  cell = cell.substr(1, cell.size() - 2);
  const auto comma = cell.find(',');
  if (comma == std::string_view::npos || cell.find(',', comma + 1) != std::string_view::npos) return std::nullopt;
  bool in_db = false;
  bool in_degrees = false;
  const auto first = number_with_suffix(cell.substr(0, comma), {"db"}, in_db);
  const auto second = number_with_suffix(cell.substr(comma + 1), {"\xC2\xB0", "\xB0", "deg"}, in_degrees);
  if (!first || !second) return std::nullopt;
  if (!in_db && !in_degrees) return std::complex<double>(*first, *second);
  const double magnitude = in_db ? ratio_from_db(*first) : *first;
  if (magnitude < 0.0) return std::nullopt;
  return std::polar(magnitude, rad_from_deg(*second));
}

namespace {
// 10^e from a table: std::pow per row was a seventh of the parse time.
double power_of_ten(int e) {
  static const auto table = [] {
    std::array<double, 641> t{};
    for (int i = 0; i < 641; ++i) t[i] = std::pow(10.0, i - 320);
    return t;
  }();
  return table[std::clamp(e, -320, 320) + 320];
}
}  // namespace

double printed_resolution(std::string_view cell) {
  cell = trim(cell);
  int decimals = 0;
  int exponent = 0;
  const auto point = cell.find_first_of(".,");  // a decimal comma counts too
  const auto mark = cell.find_first_of("eE");
  if (point != std::string_view::npos) {
    const auto mantissa_end = (mark == std::string_view::npos) ? cell.size() : mark;
    decimals = static_cast<int>(mantissa_end - point - 1);
  }
  if (mark != std::string_view::npos) {
    std::string_view digits = cell.substr(mark + 1);
    if (!digits.empty() && digits.front() == '+') digits.remove_prefix(1);
    std::from_chars(digits.data(), digits.data() + digits.size(), exponent);
  }
  return power_of_ten(exponent - decimals);
}

char detect_delimiter(std::string_view header) {
  constexpr std::array<char, 3> kCandidates{',', ';', '\t'};
  char best = ',';
  std::ptrdiff_t best_count = 0;
  for (char c : kCandidates) {
    const auto count = std::count(header.begin(), header.end(), c);
    if (count > best_count) {
      best = c;
      best_count = count;
    }
  }
  return best;
}

std::pair<std::string, std::string> split_unit(const std::string& column) {
  // "Frequency / Hz": a blank before the slash, so "V(out)/V(in)" keeps its name.
  const auto slash = column.rfind(" /");
  if (slash != std::string::npos && slash > 0) {
    const std::string unit(trim(column.substr(slash + 2)));
    const std::string name(trim(column.substr(0, slash)));
    if (!unit.empty() && !name.empty()) return {name, unit};
  }
  const auto open = column.find_last_of("[(");
  const char close = open != std::string::npos && column[open] == '[' ? ']' : ')';
  if (open == std::string::npos || open == 0 || column.back() != close) return {column, ""};
  return {std::string(trim(column.substr(0, open))), std::string(trim(column.substr(open + 1, column.size() - open - 2)))};
}

std::vector<std::string> split_names(std::string_view header, char delimiter, std::size_t max_cells) {
  std::vector<std::string> names;
  std::size_t start = 0;
  while (names.size() < max_cells) {
    const auto stop = header.find(delimiter, start);
    names.emplace_back(trim(header.substr(start, stop - start)));
    if (stop == std::string_view::npos) break;
    start = stop + 1;
  }
  return names;
}

}  // namespace loopaudit::detail
