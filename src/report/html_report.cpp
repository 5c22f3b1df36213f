#include "loopaudit/report/html_report.hpp"

#include <cmath>
#include <cstdio>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include "loopaudit/format.hpp"
#include "loopaudit/model/comparison.hpp"
#include "loopaudit/report/text_report.hpp"
#include "report/interval_text.hpp"
#include "report/sha256.hpp"
#include "report/svg.hpp"

namespace loopaudit {
namespace {

using svg::escape;

const char* kStyle = R"(
:root { --ink: #222831; --muted: #5b626b; --rule: #d5d9de; --teal: #0b5d7a; --orange: #b8440f; --paper: #ffffff; }
* { box-sizing: border-box; }
body { margin: 0; background: #f4f5f7; color: var(--ink);
       font: 14px/1.45 'DejaVu Sans', 'Liberation Sans', Arial, Helvetica, sans-serif; }
main { max-width: 860px; margin: 0 auto; background: var(--paper); padding: 28px 36px 40px; }
header { border-bottom: 3px solid var(--teal); padding-bottom: 12px; margin-bottom: 18px; }
header .kind { color: var(--teal); font-size: 12px; letter-spacing: 0.12em; text-transform: uppercase; font-weight: bold; }
header h1 { font-size: 22px; margin: 4px 0 6px; word-break: break-all; }
header .stamp { color: var(--muted); font-size: 12.5px; }
h2 { font-size: 16px; margin: 28px 0 8px; padding-bottom: 4px; border-bottom: 1px solid var(--rule); }
.glance { display: grid; grid-template-columns: repeat(3, 1fr); gap: 10px; margin: 6px 0 4px; }
.tile { border: 1px solid var(--rule); border-left: 4px solid var(--teal); padding: 8px 10px; }
.tile .what { color: var(--muted); font-size: 12px; }
.tile .value { font-size: 20px; font-weight: bold; }
.tile .range { color: var(--muted); font-size: 12px; }
.tile.stable { border-left-color: #2f7d32; } .tile.unstable { border-left-color: #b3261e; } .tile.undecided { border-left-color: var(--orange); }
table { border-collapse: collapse; width: 100%; font-size: 13px; }
th, td { text-align: left; padding: 4px 8px 4px 0; border-bottom: 1px solid #eceef1; vertical-align: top; }
th { color: var(--muted); font-weight: normal; font-size: 12px; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
.flag { color: var(--orange); font-size: 12px; }
figure { margin: 16px 0 6px; }
figure svg { max-width: 100%; height: auto; display: block; border: 1px solid #eceef1; }
figcaption { color: var(--muted); font-size: 12.5px; margin-top: 4px; }
.note { color: var(--orange); font-size: 12.5px; margin: 2px 0; }
.warning { color: var(--orange); } .severity { font-size: 12px; white-space: nowrap; }
pre { background: #f6f7f9; border: 1px solid #eceef1; padding: 8px; overflow-x: auto; font-size: 12px; }
code { font-size: 12.5px; }
.caution { border: 1px solid #e0c9b8; background: #fdf7f2; padding: 10px 14px; }
footer { margin-top: 30px; color: var(--muted); font-size: 12px; border-top: 1px solid var(--rule); padding-top: 8px; }
@media print { body { background: none; } main { max-width: none; padding: 0; } figure { break-inside: avoid; } }
)";

using detail::interval_text;
std::string fixed(double v, int digits) { return format_fixed(v, digits); }

std::string deg(double v) { return fixed(v, 1) + "°"; }
std::string db(double v) { return format_signed(v, 1) + " dB"; }
std::string plain_db(double v) { return std::isfinite(v) ? fixed(v, 1) + " dB" : std::string("unbounded"); }
std::string hz(double v) { return format_frequency(v); }
std::string seconds(double v) { return format_time(v); }
std::string ratio(double v) { return fixed(v, 3); }

// A tile: what, its value, and under it a line each for its interval and any detail ("" lines are left out).
void tile(std::ostream& out, const std::string& what, const std::string& value,
          const std::vector<std::string>& details, const std::string& extra_class = "") {
  out << "<div class=\"tile " << extra_class << "\"><div class=\"what\">" << escape(what) << "</div><div class=\"value\">"
      << escape(value) << "</div>";
  for (const auto& line : details) {
    if (!line.empty()) out << "<div class=\"range\">" << escape(line) << "</div>";
  }
  out << "</div>\n";
}

void write_glance(std::ostream& out, const AnalysisResult& r) {
  const auto& s = r.margins.summary;
  const auto& st = r.margins.stability;
  const std::string level = fixed(100.0 * r.margins.confidence, 0) + " %: ";
  out << "<section><div class=\"glance\">\n";
  tile(out, "stability (Nyquist, over the band)", verdict_name(st.verdict),
       {st.closed_loop_rhp_poles ? std::to_string(*st.closed_loop_rhp_poles) + " closed-loop RHP poles counted"
                                 : "see the reason below"},
       verdict_name(st.verdict));
  // Value and interval in one style, with the digits the interval needs, as
  // the terminal table prints them (interval_style).
  const auto value = [](const std::optional<Estimate>& e, Quantity quantity, const char* none) {
    return e ? detail::estimate_style(quantity, *e)(e->value) : std::string(none);
  };
  const auto range = [&](const std::optional<Estimate>& e, Quantity quantity) {
    return e && e->interval ? level + detail::interval_text(*e, quantity) : std::string();
  };
  // What an unresolved stretch may hide, under the tile it qualifies.
  const auto possible = [&](bool phase) {
    std::vector<std::string> lines;
    for (const PossibleMargin& p : s.possible) {
      if (p.is_phase() != phase) continue;
      lines.push_back(std::string("may also lie: ") + p.what() + " of " + (phase ? deg(p.range.low) : db(p.range.low)) +
                      " to " + (phase ? deg(p.range.high) : db(p.range.high)) + " at " + hz(p.low_hz) + " to " +
                      hz(p.high_hz) + " (unresolved)");
    }
    return lines;
  };
  const auto with = [](std::vector<std::string> first, const std::vector<std::string>& more) {
    first.insert(first.end(), more.begin(), more.end());
    return first;
  };
  const auto absent = [&](const char* key) { return detail::absence_text(s.status(key)); };
  tile(out, "phase margin (smallest)", value(s.phase_margin_deg, Quantity::kAngle, absent("phase_margin_deg")),
       with({range(s.phase_margin_deg, Quantity::kAngle)}, possible(true)));
  // A conditionally stable loop has margins both ways: the tile shows the
  // smaller and names the other.
  const auto& other = s.gain_margin_db && s.gain_margin_db->value >= 0.0 ? s.gain_reduction_margin_db
                                                                          : s.gain_increase_margin_db;
  const std::string other_name = s.gain_margin_db && s.gain_margin_db->value >= 0.0 ? "reduction margin " : "increase margin ";
  const std::string other_line =
      s.gain_margin_db && other ? other_name + value(other, Quantity::kSignedGain, "") +
                                      (other->interval ? " (" + range(other, Quantity::kSignedGain) + ")" : std::string())
                                : "";
  tile(out, "gain margin (smallest)", value(s.gain_margin_db, Quantity::kSignedGain, absent("gain_margin_db")),
       with({range(s.gain_margin_db, Quantity::kSignedGain), other_line}, possible(false)));
  tile(out, "gain crossover", value(s.gain_crossover_hz, Quantity::kFrequency, absent("gain_crossover_hz")),
       {range(s.gain_crossover_hz, Quantity::kFrequency)});
  const auto& mm = s.modulus_margin;
  tile(out, "peak sensitivity", value(s.peak_sensitivity_db, Quantity::kGain, "none"),
       {range(s.peak_sensitivity_db, Quantity::kGain), mm ? "modulus margin " + value(mm, Quantity::kRatio, "") : ""});
  const auto& d = r.margins.disk;
  const std::optional<Estimate> alpha = d ? std::optional(d->alpha) : std::nullopt;
  tile(out, "disk margin (balanced)", d ? "α " + ratio(d->alpha.value) : "none",
       {alpha && alpha->interval ? level + "α " + interval_text(*alpha, ratio) : "",
        d ? "gain ±" + plain_db(d->gain_high_db.value) + ", phase ±" + deg(d->phase_deg.value) : ""});
  out << "</div></section>\n";
}

void write_method(std::ostream& out, const AnalysisResult& r, const ReportContext& c) {
  out << "<h2>Recording and method</h2>\n<table>\n";
  const auto row = [&](const std::string& label, const std::string& html) {
    out << "<tr><th>" << escape(label) << "</th><td>" << html << "</td></tr>\n";
  };
  row("input", "<code>" + escape(r.origin) + "</code>");
  if (!c.recording_modified.empty()) row("file date", escape(c.recording_modified) + " (last modified)");
  for (const auto& [label, text] : describe_method(r)) row(label, escape(text));
  if (c.settings_path.empty()) {
    row("settings", "none given (defaults and command-line options)");
  } else {
    row("settings", "<code>" + escape(c.settings_path) + "</code>, SHA-256 <code>" +
                        detail::sha256_hex(c.settings_text) + "</code><details><summary>contents</summary><pre>" +
                        escape(c.settings_text) + "</pre></details>");
  }
  if (!c.command_line.empty()) row("command", "<code>" + escape(c.command_line) + "</code>");
  out << "</table>\n";
}

std::string flags_html(const std::vector<std::string>& flags) {
  if (flags.empty()) return "";
  std::string text;
  for (const auto& f : flags) text += (text.empty() ? "" : ", ") + f;
  return "<span class=\"flag\">trust less: " + escape(text) + "</span>";
}

void write_margins(std::ostream& out, const AnalysisResult& r) {
  const auto& m = r.margins;
  out << "<h2>Margins</h2>\n<table>\n<tr><th>where</th><th>frequency</th><th>margin</th><th>" +
             fixed(100.0 * m.confidence, 0) + " % interval</th><th></th></tr>\n";
  for (const auto& c : m.gain_crossovers) {
    out << "<tr><td>gain crossover</td><td class=\"num\">" << hz(c.frequency_hz.value) << "<br><small>"
        << interval_text(c.frequency_hz, Quantity::kFrequency) << "</small></td><td class=\"num\">PM "
        << deg(c.phase_margin_deg.value)
        << "<br>delay " << seconds(c.delay_margin_s.value) << "</td><td class=\"num\">"
        << interval_text(c.phase_margin_deg, deg) << "<br>" << interval_text(c.delay_margin_s, Quantity::kTime)
        << "</td><td>"
        << flags_html(c.trust_flags) << "</td></tr>\n";
  }
  for (const auto& c : m.phase_crossovers) {
    out << "<tr><td>phase crossover</td><td class=\"num\">" << hz(c.frequency_hz.value) << "<br><small>"
        << interval_text(c.frequency_hz, Quantity::kFrequency) << "</small></td><td class=\"num\">GM "
        << db(c.gain_margin_db.value)
        << "<br><small>limits gain " << direction_name(c.limits) << "</small></td><td class=\"num\">"
        << interval_text(c.gain_margin_db, db) << "</td><td>" << flags_html(c.trust_flags) << "</td></tr>\n";
  }
  if (m.gain_crossovers.empty()) {
    out << "<tr><td>gain crossover</td><td colspan=\"4\">" << escape(detail::empty_list_text(m, CrossingLevel::kGain))
        << "</td></tr>\n";
  }
  if (m.phase_crossovers.empty()) {
    out << "<tr><td>phase crossover</td><td colspan=\"4\">" << escape(detail::empty_list_text(m, CrossingLevel::kPhase))
        << "</td></tr>\n";
  }
  if (m.modulus) {
    out << "<tr><td>modulus margin</td><td class=\"num\">" << hz(m.modulus->frequency_hz) << "</td><td class=\"num\">"
        << ratio(m.modulus->modulus_margin.value) << "<br>peak |S| " << plain_db(m.modulus->peak_sensitivity_db.value)
        << "</td><td class=\"num\">" << interval_text(m.modulus->modulus_margin, ratio) << "<br>"
        << interval_text(m.modulus->peak_sensitivity_db, plain_db) << "</td><td>"
        << (m.modulus->at_band_edge ? "<span class=\"flag\">at the band edge</span>" : "") << "</td></tr>\n";
  }
  if (m.disk) {
    out << "<tr><td>disk margin</td><td class=\"num\">" << hz(m.disk->frequency_hz) << "</td><td class=\"num\">α "
        << ratio(m.disk->alpha.value) << "<br>gain ±" << plain_db(m.disk->gain_high_db.value) << ", phase ±"
        << deg(m.disk->phase_deg.value) << "</td><td class=\"num\">" << interval_text(m.disk->alpha, ratio) << "<br>"
        << interval_text(m.disk->phase_deg, deg) << "</td><td>"
        << (m.disk->at_band_edge ? "<span class=\"flag\">at the band edge</span>" : "") << "</td></tr>\n";
  }
  out << "</table>\n<p>Acceptance verdict: no limits were given, so no pass or fail is stated.</p>\n";
  const auto& st = m.stability;
  out << "<h2>Stability over the band</h2>\n<p><strong>" << verdict_name(st.verdict) << "</strong>: "
      << escape(st.reason) << "</p>\n";
  if (!st.assumptions.empty()) {
    out << "<p>The count assumes:</p><ul>\n";
    for (const auto& a : st.assumptions) out << "<li>" << escape(a) << "</li>\n";
    out << "</ul>\n";
  }
}

// A simulated recording's truth beside the result, and whether each
// interval holds it.
void write_truth(std::ostream& out, const AnalysisResult& r, const MarginSummary& t) {
  out << "<h2>Compared with the simulation's truth</h2>\n<table>\n<tr><th>quantity</th><th>measured</th><th>"
      << fixed(100.0 * r.margins.confidence, 0) << " % interval</th><th>truth</th><th>inside</th></tr>\n";
  const auto compared = compare_summary(r.margins.summary, t);
  for (const detail::SummaryRow& shown : detail::kSummaryRows) {
    const QuantityComparison& c = comparison_of(compared, shown.key);
    // One style for the value, the interval and the truth, with the digits
    // that show whether the truth is inside (interval_style).
    std::vector<double> beside;
    if (c.reference) beside.push_back(*c.reference);
    const NumberStyle style = c.measured ? detail::estimate_style(shown.quantity, *c.measured, beside)
                                         : value_style(shown.quantity, c.reference.value_or(0.0));
    const auto& ci = c.measured ? c.measured->interval : std::nullopt;
    const std::string range = ci ? format_interval(style, ci->low, ci->high) : "";
    out << "<tr><td>" << shown.label << "</td><td class=\"num\">"
        << (c.measured ? style(c.measured->value) : detail::absence_text(r.margins.summary.status(shown.key)))
        << "</td><td class=\"num\">" << range << "</td><td class=\"num\">"
        << (c.reference ? style(*c.reference) : "none in band") << "</td><td>"
        << (c.inside ? (*c.inside ? "yes" : "no") : "") << "</td></tr>\n";
  }
  out << "</table>\n";
}

void write_plots(std::ostream& out, const std::vector<Plot>& plots) {
  out << "<h2>Plots</h2>\n";
  for (const Plot& p : plots) {
    out << "<figure id=\"plot-" << p.name << "\">\n" << p.svg << "<figcaption>" << escape(p.caption)
        << "</figcaption>\n";
    for (const auto& note : p.notes) out << "<p class=\"note\">" << escape(note) << "</p>\n";
    out << "</figure>\n";
  }
}

void write_findings(std::ostream& out, const Diagnostics& findings) {
  out << "<h2>Data quality and findings</h2>\n";
  if (findings.empty()) {
    out << "<p>None: the checks of the recording and the analysis found nothing to report.</p>\n";
    return;
  }
  out << "<table>\n";
  for (const auto& d : findings) {
    out << "<tr><td class=\"severity " << severity_name(d.severity) << "\">" << severity_name(d.severity)
        << "</td><td><code>" << escape(d.code) << "</code></td><td>" << escape(d.message) << "</td></tr>\n";
  }
  out << "</table>\n";
}

void write_cautions(std::ostream& out) {
  out << "<h2>Cautions</h2>\n<div class=\"caution\"><p>Loop injection is done on live power hardware, often at "
         "hazardous voltages. Follow your local electrical-safety codes and your organisation's licensed practice "
         "for such work.</p><p>This report analyses a recording; it does not make a design safe. A margin or "
         "verdict in it is an engineering aid, not a certification. Its intervals cover the random noise the "
         "recording's own scatter shows: not bias from a too-large injection (nonlinearity), leakage across a "
         "segment, drift slower than a segment or a dwell, a dwell's unsettled start, a wrong sign convention "
         "or channel role, or behaviour outside the measured band.</p></div>\n";
}

}  // namespace

std::string html_report(const AnalysisResult& result, const std::vector<Plot>& plots, const ReportContext& context) {
  std::ostringstream out;
  out << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
      << "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>Loop report: "
      << escape(result.origin) << "</title>\n<style>" << kStyle << "</style>\n</head>\n<body>\n<main>\n<header>\n"
      << "<div class=\"kind\">Loop measurement report</div>\n<h1>" << escape(result.origin) << "</h1>\n"
      << "<div class=\"stamp\">loopaudit " << LOOPAUDIT_VERSION;
  if (!context.generated.empty()) out << " · written " << escape(context.generated);
  if (!context.recording_modified.empty()) out << " · recording dated " << escape(context.recording_modified);
  out << "</div>\n</header>\n";
  write_glance(out, result);
  write_method(out, result, context);
  write_margins(out, result);
  if (context.truth) write_truth(out, result, *context.truth);
  write_plots(out, plots);
  write_findings(out, result.findings);
  write_cautions(out);
  out << "<footer>Made by loopaudit " << LOOPAUDIT_VERSION
      << ". Margins are computed on L; the definitions are in the project's README.</footer>\n</main>\n</body>\n</html>\n";
  return out.str();
}

}  // namespace loopaudit
