#include "loopaudit/report/text_report.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <initializer_list>
#include <vector>

#include "loopaudit/format.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/model/comparison.hpp"
#include "report/interval_text.hpp"

namespace loopaudit {
namespace {

std::string printf_string(const char* format, double value, const char* unit = "") {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, value, unit);
  return buffer;
}

using detail::estimate_style;
using detail::kSummaryRows;
using detail::SummaryRow;

// The text of an estimate's interval in `style`, "" when it has none.
std::string range(const NumberStyle& style, const Estimate& e) {
  return e.interval ? format_interval(style, e.interval->low, e.interval->high) : std::string();
}

struct Row {
  std::string label;
  std::string measured;
  std::string truth;
  std::string interval;  // "" when there is none
};


// Each row's value, interval and truth in one style, so that the truth can be
// placed against the interval by eye.
std::vector<Row> summary_rows(const MarginSummary& m, const MarginSummary& t) {
  const auto compared = compare_summary(m, t);
  std::vector<Row> rows;
  for (const SummaryRow& r : kSummaryRows) {
    const QuantityComparison& c = comparison_of(compared, r.key);
    std::vector<double> beside;
    if (c.reference) beside.push_back(*c.reference);
    const NumberStyle style = c.measured ? estimate_style(r.quantity, *c.measured, beside)
                                         : value_style(r.quantity, c.reference.value_or(0.0));
    rows.push_back({r.label, c.measured ? style(c.measured->value) : detail::absence_text(m.status(r.key)),
                    c.reference ? style(*c.reference) : "none in band", c.measured ? range(style, *c.measured) : ""});
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

// The intervals of one crossing, under its values.
void write_interval_line(std::ostream& out, double confidence, const std::vector<std::string>& ranges) {
  if (std::all_of(ranges.begin(), ranges.end(), [](const std::string& r) { return r.empty(); })) return;
  out << "      " << printf_string("%.0f %%:", 100.0 * confidence);
  for (const auto& r : ranges) out << "  " << (r.empty() ? std::string("-") : r);
  out << "\n";
}

// Which entries of a list of `count` the terminal shows: the first
// kListedCrossovers and the ones named in `always` (those the summary takes).
std::vector<bool> shown_entries(std::size_t count, const std::vector<std::size_t>& always) {
  std::vector<bool> shown(count, false);
  for (std::size_t i = 0; i < count && i < kListedCrossovers; ++i) shown[i] = true;
  for (std::size_t i : always) {
    if (i < count) shown[i] = true;
  }
  return shown;
}

// The indices of the entries whose `field` is the summary's `chosen` value:
// the crossovers the summary takes, which the terminal always shows.
template <typename T>
std::vector<std::size_t> chosen_by_summary(const std::vector<T>& items, Estimate T::*field,
                                           std::initializer_list<std::optional<Estimate>> chosen) {
  std::vector<std::size_t> found;
  for (const auto& c : chosen) {
    if (!c) continue;
    for (std::size_t i = 0; i < items.size(); ++i) {
      if ((items[i].*field).value == c->value) found.push_back(i);
    }
  }
  return found;
}

// Where the whole of a shortened list can be read.
std::string where_listed(const FullLists& lists) {
  if (lists.json_path.empty()) return "--json FILE writes them all";
  if (lists.json_path == "-") return "all are in the JSON on standard output";
  return "all are in " + lists.json_path;
}


// Writes the shown entries of a list by `write_entry`, a line for each run
// of entries left out, and where the whole list is.
template <typename T, typename WriteEntry>
void write_capped(std::ostream& out, const std::vector<T>& items, const std::vector<bool>& shown, const char* what,
                  const char* json_key, const FullLists& lists, WriteEntry write_entry) {
  std::size_t hidden = 0;
  for (std::size_t i = 0; i < items.size();) {
    if (shown[i]) {
      write_entry(items[i++]);
      continue;
    }
    std::size_t end = i;
    while (end < items.size() && !shown[end]) ++end;
    out << "    ... " << (end - i) << " more from " << format_frequency(items[i].frequency_hz.value) << " to "
        << format_frequency(items[end - 1].frequency_hz.value) << "\n";
    hidden += end - i;
    i = end;
  }
  if (hidden == 0) return;
  out << "    " << (items.size() - hidden) << " of " << items.size() << " " << what << " shown; "
      << where_listed(lists)
      << " under \"" << json_key << "\"\n";
}

void write_gain_crossovers(std::ostream& out, const Margins& m, const FullLists& lists) {
  out << "  gain crossovers (|L| = 1)\n";
  if (m.gain_crossovers.empty()) out << "    " << detail::empty_list_text(m, CrossingLevel::kGain) << "\n";
  const MarginSummary& s = m.summary;
  std::vector<std::size_t> always =
      chosen_by_summary(m.gain_crossovers, &GainCrossover::frequency_hz, {s.gain_crossover_hz});
  for (std::size_t i : chosen_by_summary(m.gain_crossovers, &GainCrossover::delay_margin_s, {s.delay_margin_s})) {
    always.push_back(i);
  }
  write_capped(
      out, m.gain_crossovers, shown_entries(m.gain_crossovers.size(), always), "gain crossovers", "gain_crossovers",
      lists, [&](const GainCrossover& c) {
        const NumberStyle f = estimate_style(Quantity::kFrequency, c.frequency_hz);
        const NumberStyle pm = estimate_style(Quantity::kAngle, c.phase_margin_deg);
        const NumberStyle dm = estimate_style(Quantity::kTime, c.delay_margin_s);
        char line[200];
        std::snprintf(line, sizeof line, "    %-12s phase margin %11s   delay margin %s%s",
                      f(c.frequency_hz.value).c_str(), pm(c.phase_margin_deg.value).c_str(),
                      dm(c.delay_margin_s.value).c_str(), c.merged_crossings > 1 ? "   (merged noise crossings)" : "");
        out << line << flags_text(c.trust_flags) << "\n";
        write_interval_line(out, m.confidence,
                            {range(f, c.frequency_hz), range(pm, c.phase_margin_deg), range(dm, c.delay_margin_s)});
      });
}

void write_phase_crossovers(std::ostream& out, const Margins& m, const FullLists& lists) {
  out << "  phase crossovers (angle L = -180 deg)\n";
  if (m.phase_crossovers.empty()) out << "    " << detail::empty_list_text(m, CrossingLevel::kPhase) << "\n";
  const auto& list = m.phase_crossovers;
  const MarginSummary& s = m.summary;
  const std::vector<std::size_t> always = chosen_by_summary(
      list, &PhaseCrossover::gain_margin_db, {s.gain_margin_db, s.gain_increase_margin_db, s.gain_reduction_margin_db});
  write_capped(out, list, shown_entries(list.size(), always), "phase crossovers", "phase_crossovers", lists,
               [&](const PhaseCrossover& c) {
                 const NumberStyle f = estimate_style(Quantity::kFrequency, c.frequency_hz);
                 const NumberStyle gm = estimate_style(Quantity::kSignedGain, c.gain_margin_db);
                 char line[200];
                 std::snprintf(line, sizeof line, "    %-12s gain margin  %10s    limits gain %s",
                               f(c.frequency_hz.value).c_str(), gm(c.gain_margin_db.value).c_str(),
                               direction_name(c.limits));
                 out << line << flags_text(c.trust_flags) << "\n";
                 write_interval_line(out, m.confidence, {range(f, c.frequency_hz), range(gm, c.gain_margin_db)});
               });
}

// The balanced disk margin: the gain change (symmetric in dB) and the phase
// change the loop tolerates together.
void write_disk(std::ostream& out, const DiskMargin& d, double confidence) {
  const NumberStyle alpha = estimate_style(Quantity::kRatio, d.alpha);
  const NumberStyle gain = estimate_style(Quantity::kGain, d.gain_high_db);
  const NumberStyle phase = estimate_style(Quantity::kAngle, d.phase_deg);
  const std::string gain_text = std::isfinite(d.gain_high_db.value)
                                    ? "a gain change of up to +-" + gain(d.gain_high_db.value)
                                    : "any gain change";
  out << "\n  disk margin        alpha " << alpha(d.alpha.value) << ": the loop tolerates " << gain_text
      << " together with a phase change of up to +-" << phase(d.phase_deg.value) << " (worst at "
      << format_frequency(d.frequency_hz) << (d.at_band_edge ? ", at the band edge" : "") << ")\n";
  if (!d.alpha.interval) return;
  const auto symmetric = [](const NumberStyle& style, const Estimate& e) {
    if (!e.interval) return std::string("-");
    const auto end = [&](double v) { return std::isfinite(v) ? "+-" + style(v) : style(v); };
    return end(e.interval->low) + " to " + end(e.interval->high);
  };
  out << printf_string("                     %.0f %%: ", 100.0 * confidence) << "alpha " << range(alpha, d.alpha)
      << ", gain change " << symmetric(gain, d.gain_high_db) << ", phase change " << symmetric(phase, d.phase_deg)
      << "\n";
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

// The findings, at most kListedFindings when the file holds them all: errors
// first, then warnings, then notes, each in their order, and a line counting
// the rest by code.
void write_findings(std::ostream& out, const Diagnostics& findings, const FullLists& lists) {
  if (findings.empty()) return;
  out << "\n  findings\n";
  const bool cap = lists.findings && findings.size() > kListedFindings;
  std::vector<bool> shown(findings.size(), !cap);
  std::size_t listed = cap ? 0 : findings.size();
  for (Severity level : {Severity::kError, Severity::kWarning, Severity::kNote}) {
    for (std::size_t i = 0; i < findings.size() && listed < kListedFindings; ++i) {
      if (!shown[i] && findings[i].severity == level) shown[i] = true, ++listed;
    }
  }
  std::vector<std::pair<std::string, std::size_t>> left_out;  // code, count, in order of first appearance
  for (std::size_t i = 0; i < findings.size(); ++i) {
    const Diagnostic& d = findings[i];
    if (shown[i]) {
      out << "    " << severity_name(d.severity) << " [" << d.code << "] " << d.message << "\n";
      continue;
    }
    auto it = std::find_if(left_out.begin(), left_out.end(), [&](const auto& e) { return e.first == d.code; });
    if (it == left_out.end())
      left_out.emplace_back(d.code, 1);
    else
      ++it->second;
  }
  if (left_out.empty()) return;
  out << "    ... " << (findings.size() - listed) << " more (";
  for (std::size_t i = 0; i < left_out.size(); ++i)
    out << (i ? ", " : "") << left_out[i].second << " " << left_out[i].first;
  out << "); "
      << where_listed(lists)
      << " under \"diagnostics\"\n";
}

// How the intervals were made: the jackknife's replicates and degrees of
// freedom, or why the lines' sigmas were propagated instead.
std::string describe_intervals(const Margins& m) {
  const UncertaintyMethod& u = m.uncertainty;
  const std::string level = printf_string("%.0f %%, two-sided, ", 100.0 * m.confidence);
  if (u.method == IntervalMethod::kFirstOrder) {
    return level + "first order from each line's sigma" + (u.first_order_reason.empty() ? "" : " (" + u.first_order_reason + ")");
  }
  return level + "jackknife: " + u.basis + ", t = " + printf_string("%.2f", u.half_width_factor) + " (" +
         printf_string("%.1f", u.degrees_of_freedom) + " degrees of freedom); modulus and disk margins bias-corrected";
}

}  // namespace

std::vector<std::pair<std::string, std::string>> describe_method(const AnalysisResult& r) {
  std::vector<std::pair<std::string, std::string>> lines;
  if (r.record) {
    const auto& rec = *r.record;
    lines.emplace_back("recording",
                       std::to_string(rec.sample_count) + " samples at " + format_frequency(rec.sample_rate_hz) + " (" +
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
      lines.emplace_back("estimate",
                         "spectra of whole periods averaged (" + averaged + " periods), Y/X at the excited lines");
      break;
    case ResponseMethodKind::kSteppedSine:
      lines.emplace_back("estimate",
                         "IEEE 1057 sine fits, one line per dwell (" + averaged + " dwells), Y/X of the phasors");
      break;
    case ResponseMethodKind::kTable:
      break;
  }
  // All lines of L, and the band the margins were read from when it is narrower.
  const Response& all = r.loop.lines;
  const std::size_t count = all.size() ? all.size() : r.margins.line_count;
  const double low_hz = all.size() ? all.frequency_hz.front() : r.margins.band_low_hz;
  const double high_hz = all.size() ? all.frequency_hz.back() : r.margins.band_high_hz;
  lines.emplace_back("loop", std::string(convention_formula(r.loop.convention)) + " (" +
                                 convention_name(r.loop.convention) + "), " +
                                 (count == 1 ? "1 line at " + format_frequency(low_hz)
                                             : std::to_string(count) + " lines from " + format_frequency(low_hz) +
                                                   " to " + format_frequency(high_hz)));
  if (all.size() && r.margins.line_count < all.size()) {
    lines.emplace_back("margins", "from the " + std::to_string(r.margins.line_count) + " lines from " +
                                      format_frequency(r.margins.band_low_hz) + " to " +
                                      format_frequency(r.margins.band_high_hz) + " (" +
                                      r.options.margins.band_source + ")");
  }
  lines.emplace_back("intervals", describe_intervals(r.margins));
  return lines;
}

// Margins that unresolved stretches may hide, right under the summary they
// qualify, so that it is not read as the loop's whole story.
void write_possible(std::ostream& out, const MarginSummary& summary) {
  for (const PossibleMargin& p : summary.possible) {
    const bool phase = p.is_phase();
    const std::string range = phase ? format_fixed(p.range.low, 1) + " deg to " + format_fixed(p.range.high, 1) + " deg"
                                    : format_signed(p.range.low, 1) + " dB to " + format_signed(p.range.high, 1) + " dB";
    out << "  may also lie       " << p.what() << " of " << range << " from " << format_frequency(p.low_hz) << " to "
        << format_frequency(p.high_hz) << ", where " << (phase ? "gain" : "phase") << " crossings are unresolved\n";
  }
}

void write_text_report(std::ostream& out, const AnalysisResult& result, const std::optional<MarginSummary>& truth,
                       const std::string& value_heading, const FullLists& lists) {
  write_method(out, result);
  write_gain_crossovers(out, result.margins, lists);
  write_phase_crossovers(out, result.margins, lists);
  out << "\n";
  const auto rows = summary_rows(result.margins.summary, truth.value_or(MarginSummary{}));
  char line[200];
  const bool intervals = std::any_of(rows.begin(), rows.end(), [](const Row& r) { return !r.interval.empty(); });
  const std::string interval_heading =
      intervals ? printf_string("%.0f %% interval", 100.0 * result.margins.confidence) : std::string();
  int interval_width = 28;  // wider when an interval needs it
  for (const Row& row : rows) interval_width = std::max(interval_width, static_cast<int>(row.interval.size()) + 2);
  const auto write_row = [&](const std::string& label, const std::string& value, const std::string& interval,
                             const std::string& third) {
    std::snprintf(line, sizeof line, "  %-18s %-16s%-*s%s", label.c_str(), value.c_str(), interval_width,
                  interval.c_str(), third.c_str());
    std::string text = line;
    text.erase(text.find_last_not_of(' ') + 1);
    out << text << "\n";
  };
  write_row("summary", value_heading, interval_heading, truth ? "truth" : "");
  // A conditionally stable loop's gain margin the other way, under the
  // summary's (the smaller of the two).
  const auto& s = result.margins.summary;
  const auto write_other_way = [&] {
    if (!s.gain_margin_db) return;
    const bool increase = s.gain_margin_db->value >= 0.0;
    const auto member = increase ? &MarginSummary::gain_reduction_margin_db : &MarginSummary::gain_increase_margin_db;
    if (const auto& other = s.*member) {
      const auto& t = truth ? (*truth).*member : std::nullopt;
      write_row(increase ? "reduction margin" : "increase margin", format_signed(other->value, 1) + " dB",
                detail::interval_text(*other, Quantity::kSignedGain),
                truth ? (t ? format_signed(t->value, 1) + " dB" : "none in band") : "");
    }
  };
  for (const Row& row : rows) {
    write_row(row.label, row.measured, row.interval, truth ? row.truth : "");
    if (row.label == "gain margin") write_other_way();
  }
  write_possible(out, result.margins.summary);
  if (result.margins.disk) write_disk(out, *result.margins.disk, result.margins.confidence);
  write_stability(out, result.margins.stability);
  write_findings(out, result.findings, lists);
}

void write_inspection(std::ostream& out, const Inspection& i) {
  out << "loopaudit " << LOOPAUDIT_VERSION << "  " << i.origin << "\n";
  out << "  recording   " << i.sample_count << " samples at " << format_frequency(i.sample_rate_hz) << " ("
      << format_time(static_cast<double>(i.sample_count) / i.sample_rate_hz) << "); channels";
  for (const auto& name : i.channel_names) out << " " << name;
  if (!i.layout.empty()) out << "; read as " << i.layout;
  if (!i.roles_found) {
    out << "\n  excitation  not looked for: the roles name channels the file lacks (see the finding)\n";
  } else {
    out << "\n  excitation  " << i.excitation.describe(i.sample_rate_hz) << "\n";
  }
  if (i.roles_found && i.excitation.kind == ExcitationKind::kStepped) {
    out << "  dwells     ";
    for (std::size_t k = 0; k < i.excitation.dwells.size() && k < 8; ++k) {
      out << " " << format_frequency(i.excitation.dwells[k].frequency_hz);
    }
    if (i.excitation.dwells.size() > 8) out << " ... (" << i.excitation.dwells.size() << " in all)";
    out << "\n";
  }
  if (!i.findings.empty()) out << "\n  findings\n";
  for (const auto& d : i.findings)
    out << "    " << severity_name(d.severity) << " [" << d.code << "] " << d.message << "\n";
}

}  // namespace loopaudit
