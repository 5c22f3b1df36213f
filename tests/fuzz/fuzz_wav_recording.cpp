// WAV recordings (the container is libsndfile's to parse; this covers our side).
#include "fuzz_common.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/ingest/recording.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  const std::string path = fuzzing::input_file(data, size, ".wav");
  try {
    RecordingOptions options;
    options.block_size = 33;
    const auto source = open_recording(path, options);
    read_all(*source);
  } catch (const Error&) {
  }
  return 0;
}
