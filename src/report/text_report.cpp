#include "loopaudit/report/text_report.hpp"

#include "loopaudit/format.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/model/comparison.hpp"
#include "report/interval_text.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <vector>

namespace loopaudit {
namespace {

std::string printf_string(const char* format, double value, const char* unit = "") {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, value, unit);
  return buffer;
}

struct Row {
  std::string label;
  std::string measured;
  std::string truth;
  std::string interval;  // "" when there is none
};

using detail::interval_text;

std::string deg(double v) { return printf_string("%.1f deg", v); }
std::string signed_db(double v) { return printf_string("%+.1f dB", v); }
std::string plain_db(double v) { return std::isfinite(v) ? printf_string("%.1f dB", v) : std::string("unbounded"); }
std::string ratio(double v) { return printf_string("%.3f", v); }
std::string hz(double v) { return format_frequency(v); }
std::string seconds(double v) { return format_time(v); }

// The intervals of one crossing, under its values.
void write_interval_line(std::ostream& out, double confidence, const std::vector<std::string>& ranges) {
  if (std::all_of(ranges.begin(), ranges.end(), [](const std::string& r) { return r.empty(); })) return;
  out << "      " << printf_string("%.0f %%:", 100.0 * confidence);
  for (const auto& r : ranges) out << "  " << (r.empty() ? std::string("-") : r);
  out << "\n";
}

// The summary rows in the order the table shows them, by summary key.
struct SummaryRow {
  const char* label;
  const char* key;
  std::string (*format)(double);
  std::string (*interval_format)(double);
};
std::string frequency(double v) { return format_frequency(v); }
std::string deg_value(double v) { return printf_string("%.1f deg", v); }
std::string sensitivity_db(double v) { return printf_string("%.1f dB", v); }
constexpr SummaryRow kSummaryRows[] = {
    {"gain crossover", "gain_crossover_hz", frequency, frequency},
    {"phase margin", "phase_margin_deg", deg_value, deg_value},
    {"delay margin", "delay_margin_s", seconds, seconds},
    {"phase crossover", "phase_crossover_hz", frequency, frequency},
    {"gain margin", "gain_margin_db", signed_db, signed_db},
    {"modulus margin", "modulus_margin", ratio, ratio},
    {"peak sensitivity", "peak_sensitivity_db", sensitivity_db, plain_db},  // an interval end may be unbounded
};

std::vector<Row> summary_rows(const MarginSummary& m, const MarginSummary& t) {
  const auto compared = compare_summary(m, t);
  std::vector<Row> rows;
  for (const SummaryRow& r : kSummaryRows) {
    const QuantityComparison& c = comparison_of(compared, r.key);
    rows.push_back({r.label, c.measured ? r.format(c.measured->value) : "none in band",
                    c.reference ? r.format(*c.reference) : "none in band",
                    c.measured ? interval_text(*c.measured, r.interval_format) : ""});
  }
  return rows;
}

void write_method(std::ostream& out, const AnalysisResult& r) {
  out << "loopaudit " << LOOPAUDIT_VERSION << "  " << r.origin << "\n";
  for (const auto& [label, text] : describe_method(r)) {
    char heading[16];
    std::snprintf(heading, sizeof heading, "  %-12s", label.c_str());
    out << heading << text << "\n";
  }
  out << "\n";
}

std::string flags_text(const std::vector<std::string>& flags) {
  if (flags.empty()) return "";
  std::string text = "   trust less: ";
  for (std::size_t i = 0; i < flags.size(); ++i) text += (i ? ", " : "") + flags[i];
  return text;
}

void write_crossings(std::ostream& out, const Margins& m) {
  out << "  gain crossovers (|L| = 1)\n";
  if (m.gain_crossovers.empty()) out << "    none in band\n";
  for (const auto& c : m.gain_crossovers) {
    char line[160];
    std::snprintf(line, sizeof line, "    %-12s phase margin %7.1f deg   delay margin %s%s",
                  format_frequency(c.frequency_hz.value).c_str(), c.phase_margin_deg.value,
                  format_time(c.delay_margin_s.value).c_str(),
                  c.merged_crossings > 1 ? "   (merged noise crossings)" : "");
    out << line << flags_text(c.trust_flags) << "\n";
    write_interval_line(out, m.confidence, {interval_text(c.frequency_hz, hz), interval_text(c.phase_margin_deg, deg),
                                            interval_text(c.delay_margin_s, seconds)});
  }
  out << "  phase crossovers (angle L = -180 deg)\n";
  if (m.phase_crossovers.empty()) out << "    none in band\n";
  for (const auto& c : m.phase_crossovers) {
    char line[160];
    std::snprintf(line, sizeof line, "    %-12s gain margin  %+7.1f dB    limits gain %s",
                  format_frequency(c.frequency_hz.value).c_str(), c.gain_margin_db.value, direction_name(c.limits));
    out << line << flags_text(c.trust_flags) << "\n";
    write_interval_line(out, m.confidence, {interval_text(c.frequency_hz, hz), interval_text(c.gain_margin_db, signed_db)});
  }
  out << "\n";
}

void write_stability(std::ostream& out, const StabilityAssessment& s) {
  const char* indent = "                     ";
  out << "\n  stability          " << verdict_name(s.verdict) << " (Nyquist count over the band)\n"
      << indent << s.reason << "\n";
  if (s.verdict == StabilityVerdict::kUndecided && !s.encirclements) return;
  for (std::size_t i = 0; i < s.assumptions.size(); ++i) {
    out << indent << (i == 0 ? "assumes  " : "         ") << s.assumptions[i] << "\n";
  }
}

}  // namespace

std::vector<std::pair<std::string, std::string>> describe_method(const AnalysisResult& r) {
  std::vector<std::pair<std::string, std::string>> lines;
  if (r.record) {
    const auto& rec = *r.record;
    lines.emplace_back("recording", std::to_string(rec.sample_count) + " samples at " +
                                        format_frequency(rec.sample_rate_hz) + " (" +
                                        format_time(static_cast<double>(rec.sample_count) / rec.sample_rate_hz) +
                                        "); z = " + rec.roles.injection + ", x = " + rec.roles.x + ", y = " + rec.roles.y +
                                        (rec.layout.empty() ? "" : "; read as " + rec.layout));
    if (r.excitation) {
      lines.emplace_back("excitation", r.excitation->describe(rec.sample_rate_hz));
    } else if (r.excitation_kind) {
      lines.emplace_back("excitation", std::string(excitation_name(*r.excitation_kind)) + " (as set)");
    }
  }
  const ResponseMethod& method = r.loop.lines.method;
  const std::string averaged = std::to_string(method.averages);
  switch (method.kind) {
    case ResponseMethodKind::kWelch: {
      const auto& w = r.options.welch;
      lines.emplace_back("estimate", std::string(r.options.response.estimator == Estimator::kReference
                                                     ? "reference method S_zy/S_zx"
                                                     : "two-channel S_xy/S_xx (biased in closed loop)") +
                                         ", " + window_name(w.window) + " window, " + std::to_string(w.segment_length) +
                                         "-sample segments, " + std::to_string(std::lround(w.overlap * 100.0)) +
                                         " % overlap, " + averaged + " segments (" +
                                         printf_string("%.1f", method.effective_averages) + " independent)");
      break;
    }
    case ResponseMethodKind::kPeriodic:
      lines.emplace_back("estimate", "spectra of whole periods averaged (" + averaged + " periods), Y/X at the excited lines");
      break;
    case ResponseMethodKind::kSteppedSine:
      lines.emplace_back("estimate", "IEEE 1057 sine fits, one line per dwell (" + averaged + " dwells), Y/X of the phasors");
      break;
    case ResponseMethodKind::kTable: break;
  }
  const std::size_t count = r.margins.line_count;
  lines.emplace_back("loop", std::string(convention_formula(r.loop.convention)) + " (" +
                                 convention_name(r.loop.convention) + "), " +
                                 (count == 1 ? "1 line at " + format_frequency(r.margins.band_low_hz)
                                             : std::to_string(count) + " lines from " +
                                                   format_frequency(r.margins.band_low_hz) + " to " +
                                                   format_frequency(r.margins.band_high_hz)));
  return lines;
}

// Margins that unresolved stretches may hide, right under the summary they
// qualify, so that it is not read as the loop's whole story.
void write_possible(std::ostream& out, const MarginSummary& summary) {
  for (const PossibleMargin& p : summary.possible) {
    const std::string key = p.key;
    const bool phase = key == "phase_margin_deg";
    const std::string what = phase ? "phase margin" : key == "gain_reduction_margin_db" ? "gain reduction" : "gain increase";
    const std::string range = phase ? deg_value(p.range.low) + " to " + deg_value(p.range.high)
                                    : signed_db(p.range.low) + " to " + signed_db(p.range.high);
    out << "  may also lie       a " << what << (phase ? "" : " margin") << " of " << range << " from " << format_frequency(p.low_hz) << " to "
        << format_frequency(p.high_hz) << ", where " << (phase ? "gain" : "phase") << " crossings are unresolved\n";
  }
}

void write_text_report(std::ostream& out, const AnalysisResult& result, const std::optional<MarginSummary>& truth,
                       const std::string& value_heading) {
  write_method(out, result);
  write_crossings(out, result.margins);
  const auto rows = summary_rows(result.margins.summary, truth.value_or(MarginSummary{}));
  char line[200];
  const bool intervals = std::any_of(rows.begin(), rows.end(), [](const Row& r) { return !r.interval.empty(); });
  const std::string interval_heading =
      intervals ? printf_string("%.0f %% interval", 100.0 * result.margins.confidence) : std::string();
  std::snprintf(line, sizeof line, "  %-18s %-16s%-28s%s\n", "summary", value_heading.c_str(),
                interval_heading.c_str(), truth ? "truth" : "");
  out << line;
  for (const Row& row : rows) {
    std::snprintf(line, sizeof line, "  %-18s %-16s%-28s%s\n", row.label.c_str(), row.measured.c_str(),
                  row.interval.c_str(), truth ? row.truth.c_str() : "");
    out << line;
  }
  write_possible(out, result.margins.summary);
  if (const auto& d = result.margins.disk) {
    out << "\n  disk margin        alpha " << printf_string("%.3f", d->alpha.value) << ": the loop tolerates gain "
        << (std::isfinite(d->gain_low_db) ? printf_string("%+.1f dB", d->gain_low_db) : std::string("down to 0"))
        << " to " << (std::isfinite(d->gain_high_db.value) ? printf_string("%+.1f dB", d->gain_high_db.value)
                                                  : std::string("unbounded"))
        << " together with phase +-" << printf_string("%.1f deg", d->phase_deg.value) << " (worst at "
        << format_frequency(d->frequency_hz) << (d->at_band_edge ? ", at the band edge" : "") << ")\n";
    if (d->alpha.interval) {
      out << printf_string("                     %.0f %%: ", 100.0 * result.margins.confidence) << "alpha "
          << interval_text(d->alpha, ratio) << ", gain +-" << interval_text(d->gain_high_db, plain_db) << ", phase +-"
          << interval_text(d->phase_deg, deg) << "\n";
    }
  }
  write_stability(out, result.margins.stability);
  if (!result.findings.empty()) out << "\n  findings\n";
  for (const auto& d : result.findings) {
    out << "    " << severity_name(d.severity) << " [" << d.code << "] " << d.message << "\n";
  }
}

void write_inspection(std::ostream& out, const Inspection& i) {
  out << "loopaudit " << LOOPAUDIT_VERSION << "  " << i.origin << "\n";
  out << "  recording   " << i.sample_count << " samples at " << format_frequency(i.sample_rate_hz) << " ("
      << format_time(static_cast<double>(i.sample_count) / i.sample_rate_hz) << "); channels";
  for (const auto& name : i.channel_names) out << " " << name;
  if (!i.layout.empty()) out << "; read as " << i.layout;
  out << "\n  excitation  " << i.excitation.describe(i.sample_rate_hz) << "\n";
  if (i.excitation.kind == ExcitationKind::kStepped) {
    out << "  dwells     ";
    for (std::size_t k = 0; k < i.excitation.dwells.size() && k < 8; ++k) {
      out << " " << format_frequency(i.excitation.dwells[k].frequency_hz);
    }
    if (i.excitation.dwells.size() > 8) out << " ... (" << i.excitation.dwells.size() << " in all)";
    out << "\n";
  }
  if (!i.findings.empty()) out << "\n  findings\n";
  for (const auto& d : i.findings) out << "    " << severity_name(d.severity) << " [" << d.code << "] " << d.message << "\n";
}

}  // namespace loopaudit
