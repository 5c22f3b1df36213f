// Delimited text recordings through the whole analysis.
#include "fuzz_common.hpp"
#include "loopmargin/error.hpp"
#include "loopmargin/ingest/recording.hpp"
#include "loopmargin/pipeline.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopmargin;
  const std::string path = fuzzing::input_file(data, size, ".csv");
  try {
    RecordingOptions options;
    options.block_size = 64;
    const auto source = open_recording(path, options);
    AnalysisOptions analysis;
    analysis.welch.segment_length = 16;
    analyze_recording(*source, analysis);
  } catch (const Error&) {
  }
  return 0;
}
