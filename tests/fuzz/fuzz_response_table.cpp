// Frequency-response tables through the margin analysis, and the same text
// read as a dwell schedule.
#include "fuzz_common.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/excitation/schedule.hpp"
#include "loopaudit/ingest/response_table.hpp"
#include "loopaudit/pipeline/pipeline.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  const std::string path = fuzzing::input_file(data, size, ".csv");
  try {
    analyze_response(path, read_response_table(path).response, Convention::kDirect);
  } catch (const Error&) {
  }
  try {
    dwells_in_samples(read_dwell_schedule(path), 1000.0, 100000, path);
  } catch (const Error&) {
  }
  return 0;
}
