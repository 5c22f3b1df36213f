// Run settings and scenario files (TOML).
#include "fuzz_common.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/config/run_config.hpp"
#include "loopaudit/synth/scenario.hpp"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace loopaudit;
  const std::string path = fuzzing::input_file(data, size, ".toml");
  try {
    load_run_settings(path);
  } catch (const Error&) {
  }
  try {
    load_scenario(path);  // validated, not simulated: a valid scenario may ask for hours of samples
  } catch (const Error&) {
  }
  return 0;
}
