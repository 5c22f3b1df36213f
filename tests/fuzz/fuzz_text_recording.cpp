// Delimited text recordings through the whole analysis: detection of the
// excitation, then its estimator.
#include "fuzz_common.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/ingest/recording.hpp"
#include "loopaudit/pipeline/pipeline.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  const std::string path = fuzzing::input_file(data, size, ".csv");
  try {
    RecordingOptions options;
    options.block_size = 64;
    AnalysisOptions analysis;
    analysis.welch.segment_length = 16;
    analyze([&] { return open_recording(path, options); }, analysis);
  } catch (const Error&) {
  }
  return 0;
}
