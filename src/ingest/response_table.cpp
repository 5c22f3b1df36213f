#include "loopaudit/ingest/response_table.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <numbers>
#include <sstream>

#include "ingest/header_search.hpp"
#include "ingest/line_reader.hpp"
#include "ingest/number_text.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

enum class Role { kFrequency, kGain, kMagnitude, kPhase, kReal, kImag, kCoherence, kSigma };

struct Accepted {
  Role role;
  const char* what;
  std::vector<std::string> names;
};

const std::vector<Accepted>& accepted() {
  static const std::vector<Accepted> table{
      {Role::kFrequency, "frequency", {"freq_hz", "freq", "frequency", "f"}},
      {Role::kReal, "real part", {"re", "real"}},
      {Role::kImag, "imaginary part", {"im", "imag", "imaginary"}},
      {Role::kGain, "gain in dB", {"mag_db", "gain_db", "gain"}},
      {Role::kMagnitude, "magnitude (a ratio, or dB by its unit)", {"magnitude", "mag", "amplitude", "abs"}},
      {Role::kPhase, "phase", {"phase_deg", "phase", "angle", "arg"}},
      {Role::kCoherence, "coherence (optional)", {"coherence"}},
      {Role::kSigma, "sigma of the magnitude in dB (optional)", {"mag_sigma_db"}}};
  return table;
}

std::string lowercase(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(), [](unsigned char c) { return std::tolower(c); });
  return text;
}

struct Header {
  std::vector<std::string> cells;  // as written
  std::vector<std::string> names;  // lowercase, unit taken off
  std::vector<std::string> units;  // lowercase
  std::size_t line = 0;
  std::string path;
  bool trailing_delimiter = false;  // every line ends with the delimiter

  std::string listed() const {
    std::string text;
    for (const auto& c : cells) text += " '" + c + "'";
    return text;
  }
};

std::string accepted_text() {
  std::string text;
  for (const auto& a : accepted()) {
    text += std::string(text.empty() ? "" : "; ") + a.what + ":";
    for (const auto& n : a.names) text += " " + n;
  }
  return text + " (case aside, a unit in brackets or parentheses or after ' / ' allowed)";
}

std::optional<std::size_t> by_role(const Header& h, Role role) {
  const auto& a = *std::find_if(accepted().begin(), accepted().end(), [&](const Accepted& x) { return x.role == role; });
  for (std::size_t i = 0; i < h.names.size(); ++i) {
    if (std::find(a.names.begin(), a.names.end(), h.names[i]) != a.names.end()) return i;
  }
  return std::nullopt;
}

// The column the user named, matched with or without its unit.
std::optional<std::size_t> by_name(const Header& h, const std::string& wanted, const char* option) {
  if (wanted.empty()) return std::nullopt;
  const std::string w = lowercase(std::string(detail::trim(wanted)));
  for (std::size_t i = 0; i < h.cells.size(); ++i) {
    if (lowercase(h.cells[i]) == w || h.names[i] == w) return i;
  }
  throw ConfigError(h.path + ": line " + std::to_string(h.line) + ": no column '" + wanted + "' (" + option +
                    "); the header has" + h.listed());
}

std::optional<std::size_t> pick(const Header& h, const std::string& wanted, const char* option, Role role) {
  return wanted.empty() ? by_role(h, role) : by_name(h, wanted, option);
}

[[noreturn]] void bad_unit(const Header& h, std::size_t column, const char* allowed) {
  throw InputError(h.path + ": line " + std::to_string(h.line) + ", column " + std::to_string(column + 1) + " ('" +
                   h.cells[column] + "'): unit '" + h.units[column] + "' is not one of " + allowed);
}

double hz_per_unit(const Header& h, std::size_t column) {
  const std::string& u = h.units[column];
  if (u.empty() || u == "hz") return 1.0;
  if (u == "khz") return 1e3;
  if (u == "mhz") return 1e6;
  if (u == "ghz") return 1e9;
  if (u == "rad/s") return 0.5 / std::numbers::pi;
  bad_unit(h, column, "Hz, kHz, MHz, GHz, rad/s");
}

bool phase_in_radians(const Header& h, std::size_t column) {
  const std::string& u = h.units[column];
  // The degree sign in UTF-8 or in Latin-1, as Windows programs write it.
  if (u.empty() || u == "deg" || u == "degree" || u == "degrees" || u == "\xC2\xB0" || u == "\xB0") return false;
  if (u == "rad" || u == "radian" || u == "radians") return true;
  bad_unit(h, column, "deg, rad");
}

enum class Form { kCartesian, kDb, kRatio, kComplex };  // kComplex: one cell holds the value

struct Layout {
  std::size_t frequency = 0;
  double hz_per_unit = 1.0;
  Form form = Form::kCartesian;
  std::size_t first = 0;   // re, gain or magnitude
  std::size_t second = 0;  // im or phase
  bool radians = false;
  std::optional<std::size_t> coherence;
  std::optional<std::size_t> mag_sigma;
};

[[noreturn]] void missing(const Header& h, const std::string& what) {
  throw InputError(h.path + ": line " + std::to_string(h.line) + ": " + what + "; the header has" + h.listed() +
                   ". Accepted names: " + accepted_text() +
                   ". Or name the columns with --freq-column, --gain-column or --magnitude-column, --phase-column, "
                   "--real-column and --imag-column");
}

Layout polar_layout(const Header& h, const TableColumns& c, Layout layout) {
  const auto gain = pick(h, c.gain_db, "--gain-column", Role::kGain);
  const auto magnitude = pick(h, c.magnitude, "--magnitude-column", Role::kMagnitude);
  const auto phase = pick(h, c.phase, "--phase-column", Role::kPhase);
  if (!(gain || magnitude) || !phase) missing(h, "need a real and an imaginary column, or a gain (or magnitude) and a phase column");
  const bool use_gain = gain && (c.magnitude.empty() || !c.gain_db.empty());
  layout.first = use_gain ? *gain : *magnitude;
  const std::string& unit = h.units[layout.first];
  if (use_gain) {
    layout.form = (unit.empty() || unit == "db" || !c.gain_db.empty()) ? Form::kDb : Form::kRatio;
  } else {
    layout.form = (unit == "db" && c.magnitude.empty()) ? Form::kDb : Form::kRatio;
  }
  layout.second = *phase;
  layout.radians = phase_in_radians(h, *phase);
  return layout;
}

Layout layout_of(const Header& h, const TableColumns& c) {
  Layout layout;
  const auto frequency = pick(h, c.frequency, "--freq-column", Role::kFrequency);
  if (!frequency) missing(h, "no frequency column");
  layout.frequency = *frequency;
  layout.hz_per_unit = hz_per_unit(h, *frequency);
  layout.coherence = by_role(h, Role::kCoherence);
  layout.mag_sigma = by_role(h, Role::kSigma);
  const bool polar_named = !c.gain_db.empty() || !c.magnitude.empty() || !c.phase.empty();
  const auto re = polar_named ? std::nullopt : pick(h, c.real, "--real-column", Role::kReal);
  const auto im = polar_named ? std::nullopt : pick(h, c.imag, "--imag-column", Role::kImag);
  if (re && im) {
    layout.first = *re;
    layout.second = *im;
    return layout;
  }
  return polar_layout(h, c, layout);
}

// A circuit simulator's AC export: a frequency column and a column whose
// cells each hold one complex value, "(20.5dB,-90.3°)" or "(re,im)".
// nullopt when the first row has no such cell.
std::optional<Layout> complex_layout(const Header& h, const TableColumns& c, std::string_view first_row, char delimiter) {
  std::vector<std::string> cells = detail::split_names(first_row, delimiter, h.cells.size());
  std::vector<std::size_t> complex;
  for (std::size_t i = 0; i < cells.size() && i < h.cells.size(); ++i) {
    if (detail::parse_complex_cell(cells[i])) complex.push_back(i);
  }
  if (complex.empty()) return std::nullopt;
  Layout layout;
  const auto frequency = pick(h, c.frequency, "--freq-column", Role::kFrequency);
  if (!frequency) missing(h, "no frequency column");
  layout.frequency = *frequency;
  layout.hz_per_unit = hz_per_unit(h, *frequency);
  layout.form = Form::kComplex;
  if (!c.gain_db.empty()) {
    layout.first = *by_name(h, c.gain_db, "--gain-column");
    return layout;
  }
  if (complex.size() > 1) {
    std::string names;
    for (const std::size_t i : complex) names += " '" + h.cells[i] + "'";
    throw InputError(h.path + ": line " + std::to_string(h.line) + ": " + std::to_string(complex.size()) +
                     " columns hold complex values ('(gain dB,phase °)' or '(re,im)'):" + names +
                     "; name the loop gain's column with --gain-column NAME, or export only that trace");
  }
  layout.first = complex.front();
  return layout;
}

// Splits rows and parses the cells the table's layout uses; other columns
// may hold anything.
class RowParser {
 public:
  RowParser(const Header& header, char delimiter) : header_(header), delimiter_(delimiter) {}

  void split(std::string_view line, std::size_t line_number) {
    cells_.clear();
    line_number_ = line_number;
    // Counted before splitting: a row of millions of cells takes no storage.
    const std::size_t expected = header_.cells.size() + (header_.trailing_delimiter ? 1 : 0);
    const auto counted = static_cast<std::size_t>(std::count(line.begin(), line.end(), delimiter_)) + 1;
    if (counted > expected) fail_width(counted);
    std::size_t start = 0;
    while (start <= line.size()) {
      const auto stop = std::min(line.find(delimiter_, start), line.size());
      cells_.push_back(line.substr(start, stop - start));
      start = stop + 1;
    }
    if (header_.trailing_delimiter) drop_last_cell();
    if (cells_.size() != header_.cells.size()) fail_width(cells_.size());
  }

  [[noreturn]] void fail_width(std::size_t cells) const {
    std::ostringstream message;
    message << header_.path << ": line " << line_number_ << ": " << cells << " cells where the header (line "
            << header_.line << ") names " << header_.cells.size();
    throw InputError(message.str());
  }

  double number(std::size_t column) const {
    const auto value = detail::parse_cell(cells_[column], delimiter_ == ';');
    if (value && std::isfinite(*value)) return *value;
    std::ostringstream message;
    message << header_.path << ": line " << line_number_ << ", column " << column + 1 << " ('" << header_.cells[column]
            << "'): not a finite number: '" << detail::trim(cells_[column]) << "'";
    throw InputError(message.str());
  }

  bool blank(std::size_t column) const { return detail::trim(cells_[column]).empty(); }

  std::complex<double> complex_value(std::size_t column) const {
    if (const auto value = detail::parse_complex_cell(cells_[column]); value && std::isfinite(std::abs(*value))) return *value;
    std::ostringstream message;
    message << header_.path << ": line " << line_number_ << ", column " << column + 1 << " ('" << header_.cells[column]
            << "'): not one complex value: '" << detail::trim(cells_[column])
            << "'; the column holds cells such as '(20.5dB,-90.3\xC2\xB0)' (gain in dB, phase in degrees) or '(re,im)'";
    throw InputError(message.str());
  }

  // The header ends with a delimiter: so does a row, its last cell empty.
  void drop_last_cell() {
    if (cells_.size() != header_.cells.size() + 1) return;  // the count is refused next
    if (!detail::trim(cells_.back()).empty()) {
      std::ostringstream message;
      message << header_.path << ": line " << line_number_ << ", column " << cells_.size() << ": '"
              << detail::trim(cells_.back()) << "' under the header's empty last cell (line " << header_.line
              << " ends with a delimiter): name that column in the header, or leave the cell empty";
      throw InputError(message.str());
    }
    cells_.pop_back();
  }
  std::size_t line_number() const { return line_number_; }

 private:
  const Header& header_;
  char delimiter_;
  std::vector<std::string_view> cells_;
  std::size_t line_number_ = 0;
};

struct Row {
  double frequency_hz;
  std::complex<double> value;
  std::optional<double> coherence;
  double relative_sigma;
  std::size_t line;
};

Row parse_row(const RowParser& row, const Layout& layout, const Header& h) {
  const double f = row.number(layout.frequency) * layout.hz_per_unit;
  if (!(f > 0.0)) {
    std::ostringstream message;
    message << h.path << ": line " << row.line_number() << ": frequency " << f << " Hz; frequencies must be positive";
    throw InputError(message.str());
  }
  if (layout.form == Form::kComplex) return Row{f, row.complex_value(layout.first), std::nullopt, 0.0, row.line_number()};
  const double first = row.number(layout.first);
  const double second = row.number(layout.second);
  const double angle = layout.radians ? second : rad_from_deg(second);
  if (layout.form == Form::kRatio && first < 0.0) {
    std::ostringstream message;
    message << h.path << ": line " << row.line_number() << ", column " << layout.first + 1 << " ('"
            << h.cells[layout.first] << "'): a magnitude ratio cannot be negative (" << first
            << "); if the column holds dB, write its unit in the header ('" << h.cells[layout.first]
            << " (dB)') or name it with --gain-column";
    throw InputError(message.str());
  }
  Row r{f, {first, second}, std::nullopt, 0.0, row.line_number()};
  if (layout.form == Form::kDb) r.value = std::polar(ratio_from_db(first), angle);
  if (layout.form == Form::kRatio) r.value = std::polar(first, angle);
  if (layout.coherence && !row.blank(*layout.coherence)) r.coherence = row.number(*layout.coherence);
  if (layout.mag_sigma && !row.blank(*layout.mag_sigma)) r.relative_sigma = row.number(*layout.mag_sigma) / db_from_nepers(1.0);
  return r;
}

// Sorts the rows by frequency (with a note when they were not in order) and
// refuses repeated frequencies.
void put_in_order(std::vector<Row>& rows, const std::string& path, Diagnostics& findings) {
  const auto by_frequency = [](const Row& a, const Row& b) { return a.frequency_hz < b.frequency_hz; };
  if (!std::is_sorted(rows.begin(), rows.end(), by_frequency)) {
    const bool descending = std::is_sorted(rows.rbegin(), rows.rend(), by_frequency);
    std::stable_sort(rows.begin(), rows.end(), by_frequency);
    findings.push_back(make_note("table.sorted", descending ? "the rows run from high to low frequency; they are used in increasing order"
                                                            : "the rows are not in frequency order; they are used sorted by frequency"));
  }
  std::ostringstream repeated;
  std::size_t count = 0;
  for (std::size_t k = 1; k < rows.size(); ++k) {
    if (rows[k].frequency_hz != rows[k - 1].frequency_hz) continue;
    if (++count <= 5) repeated << (count > 1 ? "; " : " ") << rows[k].frequency_hz << " Hz on lines " << rows[k - 1].line << " and " << rows[k].line;
  }
  if (count == 0) return;
  throw InputError(path + ": " + std::to_string(count) + " repeated frequencies:" + repeated.str() +
                   (count > 5 ? " ..." : "") + "; each frequency must appear once (join the sweeps, or keep one of each)");
}

}  // namespace

ResponseTable read_response_table(const std::string& path, const TableColumns& columns) {
  detail::LineReader lines(path);
  detail::FoundHeader found = detail::find_header(lines, path, std::nullopt, std::nullopt);
  Header header{{}, {}, {}, found.header.number, path, found.trailing_delimiter};
  for (const std::string& cell : detail::split_names(found.header.text, found.delimiter)) {
    auto [name, unit] = detail::split_unit(cell);
    if (name.size() > 1 && name.back() == '.') name.pop_back();  // "Freq."
    header.cells.push_back(cell);
    header.names.push_back(lowercase(name));
    header.units.push_back(lowercase(unit));
  }
  if (found.units) {  // a units row: for the columns whose name gives none
    const auto units = detail::split_names(found.units->text, found.delimiter);
    for (std::size_t i = 0; i < units.size() && i < header.units.size(); ++i) {
      if (header.units[i].empty()) header.units[i] = lowercase(detail::unit_of_cell(units[i]));
    }
  }
  const auto first_row = std::find_if(found.after.begin(), found.after.end(),
                                      [](const detail::NumberedLine& l) {
                                        return !detail::is_skipped_line(l.text) && !detail::trim(l.text).starts_with("Step Information");
                                      });
  const auto complex = first_row == found.after.end() ? std::nullopt
                                                      : complex_layout(header, columns, first_row->text, found.delimiter);
  const Layout layout = complex ? *complex : layout_of(header, columns);
  RowParser parser(header, found.delimiter);
  std::vector<Row> rows;
  const auto take = [&](std::string_view line, std::size_t number) {
    if (detail::is_skipped_line(line)) return;
    if (layout.form == Form::kComplex && detail::trim(line).starts_with("Step Information")) {
      throw InputError(path + ": line " + std::to_string(number) + ": '" + std::string(detail::trim(line)) +
                       "' starts another run of a stepped sweep; export one run");
    }
    parser.split(line, number);
    rows.push_back(parse_row(parser, layout, header));
  };
  for (const auto& line : found.after) take(line.text, line.number);
  std::string_view line;
  while (lines.next(line)) take(line, lines.line_number());
  if (rows.empty()) throw InputError(path + ": no rows of data after the header (line " + std::to_string(header.line) + ")");
  ResponseTable table;
  put_in_order(rows, path, table.findings);
  const bool coherence_known = std::all_of(rows.begin(), rows.end(), [](const Row& r) { return r.coherence.has_value(); });
  Response& response = table.response;
  for (const Row& r : rows) {
    response.frequency_hz.push_back(r.frequency_hz);
    response.value.push_back(r.value);
    if (coherence_known) response.coherence.push_back(*r.coherence);
    response.relative_sigma.push_back(r.relative_sigma);
  }
  return table;
}

}  // namespace loopaudit
