#include "cli/outputs.hpp"

#include <chrono>
#include <ctime>
#include <filesystem>
#include <functional>
#include <fstream>
#include <iostream>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/report/atomic_file.hpp"
#include "loopaudit/report/csv_report.hpp"
#include "loopaudit/report/html_report.hpp"
#include "loopaudit/report/json_report.hpp"
#include "loopaudit/report/plots.hpp"

namespace loopaudit::cli {
namespace {

namespace fs = std::filesystem;

std::string utc_text(std::chrono::system_clock::time_point when) {
  const std::time_t t = std::chrono::system_clock::to_time_t(when);
  std::tm parts{};
  gmtime_r(&t, &parts);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%d %H:%M:%S UTC", &parts);
  return text;
}

std::string modified_text(const std::string& path) {
  std::error_code ec;
  const auto when = fs::last_write_time(path, ec);
  if (ec) return "";
  return utc_text(std::chrono::file_clock::to_sys(when));
}

std::string file_text(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

// "-" names standard output.
void write_output(const std::string& path, const std::function<void(std::ostream&)>& write) {
  if (path != kStandardOutput) return write_atomically(path, write);
  write(std::cout);
  std::cout.flush();
  if (!std::cout) throw OutputError("standard output: cannot be written");
}

void make_folder(const std::string& path) {
  std::error_code ec;
  fs::create_directories(path, ec);
  if (ec) throw OutputError(path + ": cannot create the folder: " + ec.message());
}

// The request with every unnamed output placed in the output folder (not
// made yet).
OutputRequest planned(OutputRequest r, const std::string& input) {
  if (r.out_dir.empty()) return r;
  const std::string stem = (fs::path(r.out_dir) / fs::path(input).stem()).string();
  if (r.json_path.empty()) r.json_path = stem + ".json";
  if (r.csv_path.empty()) r.csv_path = stem + ".lines.csv";
  if (r.report_path.empty()) r.report_path = stem + ".report.html";
  if (r.plots_dir.empty()) r.plots_dir = stem + "-plots";
  return r;
}

// The request planned, with the output folder made.
OutputRequest resolved(const OutputRequest& request, const std::string& input) {
  if (!request.out_dir.empty()) make_folder(request.out_dir);
  return planned(request, input);
}

// Whether two paths name one file: by device and inode when both exist (a
// link or another spelling of the same file), else by their absolute,
// normalised spelling.
bool same_file(const std::string& a, const std::string& b) {
  std::error_code ec;
  if (fs::exists(a, ec) && fs::exists(b, ec)) return fs::equivalent(a, b, ec) && !ec;
  return fs::weakly_canonical(fs::absolute(a), ec) == fs::weakly_canonical(fs::absolute(b), ec);
}

}  // namespace

void write_text_file(const std::string& path, const std::string& text) {
  write_output(path, [&](std::ostream& out) { out << text; });
}

bool check_standard_output(const OutputRequest& r) {
  if (r.plots_dir == kStandardOutput || r.out_dir == kStandardOutput) {
    throw CLI::ValidationError(r.plots_dir == kStandardOutput ? "--plots" : "--out-dir",
                               "names a folder; '-' (standard output) can only be given to --json, --csv or --report");
  }
  const int to_stdout = (r.json_path == kStandardOutput) + (r.csv_path == kStandardOutput) + (r.report_path == kStandardOutput);
  if (to_stdout > 1) {
    throw CLI::ValidationError("--json, --csv, --report",
                               "only one output can go to standard output ('-'); give the others a file name");
  }
  return to_stdout == 1;
}

void check_output_paths(const OutputRequest& request, const std::vector<std::string>& inputs) {
  const OutputRequest r = planned(request, inputs.empty() ? "" : inputs.front());
  const std::vector<std::pair<const char*, std::string>> outputs = {
      {"--json", r.json_path}, {"--csv", r.csv_path}, {"--report", r.report_path}, {"--plots", r.plots_dir}};
  for (std::size_t i = 0; i < outputs.size(); ++i) {
    const auto& [option, path] = outputs[i];
    if (path.empty() || path == kStandardOutput) continue;
    for (const std::string& input : inputs) {
      if (!input.empty() && same_file(path, input)) {
        throw CLI::ValidationError(option, "'" + path + "' is the input '" + input +
                                               "': writing there would replace it; choose another path");
      }
    }
    for (std::size_t j = i + 1; j < outputs.size(); ++j) {
      const auto& [other_option, other] = outputs[j];
      if (!other.empty() && other != kStandardOutput && same_file(path, other)) {
        throw CLI::ValidationError(std::string(option) + ", " + other_option,
                                   "both write to '" + path + "' and '" + other + "', one file; give each its own path");
      }
    }
  }
}

std::string command_line_text(int argc, char** argv) {
  std::string text = "loopaudit";
  for (int i = 1; i < argc; ++i) text += std::string(" ") + argv[i];
  return text;
}

void add_output_options(CLI::App* cmd, OutputRequest& r) {
  cmd->add_option("--json", r.json_path, "Write the results as JSON to this file ('-': standard output)")->type_name("FILE");
  cmd->add_option("--csv", r.csv_path, "Write the loop response lines as CSV to this file ('-': standard output)")
      ->type_name("FILE");
  cmd->add_option("--report", r.report_path, "Write the HTML report (self-contained) to this file ('-': standard output)")
      ->type_name("FILE");
  cmd->add_option("--plots", r.plots_dir, "Write each plot as an SVG file into this folder")->type_name("DIR");
  cmd->add_option("--out-dir", r.out_dir,
                  "Write every output not named otherwise here: STEM.json, STEM.lines.csv, STEM.report.html, STEM-plots/")
      ->type_name("DIR");
}

OutputRequest write_outputs(const AnalysisResult& result, const OutputRequest& request, const std::string& input,
                   const std::string& settings, const std::string& command_line,
                   const std::optional<MarginSummary>& truth) {
  const OutputRequest r = resolved(request, input);
  if (!r.json_path.empty()) write_text_file(r.json_path, analysis_json(result));
  if (!r.csv_path.empty()) {
    write_output(r.csv_path, [&](std::ostream& out) { write_response_csv(out, result.loop.lines); });
  }
  if (r.report_path.empty() && r.plots_dir.empty()) return r;
  const std::vector<Plot> plots = draw_plots(result);
  if (!r.plots_dir.empty()) {
    make_folder(r.plots_dir);
    for (const Plot& p : plots) write_text_file((fs::path(r.plots_dir) / (p.name + ".svg")).string(), p.svg);
  }
  if (!r.report_path.empty()) {
    ReportContext context{modified_text(input), utc_text(std::chrono::system_clock::now()), settings,
                          settings.empty() ? "" : file_text(settings), command_line, truth};
    write_text_file(r.report_path, html_report(result, plots, context));
  }
  return r;
}

}  // namespace loopaudit::cli
