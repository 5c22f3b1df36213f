#include "loopaudit/ingest/response_table.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <sstream>

#include "ingest/line_reader.hpp"
#include "ingest/number_text.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

using Columns = std::map<std::string, std::size_t>;

std::optional<std::size_t> column(const Columns& columns, const char* name) {
  const auto it = columns.find(name);
  return it == columns.end() ? std::nullopt : std::optional(it->second);
}

struct Layout {
  std::size_t frequency;
  std::size_t first;   // re or mag_db
  std::size_t second;  // im or phase_deg
  bool polar;
  std::optional<std::size_t> coherence;
  std::optional<std::size_t> mag_sigma;
  std::size_t width;
};

Layout layout_of(const std::vector<std::string>& names, const std::string& path) {
  Columns columns;
  for (std::size_t i = 0; i < names.size(); ++i) columns.emplace(names[i], i);
  const auto frequency = column(columns, "freq_hz");
  const auto re = column(columns, "re");
  const auto im = column(columns, "im");
  const auto mag = column(columns, "mag_db");
  const auto phase = column(columns, "phase_deg");
  if (!frequency) throw InputError(path + ": line 1: no 'freq_hz' column");
  const bool cartesian = re && im;
  if (!cartesian && !(mag && phase)) throw InputError(path + ": line 1: need columns 're' and 'im', or 'mag_db' and 'phase_deg'");
  return {*frequency, cartesian ? *re : *mag, cartesian ? *im : *phase, !cartesian,
          column(columns, "coherence"), column(columns, "mag_sigma_db"), names.size()};
}

// Splits rows and parses the cells the table's layout uses; other columns
// may hold anything.
class RowParser {
 public:
  RowParser(std::string path, const std::vector<std::string>& names, char delimiter)
      : path_(std::move(path)), names_(names), delimiter_(delimiter) {}

  void split(std::string_view line, std::size_t line_number) {
    cells_.clear();
    line_number_ = line_number;
    std::size_t start = 0;
    while (start <= line.size()) {
      const auto stop = std::min(line.find(delimiter_, start), line.size());
      cells_.push_back(line.substr(start, stop - start));
      start = stop + 1;
    }
    if (cells_.size() != names_.size()) {
      std::ostringstream message;
      message << path_ << ": line " << line_number << ": " << cells_.size() << " cells where the header names "
              << names_.size();
      throw InputError(message.str());
    }
  }

  double number(std::size_t column) const {
    const auto value = detail::parse_number(cells_[column]);
    if (value && std::isfinite(*value)) return *value;
    std::ostringstream message;
    message << path_ << ": line " << line_number_ << ", column " << column + 1 << " ('" << names_[column]
            << "'): not a finite number: '" << detail::trim(cells_[column]) << "'";
    throw InputError(message.str());
  }

  bool blank(std::size_t column) const { return detail::trim(cells_[column]).empty(); }

 private:
  std::string path_;
  const std::vector<std::string>& names_;
  char delimiter_;
  std::vector<std::string_view> cells_;
  std::size_t line_number_ = 0;
};

}  // namespace

Response read_response_table(const std::string& path) {
  detail::LineReader lines(path);
  std::string_view line;
  do {
    if (!lines.next(line)) throw InputError(path + ": the file is empty; a header line naming the columns is needed");
  } while (detail::trim(line).empty());
  const char delimiter = detail::detect_delimiter(line);
  const std::vector<std::string> names = detail::split_names(line, delimiter);
  const Layout layout = layout_of(names, path);
  RowParser row(path, names, delimiter);
  bool coherence_known = layout.coherence.has_value();

  Response response;
  while (lines.next(line)) {
    if (detail::trim(line).empty()) continue;
    row.split(line, lines.line_number());
    const double f = row.number(layout.frequency);
    if (!(f > 0.0) || (response.size() > 0 && !(f > response.frequency_hz.back()))) {
      std::ostringstream message;
      message << path << ": line " << lines.line_number() << ": frequency " << f
              << " Hz; frequencies must be positive and increasing";
      throw InputError(message.str());
    }
    response.frequency_hz.push_back(f);
    const double first = row.number(layout.first);
    const double second = row.number(layout.second);
    response.value.push_back(layout.polar ? std::polar(ratio_from_db(first), rad_from_deg(second))
                                          : std::complex<double>(first, second));
    coherence_known = coherence_known && !row.blank(*layout.coherence);
    if (coherence_known) response.coherence.push_back(row.number(*layout.coherence));
    const bool sigma_known = layout.mag_sigma && !row.blank(*layout.mag_sigma);
    response.relative_sigma.push_back(sigma_known ? row.number(*layout.mag_sigma) / db_from_nepers(1.0) : 0.0);
  }
  if (!coherence_known) response.coherence.clear();
  if (response.size() == 0) throw InputError(path + ": no rows of data after the header");
  return response;
}

}  // namespace loopaudit
