#include "ingest/header_search.hpp"

#include <algorithm>
#include <array>
#include <cctype>

#include "ingest/number_text.hpp"
#include "loopaudit/error.hpp"

namespace loopaudit::detail {
namespace {

// Rows of numbers checked under a header candidate.
constexpr std::size_t kRowsChecked = 3;

std::vector<std::string_view> cells_of(std::string_view line, char delimiter) {
  std::vector<std::string_view> cells;
  std::size_t start = 0;
  for (;;) {
    const auto stop = line.find(delimiter, start);
    cells.push_back(line.substr(start, stop == std::string_view::npos ? std::string_view::npos : stop - start));
    if (stop == std::string_view::npos) return cells;
    start = stop + 1;
  }
}

bool names_only(std::string_view line, char delimiter) {
  for (const auto cell : cells_of(line, delimiter)) {
    if (trim(cell).empty() || parse_cell(cell, delimiter == ';')) return false;
  }
  return true;
}

bool numbers_only(std::string_view line, char delimiter, std::size_t width) {
  const auto cells = cells_of(line, delimiter);
  if (cells.size() != width) return false;
  return std::all_of(cells.begin(), cells.end(), [&](std::string_view c) { return parse_cell(c, delimiter == ';').has_value(); });
}

// The index in `lines` of the first line of names followed by rows of numbers
// of its width.
std::optional<std::size_t> confirmed_header(const std::vector<NumberedLine>& lines, std::optional<char> delimiter) {
  std::vector<std::size_t> kept;  // lines that are not blank or comments
  for (std::size_t i = 0; i < lines.size(); ++i) {
    if (!is_skipped_line(lines[i].text)) kept.push_back(i);
  }
  for (std::size_t k = 0; k + 1 < kept.size(); ++k) {
    const std::string& candidate = lines[kept[k]].text;
    const char d = delimiter.value_or(detect_delimiter(candidate));
    if (!names_only(candidate, d)) continue;
    const std::size_t width = cells_of(candidate, d).size();
    const std::size_t last = std::min(kept.size(), k + 1 + kRowsChecked);
    bool rows_fit = true;
    for (std::size_t j = k + 1; j < last && rows_fit; ++j) rows_fit = numbers_only(lines[kept[j]].text, d, width);
    if (rows_fit) return kept[k];
  }
  return std::nullopt;
}

FoundHeader split_at(std::vector<NumberedLine>& lines, std::size_t header, std::optional<char> delimiter) {
  FoundHeader found;
  found.header = std::move(lines[header]);
  found.delimiter = delimiter.value_or(detect_delimiter(found.header.text));
  found.before.assign(std::make_move_iterator(lines.begin()), std::make_move_iterator(lines.begin() + header));
  found.after.assign(std::make_move_iterator(lines.begin() + header + 1), std::make_move_iterator(lines.end()));
  return found;
}

bool read_line(LineReader& lines, std::vector<NumberedLine>& into) {
  std::string_view line;
  if (!lines.next(line)) return false;
  into.push_back({lines.line_number(), std::string(line)});
  return true;
}

}  // namespace

bool is_skipped_line(std::string_view line) {
  line = trim(line);
  return line.empty() || line.front() == '#' || line.front() == '%';
}

std::optional<double> parse_cell(std::string_view cell, bool decimal_comma) {
  if (!decimal_comma || cell.find(',') == std::string_view::npos) return parse_number(cell);
  std::array<char, 64> buffer{};
  if (cell.size() >= buffer.size()) return std::nullopt;
  std::copy(cell.begin(), cell.end(), buffer.begin());
  std::replace(buffer.begin(), buffer.begin() + cell.size(), ',', '.');
  return parse_number(std::string_view(buffer.data(), cell.size()));
}

FoundHeader find_header(LineReader& lines, const std::string& path, std::optional<std::size_t> lines_before_header,
                        std::optional<char> delimiter) {
  std::vector<NumberedLine> read;
  if (lines_before_header) {
    for (std::size_t i = 0; i < *lines_before_header; ++i) {
      if (!read_line(lines, read)) {
        throw InputError(path + ": the file has " + std::to_string(i) + " lines, and " +
                         std::to_string(*lines_before_header) +
                         " are to be skipped before the header (--skip-rows, lines_before_header)");
      }
    }
    do {
      if (!read_line(lines, read)) {
        throw InputError(path + ": no header line after the " + std::to_string(*lines_before_header) +
                         " lines skipped (--skip-rows, lines_before_header)");
      }
    } while (is_skipped_line(read.back().text));
    return split_at(read, read.size() - 1, delimiter);
  }
  while (read.size() < kHeaderSearchLines && read_line(lines, read)) {
  }
  if (const auto header = confirmed_header(read, delimiter)) return split_at(read, *header, delimiter);
  const auto first = std::find_if(read.begin(), read.end(), [](const NumberedLine& l) { return !is_skipped_line(l.text); });
  if (first == read.end() && read.size() < kHeaderSearchLines) {
    throw InputError(path + ": the file is empty; a header line naming the columns is needed");
  }
  if (first == read.end()) {
    throw InputError(path + ": the first " + std::to_string(kHeaderSearchLines) +
                     " lines are blank or comments; a header line naming the columns is needed");
  }
  FoundHeader found = split_at(read, static_cast<std::size_t>(first - read.begin()), delimiter);
  found.searched = true;
  return found;
}

namespace {

std::string lowercase(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(), [](unsigned char c) { return std::tolower(c); });
  return out;
}

bool contains(const std::string& text, std::string_view part) { return text.find(part) != std::string::npos; }

// Seconds per unit of a sample interval, or Hz per unit of a rate; 0 for a
// unit that is neither.
double interval_unit(const std::string& unit) {
  if (unit.empty() || unit == "s" || unit == "sec") return 1.0;
  if (unit == "ms") return 1e-3;
  if (unit == "us" || unit == "\xC2\xB5s") return 1e-6;
  if (unit == "ns") return 1e-9;
  return 0.0;
}

double rate_unit(const std::string& unit) {
  for (const auto& [prefix, factor] : {std::pair{"", 1.0}, std::pair{"k", 1e3}, std::pair{"m", 1e6}, std::pair{"g", 1e9}}) {
    for (const char* base : {"hz", "s/s", "sa/s", "sps"}) {
      if (unit == std::string(prefix) + base) return factor;
    }
  }
  return unit.empty() ? 1.0 : 0.0;
}

// "key<sep>value [unit]" with sep one of : = tab , ;
std::optional<double> hinted_rate(std::string_view line) {
  const auto sep = line.find_first_of(":=\t,;");
  if (sep == std::string_view::npos) return std::nullopt;
  const std::string key = lowercase(trim(line.substr(0, sep)));
  std::string_view rest = trim(line.substr(sep + 1));
  if (line[sep] == ',') rest = rest.substr(0, rest.find(','));  // the first value of a list
  if (line[sep] == ';') rest = rest.substr(0, rest.find(';'));
  std::string value(rest);
  if (line[sep] != ',') std::replace(value.begin(), value.end(), ',', '.');
  double number = 0.0;
  const char* stop = read_double(value.data(), value.data() + value.size(), number);
  if (stop == nullptr || !(number > 0.0)) return std::nullopt;
  const std::string unit = lowercase(trim(std::string_view(stop, value.data() + value.size() - stop)));
  const bool interval = contains(key, "interval") || contains(key, "increment") || contains(key, "xinc") ||
                        contains(key, "sample period") || contains(key, "time step") || key == "dt";
  const bool rate = contains(key, "rate") || contains(key, "sampling frequency") || contains(key, "sample frequency") ||
                    key == "fs";
  if (interval && interval_unit(unit) > 0.0) return 1.0 / (number * interval_unit(unit));
  if (rate && rate_unit(unit) > 0.0) return number * rate_unit(unit);
  return std::nullopt;
}

}  // namespace

std::optional<RateHint> find_rate_hint(const std::vector<NumberedLine>& lines) {
  for (const auto& line : lines) {
    if (const auto rate = hinted_rate(trim(line.text))) return RateHint{line.number, std::string(trim(line.text)), *rate};
  }
  return std::nullopt;
}

}  // namespace loopaudit::detail
