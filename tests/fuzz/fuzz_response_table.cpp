// Frequency-response tables through the margin analysis.
#include "fuzz_common.hpp"
#include "loopmargin/error.hpp"
#include "loopmargin/ingest/response_table.hpp"
#include "loopmargin/pipeline.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopmargin;
  const std::string path = fuzzing::input_file(data, size, ".csv");
  try {
    analyze_response(path, read_response_table(path), Convention::kDirect);
  } catch (const Error&) {
  }
  return 0;
}
