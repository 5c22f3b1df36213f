#include "cli/commands.hpp"

#include <unistd.h>

#include <chrono>
#include <filesystem>
#include <iostream>
#include <memory>

#include "loopmargin/error.hpp"
#include "loopmargin/ingest/delimited.hpp"
#include "loopmargin/ingest/response_table.hpp"
#include "loopmargin/pipeline.hpp"
#include "loopmargin/report/atomic_file.hpp"
#include "loopmargin/report/csv_report.hpp"
#include "loopmargin/report/json_report.hpp"
#include "loopmargin/report/text_report.hpp"
#include "loopmargin/synth/simulate.hpp"

namespace loopmargin::cli {
namespace {

void write_text_file(const std::string& path, const std::string& text) {
  write_atomically(path, [&](std::ostream& out) { out << text; });
}

// Prints the samples read so far on stderr, at most once a second, when
// stderr is a terminal.
class Progress {
 public:
  explicit Progress(bool quiet) : enabled_(!quiet && ::isatty(STDERR_FILENO) == 1) {}
  ~Progress() {
    if (shown_) std::cerr << "\r\033[K" << std::flush;
  }
  ProgressFunction function() {
    if (!enabled_) return {};
    return [this](std::size_t samples) {
      const auto now = std::chrono::steady_clock::now();
      if (now - last_ < std::chrono::seconds(1)) return;
      last_ = now;
      shown_ = true;
      std::cerr << "\r  read " << samples << " samples" << std::flush;
    };
  }

 private:
  bool enabled_;
  bool shown_ = false;
  std::chrono::steady_clock::time_point last_ = std::chrono::steady_clock::now();
};

struct AnalyzeArgs {
  std::string recording;
  std::string json_path;
  std::string csv_path;
  std::string truth_path;
  std::string time_column;
  double sample_rate_hz = 0.0;
  std::string window = "hann";
  std::string estimator = "reference";
  std::string convention = "series-injection";
  bool quiet = false;
  AnalysisOptions options;
};

AnalysisOptions resolve(AnalyzeArgs& a) {
  AnalysisOptions o = a.options;
  o.welch.window = window_from_name(a.window);
  if (a.estimator == "reference") {
    o.response.estimator = Estimator::kReference;
  } else if (a.estimator == "two-channel") {
    o.response.estimator = Estimator::kTwoChannel;
  } else {
    throw ConfigError("unknown estimator '" + a.estimator + "'; choose reference or two-channel");
  }
  o.convention = convention_from_name(a.convention);
  o.welch.validate();
  return o;
}

void write_outputs(const AnalysisResult& result, const std::string& json_path, const std::string& csv_path) {
  if (!json_path.empty()) write_text_file(json_path, analysis_json(result));
  if (!csv_path.empty()) {
    write_atomically(csv_path, [&](std::ostream& out) { write_response_csv(out, result.loop.lines); });
  }
}

void run_analyze(AnalyzeArgs& a) {
  const AnalysisOptions options = resolve(a);
  const std::optional<MarginSummary> truth =
      a.truth_path.empty() ? std::nullopt : std::optional(read_truth_summary(a.truth_path));
  DelimitedOptions ingest;
  ingest.time_column = a.time_column;
  if (a.sample_rate_hz != 0.0) ingest.sample_rate_hz = a.sample_rate_hz;
  const auto source = open_delimited(a.recording, ingest);
  Progress progress(a.quiet);
  const AnalysisResult result = analyze_recording(*source, options, progress.function());
  write_outputs(result, a.json_path, a.csv_path);
  write_text_report(std::cout, result, truth);
}

}  // namespace

void add_analyze(CLI::App& app) {
  auto args = std::make_shared<AnalyzeArgs>();
  auto* cmd = app.add_subcommand("analyze", "Loop response and margins from a series-injection recording (CSV/TSV)");
  cmd->add_option("recording", args->recording, "Recording: delimited text with a header")
      ->required()
      ->type_name("FILE");
  cmd->add_option("--json", args->json_path, "Write the results as JSON to this file")->type_name("FILE");
  cmd->add_option("--csv", args->csv_path, "Write the loop response lines as CSV to this file")->type_name("FILE");
  cmd->add_option("--z", args->options.roles.injection,
                  "Channel holding the injection (reference); x-y computes it from the two loop signals")
      ->capture_default_str()
      ->type_name("NAME");
  cmd->add_option("--x", args->options.roles.x, "Channel after the injection point (drives the loop)")
      ->capture_default_str()
      ->type_name("NAME");
  cmd->add_option("--y", args->options.roles.y, "Channel before the injection point (returns from the loop)")
      ->capture_default_str()
      ->type_name("NAME");
  cmd->add_option("--time-column", args->time_column, "Column holding time in seconds (default: t, time or time_s)")
      ->type_name("NAME");
  cmd->add_option("--sample-rate", args->sample_rate_hz, "Sample rate in Hz (needed without a time column)")->type_name("HZ");
  cmd->add_option("--window", args->window, "Window: hann, hamming, blackman-harris, rectangular")
      ->capture_default_str();
  cmd->add_option("--segment", args->options.welch.segment_length, "Samples per averaged segment")
      ->capture_default_str()
      ->type_name("N");
  cmd->add_option("--overlap", args->options.welch.overlap, "Fraction of a segment shared with the next (0 to 0.9)")
      ->capture_default_str()
      ->type_name("FRACTION");
  cmd->add_option("--estimator", args->estimator, "reference (S_zy/S_zx) or two-channel (S_xy/S_xx)")
      ->capture_default_str();
  cmd->add_option("--convention", args->convention, "series-injection (L = -Y/X), direct (L = Y/X) or closed-loop")
      ->capture_default_str();
  cmd->add_option("--injection-floor", args->options.response.injection_floor_db,
                  "Report lines whose injection power is within this many dB of its peak")
      ->capture_default_str()
      ->type_name("DB");
  cmd->add_option("--truth", args->truth_path, "Truth file from `loopmargin synth`, shown beside the results")
      ->type_name("FILE");
  cmd->add_flag("--quiet", args->quiet, "No progress display");
  cmd->callback([args] { run_analyze(*args); });
}

void add_margins(CLI::App& app) {
  struct Args {
    std::string table;
    std::string json_path;
    std::string csv_path;
    std::string convention = "direct";
  };
  auto args = std::make_shared<Args>();
  auto* cmd = app.add_subcommand("margins", "Margins from a frequency-response table (freq_hz with re,im or mag_db,phase_deg)");
  cmd->add_option("table", args->table, "Frequency-response table")->required()->type_name("FILE");
  cmd->add_option("--convention", args->convention,
                  "What the table holds: direct (L itself), series-injection (Y/X) or closed-loop (T)")
      ->capture_default_str();
  cmd->add_option("--json", args->json_path, "Write the results as JSON to this file")->type_name("FILE");
  cmd->add_option("--csv", args->csv_path, "Write the loop response lines as CSV to this file")->type_name("FILE");
  cmd->callback([args] {
    const Convention convention = convention_from_name(args->convention);
    const AnalysisResult result = analyze_response(args->table, read_response_table(args->table), convention);
    write_outputs(result, args->json_path, args->csv_path);
    write_text_report(std::cout, result);
  });
}

void add_synth(CLI::App& app) {
  struct Args {
    std::string scenario;
    std::string out_dir = ".";
    std::optional<std::uint64_t> seed;
  };
  auto args = std::make_shared<Args>();
  auto* cmd = app.add_subcommand("synth", "Simulate a bench injection test from a scenario file (TOML)");
  cmd->add_option("scenario", args->scenario, "Scenario file")->required()->type_name("FILE");
  cmd->add_option("--out-dir", args->out_dir, "Folder for NAME.csv and NAME.truth.json")
      ->capture_default_str()
      ->type_name("DIR");
  cmd->add_option("--seed", args->seed, "Override the scenario's random seed")->type_name("N");
  cmd->callback([args] {
    Scenario scenario = load_scenario(args->scenario);
    if (args->seed) scenario.seed = *args->seed;
    std::error_code ec;
    std::filesystem::create_directories(args->out_dir, ec);
    if (ec) throw OutputError(args->out_dir + ": cannot create the folder: " + ec.message());
    const Synthesis synthesis = synthesize(scenario);
    const std::string stem = (std::filesystem::path(args->out_dir) / scenario.name).string();
    write_atomically(stem + ".csv", [&](std::ostream& out) { write_record_csv(out, synthesis.record); });
    write_text_file(stem + ".truth.json", truth_json(scenario, synthesis));
    AnalysisResult truth_view;
    truth_view.origin = args->scenario + " (exact response of the simulated loop)";
    truth_view.options.convention = Convention::kDirect;
    truth_view.loop.convention = Convention::kDirect;
    truth_view.margins = synthesis.truth;
    truth_view.findings = synthesis.truth.findings;
    write_text_report(std::cout, truth_view, std::nullopt, "exact");
    std::cout << "\n  wrote " << stem << ".csv and " << stem << ".truth.json\n";
  });
}

}  // namespace loopmargin::cli
