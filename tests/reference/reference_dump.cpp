// Test helper: prints what loopaudit computes, for comparison with scipy,
// numpy and h5py.
//   reference_dump spectra FILE SAMPLE_RATE SEGMENT OVERLAP WINDOW
//     -> freq_hz, then re and im of S_ij for every pair i <= j
//   reference_dump window WINDOW LENGTH  -> one coefficient a line
//   reference_dump samples FILE [RUN_SETTINGS.toml]
//     -> line 1: sample rate; line 2: channel names; then one row a sample
#include <cstdio>
#include <iostream>
#include <string>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/delimited.hpp"
#include "loopaudit/ingest/recording.hpp"
#include "loopaudit/config/run_config.hpp"
#include "loopaudit/spectral/welch.hpp"

using namespace loopaudit;

namespace {

int dump_spectra(char** argv) {
  DelimitedOptions ingest;
  ingest.sample_rate_hz = std::stod(argv[3]);
  const auto source = open_delimited(argv[2], ingest);
  WelchOptions options;
  options.segment_length = std::stoul(argv[4]);
  options.overlap = std::stod(argv[5]);
  options.window = window_from_name(argv[6]);
  const std::size_t channels = source->channel_names().size();
  WelchAccumulator welch(channels, options);
  SampleBlock block;
  while (source->next(block)) {
    std::vector<std::span<const double>> views(block.channels.begin(), block.channels.end());
    welch.push(views);
  }
  const CrossSpectra s = welch.finish(source->summary().sample_rate_hz);
  for (std::size_t k = 0; k < s.line_count(); ++k) {
    std::printf("%.17g", s.frequency_hz(k));
    for (const auto& pair : s.pairs) std::printf(",%.17g,%.17g", pair[k].real(), pair[k].imag());
    std::printf("\n");
  }
  return 0;
}

int dump_window(char** argv) {
  for (double w : make_window(window_from_name(argv[2]), std::stoul(argv[3]))) std::printf("%.17g\n", w);
  return 0;
}

int dump_samples(int argc, char** argv) {
  const RunSettings settings = argc > 3 ? load_run_settings(argv[3]) : RunSettings{};
  const auto source = open_recording(argv[2], settings.recording);
  const Record record = read_all(*source);
  std::printf("%.17g\n", record.sample_rate_hz);
  for (std::size_t c = 0; c < record.channel_names.size(); ++c) {
    std::printf("%s%s", c ? "," : "", record.channel_names[c].c_str());
  }
  std::printf("\n");
  for (std::size_t n = 0; n < record.sample_count(); ++n) {
    for (std::size_t c = 0; c < record.channels.size(); ++c) std::printf("%s%.17g", c ? "," : "", record.channels[c][n]);
    std::printf("\n");
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string mode = argc > 1 ? argv[1] : "";
  if (mode == "spectra" && argc == 7) return dump_spectra(argv);
  if (mode == "window" && argc == 4) return dump_window(argv);
  try {
    if (mode == "samples" && (argc == 3 || argc == 4)) return dump_samples(argc, argv);
  } catch (const Error& e) {
    std::cerr << e.what() << "\n";
    return 3;
  }
  std::cerr << "usage: reference_dump spectra FILE SAMPLE_RATE SEGMENT OVERLAP WINDOW | window WINDOW LENGTH"
               " | samples FILE [RUN_SETTINGS]\n";
  return 2;
}
