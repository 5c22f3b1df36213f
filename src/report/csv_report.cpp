#include "loopaudit/report/csv_report.hpp"

#include <charconv>
#include <cmath>
#include <string>

#include "loopaudit/units.hpp"

namespace loopaudit {
namespace {

// Shortest text that reads back as the same double.
void put(std::string& line, double value) {
  char buffer[32];
  const auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value);
  line.append(buffer, error == std::errc{} ? end : buffer);
}

// Text with `digits` significant digits.
void put(std::string& line, double value, int digits) {
  char buffer[32];
  const auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value, std::chars_format::general, digits);
  line.append(buffer, error == std::errc{} ? end : buffer);
}

// Samples carry 9 significant digits, well past any acquisition's resolution;
// time stamps 12, so that they resolve single samples of long records.
constexpr int kSampleDigits = 9;
constexpr int kStampDigits = 12;

}  // namespace

void write_response_csv(std::ostream& out, const Response& r) {
  out << "freq_hz,re,im,mag_db,phase_deg,coherence,mag_sigma_db,phase_sigma_deg\n";
  std::string line;
  for (std::size_t k = 0; k < r.size(); ++k) {
    line.clear();
    const double sigma = r.relative_sigma.empty() ? 0.0 : r.relative_sigma[k];
    for (double v : {r.frequency_hz[k], r.value[k].real(), r.value[k].imag(), db_from_ratio(std::abs(r.value[k])),
                     wrap_deg(deg_from_rad(std::arg(r.value[k])))}) {
      put(line, v);
      line += ',';
    }
    if (!r.coherence.empty()) put(line, r.coherence[k]);
    line += ',';
    put(line, db_from_nepers(sigma));
    line += ',';
    put(line, deg_from_rad(sigma));
    line += '\n';
    out << line;
  }
}

void write_record_csv(std::ostream& out, const Record& record) {
  out << 't';
  for (const auto& name : record.channel_names) out << ',' << name;
  out << '\n';
  std::string line;
  for (std::size_t n = 0; n < record.sample_count(); ++n) {
    line.clear();
    put(line, static_cast<double>(n) / record.sample_rate_hz, kStampDigits);
    for (const auto& channel : record.channels) {
      line += ',';
      put(line, channel[n], kSampleDigits);
    }
    line += '\n';
    out << line;
  }
}

}  // namespace loopaudit
