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

// The cells of a line, at most kMaxColumns + 2 of them: enough to compare a
// candidate header with the rows under it, and to tell a line too wide.
std::vector<std::string_view> cells_of(std::string_view line, char delimiter) {
  std::vector<std::string_view> cells;
  std::size_t start = 0;
  for (;;) {
    if (cells.size() > kMaxColumns + 1) return cells;
    const auto stop = line.find(delimiter, start);
    cells.push_back(line.substr(start, stop == std::string_view::npos ? std::string_view::npos : stop - start));
    if (stop == std::string_view::npos) return cells;
    start = stop + 1;
  }
}

// A header candidate: its width, and whether its last cell is empty (a
// delimiter at the end of the line).
struct Shape {
  std::size_t width = 0;
  bool trailing = false;
};

bool blank(std::string_view cell) { return trim(cell).empty(); }

std::optional<Shape> names_shape(std::string_view line, char delimiter) {
  const auto cells = cells_of(line, delimiter);
  const bool trailing = cells.size() > 1 && blank(cells.back());
  for (std::size_t i = 0; i + (trailing ? 1 : 0) < cells.size(); ++i) {
    if (blank(cells[i]) || parse_cell(cells[i], delimiter == ';')) return std::nullopt;
  }
  return Shape{cells.size(), trailing};
}

bool numbers_only(std::string_view line, char delimiter, Shape shape) {
  const auto cells = cells_of(line, delimiter);
  if (cells.size() != shape.width) return false;
  for (std::size_t i = 0; i < cells.size(); ++i) {
    const bool last = i + 1 == cells.size();
    if (shape.trailing && last ? !blank(cells[i]) : !parse_cell(cells[i], delimiter == ';')) return false;
  }
  return true;
}

bool units_only(std::string_view line, char delimiter, std::size_t width) {
  const auto cells = cells_of(line, delimiter);
  if (cells.size() != width || std::all_of(cells.begin(), cells.end(), blank)) return false;
  return std::all_of(cells.begin(), cells.end(), [](std::string_view c) { return blank(c) || is_unit_cell(c); });
}

struct Confirmed {
  std::size_t header = 0;
  std::optional<std::size_t> units;
};

// The first line of names followed by rows of numbers of its width, or by a
// line of units and then such rows; indexes into `lines`.
std::optional<Confirmed> confirmed_header(const std::vector<NumberedLine>& lines, std::optional<char> delimiter) {
  std::vector<std::size_t> kept;  // lines that are not blank or comments
  for (std::size_t i = 0; i < lines.size(); ++i) {
    if (!is_skipped_line(lines[i].text)) kept.push_back(i);
  }
  const auto rows_fit = [&](std::size_t from, char d, Shape shape) {
    if (from >= kept.size()) return false;
    const std::size_t last = std::min(kept.size(), from + kRowsChecked);
    for (std::size_t j = from; j < last; ++j) {
      if (!numbers_only(lines[kept[j]].text, d, shape)) return false;
    }
    return true;
  };
  for (std::size_t k = 0; k + 1 < kept.size(); ++k) {
    const std::string& candidate = lines[kept[k]].text;
    const char d = delimiter.value_or(detect_delimiter(candidate));
    const auto shape = names_shape(candidate, d);
    if (!shape) continue;
    if (rows_fit(k + 1, d, *shape)) return Confirmed{kept[k], std::nullopt};
    if (units_only(lines[kept[k + 1]].text, d, shape->width) && rows_fit(k + 2, d, *shape)) {
      return Confirmed{kept[k], kept[k + 1]};
    }
  }
  return std::nullopt;
}

// Takes a delimiter off the end of the line, with the blanks after it.
std::string without_last_cell(const std::string& line, char delimiter) {
  return line.substr(0, line.rfind(delimiter));
}

// Whether the line ends with a delimiter and blanks (an empty last cell),
// and its number of columns without that cell; counted, not split.
std::pair<std::size_t, bool> columns_of(std::string_view line, char delimiter) {
  const auto delimiters = static_cast<std::size_t>(std::count(line.begin(), line.end(), delimiter));
  const bool trailing = delimiters > 0 && blank(line.substr(line.rfind(delimiter) + 1));
  return {delimiters + 1 - (trailing ? 1 : 0), trailing};
}

FoundHeader split_at(std::vector<NumberedLine>& lines, std::size_t header, std::optional<char> delimiter,
                     const std::string& path, std::optional<std::size_t> units = std::nullopt) {
  FoundHeader found;
  found.header = std::move(lines[header]);
  found.delimiter = delimiter.value_or(detect_delimiter(found.header.text));
  const auto [columns, trailing] = columns_of(found.header.text, found.delimiter);
  if (columns > kMaxColumns) {
    throw InputError(
        path + ": line " + std::to_string(found.header.number) + ": the header has " + std::to_string(columns) +
        " columns; a text recording or a frequency-response table may have at most " + std::to_string(kMaxColumns));
  }
  found.trailing_delimiter = trailing;
  if (found.trailing_delimiter) found.header.text = without_last_cell(found.header.text, found.delimiter);
  if (units) {
    found.units = std::move(lines[*units]);
    if (found.trailing_delimiter) found.units->text = without_last_cell(found.units->text, found.delimiter);
  }
  const std::size_t rows = units.value_or(header) + 1;
  found.before.assign(std::make_move_iterator(lines.begin()), std::make_move_iterator(lines.begin() + header));
  found.after.assign(std::make_move_iterator(lines.begin() + rows), std::make_move_iterator(lines.end()));
  return found;
}

bool read_line(LineReader& lines, std::vector<NumberedLine>& into) {
  std::string_view line;
  if (!lines.next(line)) return false;
  into.push_back({lines.line_number(), std::string(line)});
  return true;
}

// The header is the last line read; a line of units may follow it.
FoundHeader split_at_given(LineReader& lines, std::vector<NumberedLine>& read, std::optional<char> delimiter,
                           const std::string& path) {
  const std::size_t header = read.size() - 1;
  const char d = delimiter.value_or(detect_delimiter(read[header].text));
  const std::size_t width = cells_of(read[header].text, d).size();
  while (read_line(lines, read) && is_skipped_line(read.back().text)) {
  }
  const bool units = read.size() > header + 1 && units_only(read.back().text, d, width);
  return split_at(read, header, delimiter, path, units ? std::optional(read.size() - 1) : std::nullopt);
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
    return split_at_given(lines, read, delimiter, path);
  }
  bool at_end = false;
  for (std::size_t bytes = 0; read.size() < kHeaderSearchLines && bytes < kHeaderSearchBytes;) {
    if (!read_line(lines, read)) {
      at_end = true;
      break;
    }
    bytes += read.back().text.size();
  }
  if (const auto header = confirmed_header(read, delimiter)) {
    return split_at(read, header->header, delimiter, path, header->units);
  }
  const auto first = std::find_if(read.begin(), read.end(), [](const NumberedLine& l) { return !is_skipped_line(l.text); });
  if (first == read.end() && at_end) {
    throw InputError(path + ": the file is empty; a header line naming the columns is needed");
  }
  if (first == read.end()) {
    throw InputError(path + ": the first " + std::to_string(read.size()) +
                     " lines are blank or comments; a header line naming the columns is needed");
  }
  FoundHeader found = split_at(read, static_cast<std::size_t>(first - read.begin()), delimiter, path);
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

namespace loopaudit::detail {

std::string unit_of_cell(std::string_view cell) {
  cell = trim(cell);
  if (cell.size() >= 2 && ((cell.front() == '(' && cell.back() == ')') || (cell.front() == '[' && cell.back() == ']'))) {
    cell = trim(cell.substr(1, cell.size() - 2));
  }
  return std::string(cell);
}

bool is_unit_cell(std::string_view cell) {
  static constexpr std::string_view kBases[] = {
      "s",  "sec", "second", "seconds", "v",   "volt",   "volts",   "a",        "amp",  "amps", "ampere", "amperes",
      "hz", "db",  "dbv",    "dbm",     "deg", "degree", "degrees", "\xC2\xB0", "\xB0", "rad",  "w",      "watt",
      "watts", "ohm", "ohms", "\xCE\xA9", "%", "v/v"};
  const std::string unit = lowercase(unit_of_cell(cell));
  const auto known = [&](std::string_view u) { return std::find(std::begin(kBases), std::end(kBases), u) != std::end(kBases); };
  if (known(unit)) return true;
  for (std::string_view prefix : {"m", "u", "\xC2\xB5", "n", "p", "k", "g"}) {
    if (unit.size() > prefix.size() && unit.compare(0, prefix.size(), prefix) == 0 && known(std::string_view(unit).substr(prefix.size()))) {
      return true;
    }
  }
  return false;
}

}  // namespace loopaudit::detail
