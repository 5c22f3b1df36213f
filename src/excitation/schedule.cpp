#include "loopaudit/excitation/schedule.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <sstream>

#include "ingest/line_reader.hpp"
#include "ingest/number_text.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/units.hpp"

namespace loopaudit {

std::vector<ScheduledDwell> read_dwell_schedule(const std::string& path) {
  detail::LineReader lines(path);
  std::string_view line;
  do {
    if (!lines.next(line)) throw InputError(path + ": empty; a header with freq_hz, start_s and length_s is needed");
  } while (detail::trim(line).empty() || detail::trim(line).front() == '#');
  const char delimiter = detail::detect_delimiter(line);
  const auto names = detail::split_names(line, delimiter);
  std::map<std::string, std::size_t> column;
  for (std::size_t i = 0; i < names.size(); ++i) column.emplace(names[i], i);
  for (const char* required : {"freq_hz", "start_s", "length_s"}) {
    if (!column.count(required)) throw InputError(path + ": line 1: no '" + required + "' column");
  }
  std::vector<ScheduledDwell> out;
  while (lines.next(line)) {
    if (detail::trim(line).empty() || detail::trim(line).front() == '#') continue;
    const auto cells = detail::split_names(line, delimiter);
    const auto value = [&](const char* name) {
      const std::size_t c = column.at(name);
      const auto v = c < cells.size() ? detail::parse_number(cells[c]) : std::nullopt;
      if (!v || !std::isfinite(*v) || *v < 0.0) {
        std::ostringstream message;
        message << path << ": line " << lines.line_number() << ", column " << c + 1 << " ('" << name
                << "'): not a number of zero or more";
        throw InputError(message.str());
      }
      return *v;
    };
    const double frequency_hz = value("freq_hz");
    if (frequency_hz == 0.0) {
      throw InputError(path + ": line " + std::to_string(lines.line_number()) + ": freq_hz must be above zero");
    }
    out.push_back({frequency_hz, value("start_s"), value("length_s")});
  }
  if (out.empty()) throw InputError(path + ": no dwells after the header");
  return out;
}

std::vector<Dwell> dwells_in_samples(const std::vector<ScheduledDwell>& schedule, double sample_rate_hz,
                                     std::size_t sample_count, const std::string& origin) {
  std::vector<Dwell> out;
  for (const auto& d : schedule) {
    const auto first = clamped_samples(d.start_s * sample_rate_hz, sample_count);
    const auto end = clamped_samples((d.start_s + d.length_s) * sample_rate_hz, sample_count);
    if (first >= sample_count) {
      throw InputError(origin + ": the schedule's dwell at " + std::to_string(d.frequency_hz) + " Hz starts at " +
                       std::to_string(d.start_s) + " s, past the record's end");
    }
    out.push_back({first, end, d.frequency_hz});
  }
  std::sort(out.begin(), out.end(), [](const Dwell& a, const Dwell& b) { return a.first_sample < b.first_sample; });
  for (std::size_t i = 1; i < out.size(); ++i) {
    if (out[i].first_sample < out[i - 1].end_sample) {
      throw InputError(origin + ": the schedule's dwells at " + std::to_string(out[i - 1].frequency_hz) + " Hz and " +
                       std::to_string(out[i].frequency_hz) + " Hz overlap");
    }
  }
  return out;
}

void MarkerDwells::push(std::span<const double> marker, std::size_t first_sample) {
  for (std::size_t i = 0; i < marker.size(); ++i) {
    const double v = marker[i];
    if (v != value_) {
      if (value_ > 0.0) dwells_.push_back({start_, first_sample + i, value_});
      value_ = v;
      start_ = first_sample + i;
    }
  }
  next_ = first_sample + marker.size();
}

std::vector<Dwell> MarkerDwells::finish() {
  if (value_ > 0.0) dwells_.push_back({start_, next_, value_});
  value_ = 0.0;
  return dwells_;
}

}  // namespace loopaudit
