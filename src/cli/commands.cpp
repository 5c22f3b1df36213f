#include "cli/commands.hpp"

#include "cli/outputs.hpp"

#include <unistd.h>

#include <chrono>
#include <filesystem>
#include <iostream>
#include <memory>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/recording.hpp"
#include "loopaudit/ingest/response_table.hpp"
#include "loopaudit/ingest/truth_file.hpp"
#include "loopaudit/loop/loop.hpp"
#include "loopaudit/pipeline/pipeline.hpp"
#include "loopaudit/report/atomic_file.hpp"
#include "loopaudit/report/csv_report.hpp"
#include "loopaudit/report/json_report.hpp"
#include "loopaudit/report/text_report.hpp"
#include "loopaudit/config/run_config.hpp"
#include "loopaudit/synth/truth_file.hpp"

namespace loopaudit::cli {
namespace {


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

// Command-line values; each applies only when given, over the run settings file.
struct AnalyzeArgs {
  std::string recording;
  std::string config_path;
  OutputRequest outputs;
  std::string truth_path;
  bool quiet = false;
  std::string format, time_column, window, estimator, convention, z, x, y, excitation, schedule, marker;
  std::size_t period = 0;
  double settle_cycles = 0.0;
  std::vector<std::string> channels;
  double sample_rate_hz = 0.0;
  std::size_t segment = 0;
  double overlap = 0.0;
  double injection_floor_db = 0.0;
  double confidence = 0.0;
  int rhp_poles = 0;
  CLI::App* command = nullptr;

  // True when the option exists for this verb and was given.
  bool given(const char* option) const {
    const CLI::Option* o = command->get_option_no_throw(option);
    return o != nullptr && o->count() > 0;
  }
};

RunSettings resolve(const AnalyzeArgs& a) {
  RunSettings s = a.config_path.empty() ? RunSettings{} : load_run_settings(a.config_path);
  RecordingOptions& r = s.recording;
  AnalysisOptions& o = s.analysis;
  if (a.given("--format")) r.format = format_from_name(a.format);
  if (a.given("--channels")) r.channel_names = a.channels;
  if (a.given("--sample-rate")) r.sample_rate_hz = a.sample_rate_hz;
  if (a.given("--time-column")) r.text.time_column = a.time_column;
  if (a.given("--z")) o.roles.injection = a.z;
  if (a.given("--x")) o.roles.x = a.x;
  if (a.given("--y")) o.roles.y = a.y;
  if (a.given("--window")) o.welch.window = window_from_name(a.window);
  if (a.given("--segment")) o.welch.segment_length = a.segment;
  if (a.given("--overlap")) o.welch.overlap = a.overlap;
  if (a.given("--estimator")) o.response.estimator = estimator_from_name(a.estimator);
  if (a.given("--convention")) o.convention = convention_from_name(a.convention);
  if (a.given("--injection-floor")) o.response.injection_floor_db = a.injection_floor_db;
  if (a.given("--excitation")) o.excitation = excitation_setting_from_name(a.excitation);
  if (a.given("--period")) o.period_samples = a.period;
  if (a.given("--settle-cycles")) o.settle_cycles = a.settle_cycles;
  if (a.given("--schedule")) o.schedule_path = a.schedule;
  if (a.given("--marker")) o.marker_channel = a.marker;
  if (a.given("--confidence")) o.margins.confidence = a.confidence;
  if (a.given("--rhp-poles")) o.margins.open_loop_rhp_poles = a.rhp_poles;
  return s;
}

void run_analyze(const AnalyzeArgs& a, const std::string& command_line) {
  const RunSettings settings = resolve(a);
  const std::optional<MarginSummary> truth =
      a.truth_path.empty() ? std::nullopt : std::optional(read_truth_summary(a.truth_path));
  const SourceOpener open = [&] { return open_recording(a.recording, settings.recording); };
  Progress progress(a.quiet);
  const AnalysisResult result = analyze(open, settings.analysis, progress.function());
  const OutputRequest written = write_outputs(result, a.outputs, a.recording, a.config_path, command_line, truth);
  write_text_report(std::cout, result, truth, "measured", {written.json_path});
}

}  // namespace

namespace {

// The options that say how to read a recording and which channel is which,
// shared by analyze and inspect.
// Options of the margins stage, shared by analyze and table.
void add_margin_options(CLI::App* cmd, double& confidence, int& rhp_poles) {
  cmd->add_option("--confidence", confidence, "Level of every interval, 0.5 to 1 [0.95]")
      ->check(CLI::Range(0.5, 0.9999).description(""))
      ->type_name("LEVEL");
  cmd->add_option("--rhp-poles", rhp_poles, "Open-loop poles in the right half plane, for the Nyquist count [0]")
      ->check(CLI::Range(0, 64).description(""))
      ->type_name("N");
}

void add_input_options(CLI::App* cmd, AnalyzeArgs& a) {
  a.command = cmd;
  cmd->add_option("recording", a.recording, "Recording: CSV/TSV text, raw binary, WAV or HDF5")
      ->required()
      ->type_name("FILE");
  cmd->add_option("--config", a.config_path, "Run settings (TOML); options given here override it")->type_name("FILE");
  cmd->add_option("--format", a.format, "auto (by extension), text, raw, wav or hdf5 [auto]")->type_name("NAME");
  cmd->add_option("--channels", a.channels, "Channel names in file order, for files without names [z,x,y]")
      ->delimiter(',')
      ->type_name("NAMES");
  cmd->add_option("--z", a.z, "Channel holding the injection; x-y computes it from the loop signals [z]")
      ->type_name("NAME");
  cmd->add_option("--x", a.x, "Channel after the injection point, driving the loop [x]")->type_name("NAME");
  cmd->add_option("--y", a.y, "Channel before the injection point, returning from the loop [y]")->type_name("NAME");
  cmd->add_option("--time-column", a.time_column, "Text: column holding time in seconds [t, time or time_s]")
      ->type_name("NAME");
  cmd->add_option("--sample-rate", a.sample_rate_hz, "Sample rate in Hz; overrides what the file says [from the file]")
      ->type_name("HZ");
  cmd->add_flag("--quiet", a.quiet, "No progress display");
}

}  // namespace

void add_analyze(CLI::App& app, const std::string& command_line) {
  auto a = std::make_shared<AnalyzeArgs>();
  auto* cmd = app.add_subcommand("analyze", "Loop response and margins from a series-injection recording");
  add_input_options(cmd, *a);
  add_output_options(cmd, a->outputs);
  cmd->add_option("--window", a->window, "hann, hamming, blackman-harris or rectangular [hann]")->type_name("NAME");
  cmd->add_option("--segment", a->segment, "Samples per averaged segment [4096]")->type_name("N");
  cmd->add_option("--overlap", a->overlap, "Fraction of a segment shared with the next, 0 to 0.9 [0.5]")
      ->type_name("FRACTION");
  cmd->add_option("--estimator", a->estimator, "reference (S_zy/S_zx) or two-channel (S_xy/S_xx) [reference]")
      ->type_name("NAME");
  cmd->add_option("--convention", a->convention,
                  "series-injection (L = -Y/X), direct (L = Y/X) or closed-loop [series-injection]")
      ->type_name("NAME");
  cmd->add_option("--injection-floor", a->injection_floor_db,
                  "Report lines whose injection power is within this many dB of its peak [40]")
      ->type_name("DB");
  cmd->add_option("--excitation", a->excitation, "auto, broadband, periodic, stepped or chirp [auto: found]")
      ->type_name("NAME");
  cmd->add_option("--period", a->period, "Periodic: the period in samples [found]")->type_name("N");
  cmd->add_option("--settle-cycles", a->settle_cycles, "Stepped: cycles dropped at each dwell's start [3]")
      ->type_name("N");
  cmd->add_option("--schedule", a->schedule, "Stepped: dwells from a file with freq_hz, start_s, length_s [found]")
      ->type_name("FILE");
  cmd->add_option("--marker", a->marker, "Stepped: dwells from a channel holding the generator's frequency")
      ->type_name("NAME");
  cmd->add_option("--truth", a->truth_path, "Truth file from `loopaudit synth`, shown beside the results")
      ->type_name("FILE");
  add_margin_options(cmd, a->confidence, a->rhp_poles);
  cmd->callback([a, command_line] { run_analyze(*a, command_line); });
}

void add_inspect(CLI::App& app) {
  auto a = std::make_shared<AnalyzeArgs>();
  auto* cmd = app.add_subcommand("inspect", "What a recording holds: its excitation and data-quality findings");
  add_input_options(cmd, *a);
  cmd->callback([a] {
    const RunSettings settings = resolve(*a);
    const auto source = open_recording(a->recording, settings.recording);
    Progress progress(a->quiet);
    write_inspection(std::cout, inspect_recording(*source, settings.analysis, progress.function()));
  });
}

void add_table(CLI::App& app, const std::string& command_line) {
  struct Args {
    std::string table;
    OutputRequest outputs;
    std::string convention = "direct";
    MarginOptions margins;
  };
  auto args = std::make_shared<Args>();
  auto* cmd = app.add_subcommand("table", "Margins from a frequency-response table (freq_hz with re,im or mag_db,phase_deg)");
  cmd->add_option("table", args->table, "Frequency-response table")->required()->type_name("FILE");
  cmd->add_option("--convention", args->convention,
                  "What the table holds: direct (L itself), series-injection (Y/X) or closed-loop (T) [direct]")
      ->type_name("NAME");
  add_output_options(cmd, args->outputs);
  add_margin_options(cmd, args->margins.confidence, args->margins.open_loop_rhp_poles);
  cmd->callback([args, command_line] {
    const Convention convention = convention_from_name(args->convention);
    const AnalysisResult result =
        analyze_response(args->table, read_response_table(args->table), convention, args->margins);
    const OutputRequest written = write_outputs(result, args->outputs, args->table, "", command_line);
    write_text_report(std::cout, result, std::nullopt, "measured", {written.json_path});
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
  cmd->add_option("--out-dir", args->out_dir, "Folder for NAME.csv and NAME.truth.json [.]")->type_name("DIR");
  cmd->add_option("--seed", args->seed, "Random seed of the simulation [the scenario's seed]")->type_name("N");
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
    write_text_report(std::cout, truth_view, std::nullopt, "exact", {stem + ".truth.json", false});
    std::cout << "\n  wrote " << stem << ".csv and " << stem << ".truth.json\n";
  });
}

}  // namespace loopaudit::cli
