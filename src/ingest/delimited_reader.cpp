#include <algorithm>
#include <array>
#include <cctype>
#include <charconv>
#include <cmath>
#include <initializer_list>
#include <iomanip>
#include <sstream>

#include "ingest/channel_setup.hpp"
#include "ingest/header_search.hpp"
#include "ingest/line_reader.hpp"
#include "ingest/number_text.hpp"
#include "ingest/stamp_check.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"
#include "loopaudit/ingest/delimited.hpp"

namespace loopaudit {
namespace {

using detail::LineReader;
using detail::detect_delimiter;
using detail::parse_number;
using detail::split_names;
using detail::split_unit;
using detail::trim;

// Blank lines and comments ('#' or '%' first), before the header or among the rows.
bool is_skipped(std::string_view line) { return detail::is_skipped_line(line); }

std::string lowercase(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(), [](unsigned char c) { return std::tolower(c); });
  return text;
}

// Seconds per unit of time; 0 for a unit that is not a time.
double seconds_per_unit(const std::string& written) {
  const std::string unit = lowercase(written);
  const auto is = [&](std::initializer_list<std::string_view> names) {
    return std::find(names.begin(), names.end(), unit) != names.end();
  };
  if (is({"", "s", "sec", "second", "seconds"})) return 1.0;
  if (is({"ms", "msec"})) return 1e-3;
  if (is({"us", "\xC2\xB5s", "usec"})) return 1e-6;
  if (is({"ns", "nsec"})) return 1e-9;
  return 0.0;
}

// Seconds per unit of a time column; throws for a unit that is not a time.
double seconds_per(const std::string& written, const std::string& path) {
  if (const double factor = seconds_per_unit(written); factor > 0.0) return factor;
  throw InputError(path + ": the time column's unit '" + written + "' is not one of s (sec, second), ms, us, ns");
}

bool is_time_unit(const std::string& unit) { return !unit.empty() && seconds_per_unit(unit) > 0.0; }

std::optional<std::size_t> find_time_column(const std::vector<std::string>& names, const std::vector<std::string>& units,
                                            const std::string& wanted, const std::string& path) {
  if (!wanted.empty()) {
    const auto it = std::find(names.begin(), names.end(), wanted);
    if (it == names.end()) {
      std::string message = path + ": no column named '" + wanted + "' for the time (--time-column, time_column); the columns:";
      for (const auto& name : names) message += " '" + name + "'";
      throw ConfigError(message);
    }
    return static_cast<std::size_t>(it - names.begin());
  }
  for (std::size_t i = 0; i < names.size(); ++i) {
    const std::string name = lowercase(names[i]);
    if (name == "t" || name == "time" || name == "time_s") return i;
  }
  // No column named as time: the first whose unit is one ("X" over "Second").
  const auto timed = std::find_if(units.begin(), units.end(), is_time_unit);
  if (timed != units.end()) return static_cast<std::size_t>(timed - units.begin());
  return std::nullopt;
}

class DelimitedReader final : public SampleSource {
 public:
  DelimitedReader(const std::string& path, const DelimitedOptions& options)
      : path_(path), options_(options), lines_(path), stamps_(path) {
    read_header();
  }

  const std::vector<std::string>& channel_names() const override { return channel_names_; }
  std::vector<std::string> channel_units() const override { return channel_units_; }
  const std::string& origin() const override { return path_; }
  bool next(SampleBlock& block) override;
  SourceSummary summary() const override { return summary_; }

 private:
  void read_header();
  void check_names();
  void warn_unused_names();
  void find_time();
  bool next_line(std::string_view& line);
  void parse_row(std::string_view line, SampleBlock& block);
  void check_last_cell(std::string_view line, std::size_t start) const;
  std::size_t read_cell(std::string_view line, std::size_t start, std::string_view& cell,
                        std::optional<double>& value) const;
  [[noreturn]] void fail_cell(std::size_t column, std::string_view cell, const char* what) const;
  void finish();
  // Which line was taken as the header, and how to choose another.
  std::string header_hint() const {
    return " (the header was taken from line " + std::to_string(header_line_) +
           "; if that is not the header, give --skip-rows N to skip the N lines above it)";
  }
  void report_jitter();

  std::string path_;
  DelimitedOptions options_;
  LineReader lines_;
  std::vector<detail::NumberedLine> above_header_;  // metadata lines, for a hint at the sample rate
  std::vector<detail::NumberedLine> pending_;       // rows read while finding the header
  std::size_t next_pending_ = 0;
  std::size_t line_number_ = 0;                     // of the row being parsed
  bool header_guessed_ = false;                     // no header confirmed by the rows under it
  std::size_t header_line_ = 0;
  detail::StampChecker stamps_;
  char delimiter_ = ',';
  bool decimal_comma_ = false;
  bool trailing_delimiter_ = false;  // every line ends with the delimiter
  double seconds_per_stamp_ = 1.0;
  std::vector<std::string> column_names_;
  std::vector<std::string> column_units_;
  std::vector<std::string> channel_names_;
  std::vector<std::string> channel_units_;
  std::optional<std::size_t> time_column_;
  std::size_t rows_ = 0;
  bool finished_ = false;
  SourceSummary summary_;
};

void DelimitedReader::read_header() {
  detail::FoundHeader found = detail::find_header(lines_, path_, options_.lines_before_header, options_.delimiter);
  line_number_ = found.header.number;
  header_line_ = found.header.number;
  delimiter_ = found.delimiter;
  decimal_comma_ = delimiter_ == ';';
  above_header_ = std::move(found.before);
  pending_ = std::move(found.after);
  header_guessed_ = found.searched;
  trailing_delimiter_ = found.trailing_delimiter;
  for (const std::string& column : split_names(found.header.text, delimiter_)) {
    auto [name, unit] = split_unit(column);
    column_names_.push_back(std::move(name));
    column_units_.push_back(std::move(unit));
  }
  if (found.units) {  // a units row: for the columns whose name gives none
    const auto units = split_names(found.units->text, delimiter_);
    for (std::size_t i = 0; i < units.size() && i < column_units_.size(); ++i) {
      if (column_units_[i].empty()) column_units_[i] = detail::unit_of_cell(units[i]);
    }
  }
  check_names();
  find_time();
  for (std::size_t i = 0; i < column_names_.size(); ++i) {
    if (i == time_column_) continue;
    channel_names_.push_back(column_names_[i]);
    channel_units_.push_back(column_units_[i]);
  }
  if (channel_names_.empty()) throw InputError(path_ + ": the header names no channel besides the time");
  warn_unused_names();
}

void DelimitedReader::warn_unused_names() {
  if (options_.unused_channel_names.empty()) return;
  std::ostringstream message;
  message << "--channels (channels under [input]) names the channels of files without names; line " << header_line_
          << " names them here:";
  for (const auto& name : channel_names_) message << " '" << name << "'";
  message << ". Pick channels with --z, --x and --y (or [roles]), or rename the columns in the header";
  summary_.findings.push_back(make_warning("ingest.channels-unused", message.str()));
}

void DelimitedReader::check_names() {
  for (std::size_t i = 0; i < column_names_.size(); ++i) {
    const std::string& name = column_names_[i];
    if (name.empty() || parse_number(name)) {
      std::ostringstream message;
      message << path_ << ": line " << line_number_ << ", column " << i + 1
              << ": the header must name every column, found '" << name << "'";
      if (header_guessed_) {
        message << "; no line in the first " << detail::kHeaderSearchLines
                << " has names over rows of numbers: add a header line naming the columns, or, if it lies below N "
                   "lines of metadata, give --skip-rows N";
      }
      throw InputError(message.str());
    }
    // Two columns of one name: a role could only ever reach the first.
    for (std::size_t j = 0; j < i; ++j) {
      if (column_names_[j] != name) continue;
      std::ostringstream message;
      message << path_ << ": line " << line_number_ << ": columns " << j + 1 << " and " << i + 1 << " are both named '"
              << name << "'; rename one in the header so that each channel has its own name";
      throw InputError(message.str());
    }
  }
}

void DelimitedReader::find_time() {
  time_column_ = find_time_column(column_names_, column_units_, options_.time_column, path_);
  if (time_column_) seconds_per_stamp_ = seconds_per(column_units_[*time_column_], path_);
  if (time_column_ || options_.sample_rate_hz) return;
  std::ostringstream message;
  message << path_ << ": no time column (t, time or time_s) among the columns";
  for (const auto& name : column_names_) message << " '" << name << "'";
  message << ", and no sample rate given: give --sample-rate HZ (sample_rate_hz under [input] in a settings file),"
             " or name the time column with --time-column NAME";
  if (const auto hint = detail::find_rate_hint(above_header_)) {
    message << "; line " << hint->line_number << " ('" << hint->text << "') suggests --sample-rate "
            << std::setprecision(10) << hint->sample_rate_hz;
  }
  message << header_hint();
  throw ConfigError(message.str());
}

bool DelimitedReader::next_line(std::string_view& line) {
  if (next_pending_ < pending_.size()) {
    line_number_ = pending_[next_pending_].number;
    line = pending_[next_pending_++].text;
    return true;
  }
  if (!lines_.next(line)) return false;
  line_number_ = lines_.line_number();
  return true;
}

void DelimitedReader::fail_cell(std::size_t column, std::string_view cell, const char* what) const {
  std::ostringstream message;
  message << path_ << ": line " << line_number_ << ", column " << column + 1 << " ('"
          << column_names_.at(std::min(column, column_names_.size() - 1)) << "'): " << what << " '" << trim(cell)
          << "'";
  // Text where a number belongs, near the header: perhaps the wrong line was taken as the header.
  if (std::string_view(what) == "not a number:" && line_number_ <= header_line_ + detail::kHeaderSearchLines) {
    message << header_hint();
  }
  throw InputError(message.str());
}

// The cell that begins at `start` and its value; returns where the cell ends
// (its delimiter, or the end of the line). The fast path reads the number
// straight off the line; blanks, quotes, a '+' or a decimal comma take the
// general path.
std::size_t DelimitedReader::read_cell(std::string_view line, std::size_t start, std::string_view& cell,
                                       std::optional<double>& value) const {
  const char* first = line.data() + start;
  const char* end = line.data() + line.size();
  double number = 0.0;
  const char* stop = decimal_comma_ ? nullptr : detail::read_double(first, end, number);
  if (stop != nullptr && (stop == end || *stop == delimiter_)) {
    cell = std::string_view(first, static_cast<std::size_t>(stop - first));
    value = number;
    return static_cast<std::size_t>(stop - line.data());
  }
  const auto cell_end = std::min(line.find(delimiter_, start), line.size());
  cell = line.substr(start, cell_end - start);
  value = detail::parse_cell(cell, decimal_comma_);
  return cell_end;
}

void DelimitedReader::parse_row(std::string_view line, SampleBlock& block) {
  std::size_t start = 0;
  std::size_t channel = 0;
  for (std::size_t column = 0; column < column_names_.size(); ++column) {
    if (start > line.size()) {
      std::ostringstream message;
      message << path_ << ": line " << line_number_ << ": " << column << " cells where the header names "
              << column_names_.size() << header_hint();
      throw InputError(message.str());
    }
    std::string_view cell;
    std::optional<double> value;
    start = read_cell(line, start, cell, value) + 1;
    if (!value) fail_cell(column, cell, "not a number:");
    if (!std::isfinite(*value)) fail_cell(column, cell, "not a finite number:");
    if (column == time_column_) {
      stamps_.add(*value * seconds_per_stamp_, detail::printed_resolution(cell) * seconds_per_stamp_,
                  line_number_);
    } else {
      block.channels[channel++].push_back(*value);
    }
  }
  if (trailing_delimiter_) return check_last_cell(line, start);
  if (start <= line.size()) {
    std::ostringstream message;
    message << path_ << ": line " << line_number_ << ": more cells than the " << column_names_.size()
            << " columns the header names" << header_hint();
    throw InputError(message.str());
  }
}

// The header ends with a delimiter, so each row must too: its last cell,
// from `start`, is empty.
void DelimitedReader::check_last_cell(std::string_view line, std::size_t start) const {
  const std::size_t columns = column_names_.size();
  std::ostringstream message;
  message << path_ << ": line " << line_number_;
  if (start > line.size()) {
    message << ": " << columns << " cells where the header (line " << header_line_ << ") has " << columns + 1
            << ", its last one empty (the header ends with a delimiter; so must every row)";
  } else if (line.find(delimiter_, start) != std::string_view::npos) {
    message << ": more cells than the " << columns + 1 << " of the header (line " << header_line_
            << "), which ends with a delimiter" << header_hint();
  } else if (!trim(line.substr(start)).empty()) {
    message << ", column " << columns + 1 << ": '" << trim(line.substr(start))
            << "' under the header's empty last cell (line " << header_line_
            << " ends with a delimiter): name that column in the header, or leave the cell empty";
  } else {
    return;
  }
  throw InputError(message.str());
}

bool DelimitedReader::next(SampleBlock& block) {
  if (finished_) return false;
  block.first_sample = rows_;
  block.channels.resize(channel_names_.size());
  const std::size_t rows = detail::rows_per_block(options_.block_size, channel_names_.size());
  for (auto& samples : block.channels) {
    samples.clear();
    samples.reserve(rows);
  }
  std::string_view line;
  while (block.size() < rows && next_line(line)) {
    if (is_skipped(line)) continue;
    parse_row(line, block);
    ++rows_;
  }
  if (block.size() == 0) {
    finish();
    return false;
  }
  return true;
}

// Steps that wander more than rounding explains: a clock with jitter, or
// stamps computed from a drifting counter. Spectra assume uniform sampling.
void DelimitedReader::report_jitter() {
  constexpr double kJitterOverStep = 0.01;
  const double jitter = stamps_.jitter_rms_s();
  if (jitter <= kJitterOverStep * stamps_.step_s() || jitter <= stamps_.resolution_s()) return;
  std::ostringstream message;
  message << "the time steps scatter by " << jitter << " s RMS around " << stamps_.step_s()
          << " s, more than the stamps' rounding: the sampling clock may jitter; the spectra assume uniform sampling";
  summary_.findings.push_back(make_warning("ingest.time-jitter", message.str(), {.channel = column_names_[*time_column_]}));
}

void DelimitedReader::finish() {
  finished_ = true;
  if (rows_ == 0) throw InputError(path_ + ": no data rows after the header");
  summary_.sample_count = rows_;
  if (!time_column_) {
    summary_.sample_rate_hz = *options_.sample_rate_hz;
    return;
  }
  const double from_stamps = stamps_.finish();
  report_jitter();
  summary_.sample_rate_hz = options_.sample_rate_hz.value_or(from_stamps);
  if (options_.sample_rate_hz && std::abs(from_stamps / *options_.sample_rate_hz - 1.0) > 1e-3) {
    std::ostringstream message;
    message << "the stated sample rate " << *options_.sample_rate_hz << " Hz is used; the time column gives "
            << from_stamps << " Hz";
    summary_.findings.push_back(make_warning("ingest.rate-disagrees", message.str(), {column_names_[*time_column_]}));
  }
}

// A delimiter must not be part of a number or end a line.
bool can_delimit(char c) {
  return c != '\0' && !std::isalnum(static_cast<unsigned char>(c)) &&
         std::string_view(".+-\r\n").find(c) == std::string_view::npos;
}

}  // namespace

void DelimitedOptions::validate() const {
  if (delimiter && !can_delimit(*delimiter)) {
    throw ConfigError(std::string("'delimiter' '") + *delimiter +
                      "' cannot separate numbers; use a punctuation character, a space or a tab");
  }
  if (sample_rate_hz && !plausible_sample_rate(*sample_rate_hz)) {
    throw setting_out_of_range("sample_rate_hz", *sample_rate_hz, std::string("a rate from ") + kSampleRateRangeText);
  }
  if (block_size < 1 || block_size > kMaxBlockSize) {
    throw setting_out_of_range("block_size", block_size, "1 to " + std::to_string(kMaxBlockSize) + " samples");
  }
}

std::unique_ptr<SampleSource> open_delimited(const std::string& path, const DelimitedOptions& options) {
  options.validate();
  return std::make_unique<DelimitedReader>(path, options);
}

}  // namespace loopaudit
