// Raw binary recordings: the first byte picks the layout, the rest is the file.
#include "fuzz_common.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/ingest/recording.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  if (size < 1) return 0;
  const uint8_t layout = data[0];
  const std::string path = fuzzing::input_file(data + 1, size - 1, ".bin");
  try {
    RecordingOptions options;
    options.format = RecordingFormat::kRaw;
    options.sample_rate_hz = 1000.0;
    options.raw.sample_type = static_cast<SampleType>(layout & 3);
    options.raw.big_endian = (layout & 4) != 0;
    options.raw.header_bytes = (layout >> 3) & 7;
    options.channel_names = {"z", "x"};
    if (layout & 64) options.channel_names.push_back("y");
    options.block_size = 7;
    const auto source = open_recording(path, options);
    read_all(*source);
  } catch (const Error&) {
  }
  return 0;
}
