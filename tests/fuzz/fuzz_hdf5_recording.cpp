// HDF5 recordings: the input is the file, read with the settings a bench
// file usually needs (none: the layout and the sample rate come from it).
#include "fuzz_common.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/ingest/recording.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  const std::string path = fuzzing::input_file(data, size, ".h5");
  try {
    RecordingOptions options;
    options.format = RecordingFormat::kHdf5;
    options.block_size = 33;
    const auto source = open_recording(path, options);
    read_all(*source);
  } catch (const Error&) {
  }
  return 0;
}
