#include <algorithm>
#include <array>
#include <charconv>
#include <cctype>
#include <cmath>
#include <sstream>

#include "ingest/line_reader.hpp"
#include "ingest/number_text.hpp"
#include "ingest/stamp_check.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/ingest/delimited.hpp"

namespace loopaudit {
namespace {

using detail::LineReader;
using detail::detect_delimiter;
using detail::parse_number;
using detail::split_names;
using detail::trim;

bool is_blank_line(std::string_view line) { return trim(line).empty(); }

// Comment and metadata lines, before the header or among the rows.
bool is_comment_line(std::string_view line) {
  line = trim(line);
  return !line.empty() && (line.front() == '#' || line.front() == '%');
}

bool is_skipped(std::string_view line) { return is_blank_line(line) || is_comment_line(line); }

// "vout [V]" or "vout (V)" -> name "vout", unit "V".
std::pair<std::string, std::string> split_unit(const std::string& column) {
  const auto open = column.find_last_of("[(");
  const char close = open != std::string::npos && column[open] == '[' ? ']' : ')';
  if (open == std::string::npos || open == 0 || column.back() != close) return {column, ""};
  return {std::string(trim(column.substr(0, open))), std::string(trim(column.substr(open + 1, column.size() - open - 2)))};
}

// Seconds per unit of a time column; throws for a unit that is not a time.
double seconds_per(const std::string& unit, const std::string& path) {
  if (unit.empty() || unit == "s") return 1.0;
  if (unit == "ms") return 1e-3;
  if (unit == "us" || unit == "\xC2\xB5s") return 1e-6;
  if (unit == "ns") return 1e-9;
  throw InputError(path + ": the time column's unit '" + unit + "' is not one of s, ms, us, ns");
}

// A number with a decimal comma ("1,25"), as semicolon-separated files from
// many locales write it.
std::optional<double> parse_decimal_comma(std::string_view cell) {
  char buffer[64];
  if (cell.size() >= sizeof buffer) return std::nullopt;
  std::copy(cell.begin(), cell.end(), buffer);
  std::replace(buffer, buffer + cell.size(), ',', '.');
  return parse_number(std::string_view(buffer, cell.size()));
}

std::string lowercase(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(), [](unsigned char c) { return std::tolower(c); });
  return text;
}

std::optional<std::size_t> find_time_column(const std::vector<std::string>& names, const std::string& wanted,
                                            const std::string& path) {
  if (!wanted.empty()) {
    const auto it = std::find(names.begin(), names.end(), wanted);
    if (it == names.end()) throw ConfigError(path + ": no column named '" + wanted + "' for the time");
    return static_cast<std::size_t>(it - names.begin());
  }
  for (std::size_t i = 0; i < names.size(); ++i) {
    const std::string name = lowercase(names[i]);
    if (name == "t" || name == "time" || name == "time_s") return i;
  }
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
  void parse_row(std::string_view line, SampleBlock& block);
  std::size_t read_cell(std::string_view line, std::size_t start, std::string_view& cell,
                        std::optional<double>& value) const;
  [[noreturn]] void fail_cell(std::size_t column, std::string_view cell, const char* what) const;
  void finish();
  void report_jitter();

  std::string path_;
  DelimitedOptions options_;
  LineReader lines_;
  detail::StampChecker stamps_;
  char delimiter_ = ',';
  bool decimal_comma_ = false;
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
  std::string_view header;
  do {
    if (!lines_.next(header)) throw InputError(path_ + ": the file is empty; a header line naming the columns is needed");
  } while (is_skipped(header));
  delimiter_ = options_.delimiter.value_or(detect_delimiter(header));
  decimal_comma_ = delimiter_ == ';';
  for (const std::string& column : split_names(header, delimiter_)) {
    auto [name, unit] = split_unit(column);
    column_names_.push_back(std::move(name));
    column_units_.push_back(std::move(unit));
  }
  for (std::size_t i = 0; i < column_names_.size(); ++i) {
    const std::string& name = column_names_[i];
    if (name.empty() || parse_number(name)) {
      std::ostringstream message;
      message << path_ << ": line " << lines_.line_number() << ", column " << i + 1
              << ": the header must name every column, found '" << name << "'";
      throw InputError(message.str());
    }
  }
  time_column_ = find_time_column(column_names_, options_.time_column, path_);
  if (!time_column_ && !options_.sample_rate_hz) {
    throw ConfigError(path_ + ": no time column (t, time or time_s) and no sample rate given; state the sample rate");
  }
  if (time_column_) seconds_per_stamp_ = seconds_per(column_units_[*time_column_], path_);
  for (std::size_t i = 0; i < column_names_.size(); ++i) {
    if (i == time_column_) continue;
    channel_names_.push_back(column_names_[i]);
    channel_units_.push_back(column_units_[i]);
  }
  if (channel_names_.empty()) throw InputError(path_ + ": the header names no channel besides the time");
}

void DelimitedReader::fail_cell(std::size_t column, std::string_view cell, const char* what) const {
  std::ostringstream message;
  message << path_ << ": line " << lines_.line_number() << ", column " << column + 1 << " ('"
          << column_names_.at(std::min(column, column_names_.size() - 1)) << "'): " << what << " '" << trim(cell)
          << "'";
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
  value = decimal_comma_ ? parse_decimal_comma(cell) : parse_number(cell);
  return cell_end;
}

void DelimitedReader::parse_row(std::string_view line, SampleBlock& block) {
  std::size_t start = 0;
  std::size_t channel = 0;
  for (std::size_t column = 0; column < column_names_.size(); ++column) {
    if (start > line.size()) {
      std::ostringstream message;
      message << path_ << ": line " << lines_.line_number() << ": " << column << " cells where the header names "
              << column_names_.size();
      throw InputError(message.str());
    }
    std::string_view cell;
    std::optional<double> value;
    start = read_cell(line, start, cell, value) + 1;
    if (!value) fail_cell(column, cell, "not a number:");
    if (!std::isfinite(*value)) fail_cell(column, cell, "not a finite number:");
    if (column == time_column_) {
      stamps_.add(*value * seconds_per_stamp_, detail::printed_resolution(cell) * seconds_per_stamp_,
                  lines_.line_number());
    } else {
      block.channels[channel++].push_back(*value);
    }
  }
  if (start <= line.size()) {
    std::ostringstream message;
    message << path_ << ": line " << lines_.line_number() << ": more cells than the " << column_names_.size()
            << " columns the header names";
    throw InputError(message.str());
  }
}

bool DelimitedReader::next(SampleBlock& block) {
  if (finished_) return false;
  block.first_sample = rows_;
  block.channels.resize(channel_names_.size());
  for (auto& samples : block.channels) {
    samples.clear();
    samples.reserve(options_.block_size);
  }
  std::string_view line;
  while (block.size() < options_.block_size && lines_.next(line)) {
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
  if (sample_rate_hz && !(*sample_rate_hz > 0.0 && std::isfinite(*sample_rate_hz))) {
    throw setting_out_of_range("sample_rate_hz", *sample_rate_hz, "a positive rate in Hz");
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
