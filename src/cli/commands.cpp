#include "cli/commands.hpp"

#include "cli/outputs.hpp"

#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <chrono>
#include <cmath>
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
  std::string format, time_column, window, estimator, convention, z, x, y, excitation, schedule, marker, sample_type;
  std::size_t skip_rows = 0;
  std::vector<std::string> scales;  // NAME=FACTOR
  std::size_t period = 0;
  double settle_cycles = 0.0;
  std::vector<std::string> channels;
  double sample_rate_hz = 0.0;
  std::size_t segment = 0;
  double overlap = 0.0;
  double injection_floor_db = 0.0;
  double confidence = 0.0;
  int rhp_poles = 0;
  std::string band;
  CLI::App* command = nullptr;

  // True when the option exists for this verb and was given.
  bool given(const char* option) const {
    const CLI::Option* o = command->get_option_no_throw(option);
    return o != nullptr && o->count() > 0;
  }
};

std::optional<Interval> parse_band(const std::string& text);

// A --band the validator accepted, as the margins' band.
void set_band(MarginOptions& margins, const std::string& text) {
  margins.band_hz = parse_band(text);
  margins.band_source = "--band " + text;
}

// "y=-10" -> ("y", -10); throws CLI::ValidationError naming the option.
std::pair<std::string, double> named_factor(const std::string& text) {
  const auto equals = text.rfind('=');
  std::size_t used = 0;
  double factor = 0.0;
  try {
    if (equals != std::string::npos) factor = std::stod(text.substr(equals + 1), &used);
  } catch (const std::exception&) {
    used = 0;
  }
  if (equals == std::string::npos || equals == 0 || used == 0 || used != text.size() - equals - 1) {
    throw CLI::ValidationError("--scale", "'" + text + "' is not NAME=FACTOR (for example y=-10: a x10 probe, inverted)");
  }
  return {text.substr(0, equals), factor};
}

// Command-line scales replace a settings file's scale for the same channel.
void merge_scales(const std::vector<std::string>& given, std::vector<std::pair<std::string, double>>& scales) {
  for (const std::string& text : given) {
    const auto named = named_factor(text);
    std::erase_if(scales, [&](const auto& s) { return s.first == named.first; });
    scales.push_back(named);
  }
}

RunSettings resolve(const AnalyzeArgs& a) {
  RunSettings s = a.config_path.empty() ? RunSettings{} : load_run_settings(a.config_path);
  RecordingOptions& r = s.recording;
  AnalysisOptions& o = s.analysis;
  if (a.given("--format")) r.format = format_from_name(a.format);
  if (a.given("--channels")) r.channel_names = a.channels;
  if (a.given("--sample-rate")) r.sample_rate_hz = a.sample_rate_hz;
  if (a.given("--time-column")) r.text.time_column = a.time_column;
  if (a.given("--skip-rows")) r.text.lines_before_header = a.skip_rows;
  if (a.given("--sample-type")) r.raw.sample_type = sample_type_from_name(a.sample_type);
  if (a.given("--scale")) merge_scales(a.scales, r.named_scale);
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
  if (a.given("--band")) set_band(o.margins, a.band);
  const std::size_t loop_channels = o.roles.injection == kInjectionFromDifference ? 2 : 3;
  r.hdf5.channels_needed = r.channel_names.empty() ? loop_channels + (o.marker_channel.empty() ? 0 : 1) : r.channel_names.size();
  return s;
}

void run_analyze(const AnalyzeArgs& a, const std::string& command_line) {
  const bool to_stdout = check_standard_output(a.outputs);
  check_output_paths(a.outputs, {a.recording, a.config_path, a.truth_path, a.schedule});
  const RunSettings settings = resolve(a);
  if (!settings.analysis.schedule_path.empty()) check_output_paths(a.outputs, {a.recording, settings.analysis.schedule_path});
  const std::optional<MarginSummary> truth =
      a.truth_path.empty() ? std::nullopt : std::optional(read_truth_summary(a.truth_path));
  const SourceOpener open = [&] { return open_recording(a.recording, settings.recording); };
  const AnalysisResult result = [&] {
    Progress progress(a.quiet);  // cleared before anything else is written
    return analyze(open, settings.analysis, progress.function());
  }();
  const OutputRequest written = write_outputs(result, a.outputs, a.recording, a.config_path, command_line, truth);
  write_text_report(to_stdout ? std::cerr : std::cout, result, truth, "measured", {written.json_path});
}

}  // namespace

namespace {

// A count (of samples, lines): digits only (a minus sign would wrap round in
// an unsigned count and ask for exabytes).
CLI::Validator whole_count(const std::string& unit) {
  return CLI::Validator(
      [unit](const std::string& text) {
        const bool digits = !text.empty() && text.size() <= 18 &&
                            std::all_of(text.begin(), text.end(), [](unsigned char c) { return std::isdigit(c); });
        return digits ? std::string() : "'" + text + "' is not a whole number of " + unit;
      },
      "", unit);
}

// LOW:HIGH in Hz as an interval; nullopt when the text is not that.
std::optional<Interval> parse_band(const std::string& text) {
  // A frequency in Hz, with an optional k or M: "20", "2.5k", "1M".
  const auto frequency = [](const std::string& part) -> std::optional<double> {
    std::size_t used = 0;
    double value = 0.0;
    try {
      value = std::stod(part, &used);
    } catch (const std::exception&) {
      return std::nullopt;
    }
    const std::string suffix = part.substr(used);
    if (suffix.empty()) return value;
    if (suffix == "k" || suffix == "K") return value * 1e3;
    if (suffix == "M") return value * 1e6;
    return std::nullopt;
  };
  const auto colon = text.find(':');
  if (colon == std::string::npos) return std::nullopt;
  const auto low = frequency(text.substr(0, colon)), high = frequency(text.substr(colon + 1));
  if (!low || !high || !(*low > 0.0 && *high > *low && std::isfinite(*high))) return std::nullopt;
  return Interval{*low, *high};
}

// Options of the margins stage, shared by analyze and table.
void add_margin_options(CLI::App* cmd, double& confidence, int& rhp_poles, std::string& band) {
  cmd->add_option("--band", band, "Read margins only from the lines from LOW to HIGH Hz [the excited band]")
      ->check(CLI::Validator(
          [](const std::string& text) {
            return parse_band(text) ? std::string() : "'" + text + "' is not LOW:HIGH in Hz (k and M allowed: 2k:50k) with 0 < LOW < HIGH";
          },
          "", "band"))
      ->type_name("LOW:HIGH");
  cmd->add_option("--confidence", confidence, "Level of every interval, 0.5 to 1 [0.95]")
      ->check(CLI::Range(0.5, 0.9999).description(""))
      ->type_name("LEVEL");
  cmd->add_option("--rhp-poles", rhp_poles, "Open-loop poles in the right half plane, for the Nyquist count [0]")
      ->check(CLI::Range(0, 64).description(""))
      ->type_name("N");
}

// The options that say how to read a recording and which channel is which,
// shared by analyze and inspect.
void add_input_options(CLI::App* cmd, AnalyzeArgs& a) {
  a.command = cmd;
  cmd->add_option("recording", a.recording, "Recording: CSV/TSV text, raw binary, WAV or HDF5")
      ->required()
      ->type_name("FILE");
  cmd->add_option("--config", a.config_path, "Run settings (TOML); options given here override it")->type_name("FILE");
  cmd->add_option("--format", a.format, "auto (by extension), text, raw, wav or hdf5 [auto]")->type_name("NAME");
  cmd->add_option("--channels", a.channels, "Channel names in file order, for files without names [z,x,y; x,y for two]")
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
  cmd->add_option("--skip-rows", a.skip_rows, "Text: lines above the header to skip [found]")
      ->check(whole_count("lines"))
      ->type_name("N");
  cmd->add_option("--sample-type", a.sample_type, "Raw: int16, int32, float32 or float64 [int16, said so]")
      ->type_name("NAME");
  cmd->add_option("--scale", a.scales,
                  "Multiply a channel by a factor, NAME=FACTOR (y=-10: a x10 probe, inverted); repeat or separate by commas")
      ->delimiter(',')
      ->type_name("NAME=FACTOR");
  cmd->add_flag("--quiet", a.quiet, "No progress display");
}

}  // namespace

void add_analyze(CLI::App& app, const std::string& command_line) {
  auto a = std::make_shared<AnalyzeArgs>();
  auto* cmd = app.add_subcommand("analyze", "Loop response and margins from a series-injection recording");
  add_input_options(cmd, *a);
  add_output_options(cmd, a->outputs);
  cmd->add_option("--window", a->window, "hann, hamming, blackman-harris or rectangular [hann]")->type_name("NAME");
  cmd->add_option("--segment", a->segment, "Samples per averaged segment, 8 to 4194304 [4096]")
      ->check(whole_count("samples"))
      ->type_name("N");
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
  cmd->add_option("--period", a->period, "Periodic: the period in samples, 16 to 4194304 [found]")
      ->check(whole_count("samples"))
      ->type_name("N");
  cmd->add_option("--settle-cycles", a->settle_cycles, "Stepped: cycles dropped at each dwell's start [3]")
      ->type_name("N");
  cmd->add_option("--schedule", a->schedule, "Stepped: dwells from a file with freq_hz, start_s, length_s [found]")
      ->type_name("FILE");
  cmd->add_option("--marker", a->marker, "Stepped: dwells from a channel holding the generator's frequency")
      ->type_name("NAME");
  cmd->add_option("--truth", a->truth_path, "Truth file from `loopaudit synth`, shown beside the results")
      ->type_name("FILE");
  add_margin_options(cmd, a->confidence, a->rhp_poles, a->band);
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

namespace {

void add_table_columns(CLI::App* cmd, TableColumns& c) {
  cmd->add_option("--freq-column", c.frequency, "Column holding the frequency [found by name]")->type_name("NAME");
  cmd->add_option("--gain-column", c.gain_db, "Column holding the gain in dB [found by name]")->type_name("NAME");
  cmd->add_option("--magnitude-column", c.magnitude, "Column holding the magnitude as a ratio [found by name]")
      ->type_name("NAME");
  cmd->add_option("--phase-column", c.phase, "Column holding the phase, deg (rad if its unit says so) [found by name]")
      ->type_name("NAME");
  cmd->add_option("--real-column", c.real, "Column holding the real part [found by name]")->type_name("NAME");
  cmd->add_option("--imag-column", c.imag, "Column holding the imaginary part [found by name]")->type_name("NAME");
}

}  // namespace

void add_table(CLI::App& app, const std::string& command_line) {
  struct Args {
    std::string table;
    OutputRequest outputs;
    std::string convention = "direct";
    MarginOptions margins;
    std::string band;
    TableColumns columns;
  };
  auto args = std::make_shared<Args>();
  auto* cmd = app.add_subcommand("table", "Margins from a frequency-response table (frequency with real and imaginary "
                                          "parts, or gain and phase)");
  cmd->add_option("table", args->table, "Frequency-response table")->required()->type_name("FILE");
  cmd->add_option("--convention", args->convention,
                   "What the table holds: direct (L itself), series-injection (Y/X) or closed-loop (T) [direct]")
      ->type_name("NAME");
  add_table_columns(cmd, args->columns);
  add_output_options(cmd, args->outputs);
  add_margin_options(cmd, args->margins.confidence, args->margins.open_loop_rhp_poles, args->band);
  cmd->callback([args, command_line] {
    const bool to_stdout = check_standard_output(args->outputs);
    check_output_paths(args->outputs, {args->table});
    const Convention convention = convention_from_name(args->convention);
    if (!args->band.empty()) set_band(args->margins, args->band);
    const ResponseTable table = read_response_table(args->table, args->columns);
    AnalysisResult result = analyze_response(args->table, table.response, convention, args->margins);
    result.findings.insert(result.findings.begin(), table.findings.begin(), table.findings.end());
    const OutputRequest written = write_outputs(result, args->outputs, args->table, "", command_line);
    write_text_report(to_stdout ? std::cerr : std::cout, result, std::nullopt, "measured", {written.json_path});
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
