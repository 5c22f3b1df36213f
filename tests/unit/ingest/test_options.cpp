#include <catch2/catch.hpp>
#include <cmath>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/delimited.hpp"
#include "loopaudit/ingest/recording.hpp"

using namespace loopaudit;
using Catch::Contains;

TEST_CASE("the defaults of the reading options are valid", "[ingest][options]") {
  CHECK_NOTHROW(DelimitedOptions{}.validate());
  CHECK_NOTHROW(RecordingOptions{}.validate());
}

TEST_CASE("text reading options out of range are refused before the file is opened", "[ingest][options]") {
  CHECK_THROWS_WITH(DelimitedOptions{.sample_rate_hz = -1.0}.validate(),
                    "'sample_rate_hz' -1 is out of range; use a rate from 1e-06 Hz to 1e+12 Hz");
  CHECK_THROWS_WITH(DelimitedOptions{.block_size = 0}.validate(), Contains("'block_size' 0"));
  CHECK_THROWS_AS(DelimitedOptions{.block_size = kMaxBlockSize + 1}.validate(), ConfigError);
  CHECK_THROWS_WITH(DelimitedOptions{.delimiter = '.'}.validate(), Contains("'delimiter' '.'"));
  CHECK_NOTHROW(DelimitedOptions{.delimiter = '\t'}.validate());
  // A ConfigError, not the InputError of the missing file: the options come first.
  CHECK_THROWS_AS(open_delimited("/nonexistent/rec.csv", {.sample_rate_hz = 0.0}), ConfigError);
}

TEST_CASE("recording options out of range are refused before the file is opened", "[ingest][options]") {
  RecordingOptions options;
  options.sample_rate_hz = 0.0;
  CHECK_THROWS_WITH(options.validate(), Contains("'sample_rate_hz' 0 is out of range"));
  CHECK_THROWS_AS(open_recording("/nonexistent/rec.bin", options), ConfigError);
  options.sample_rate_hz = 1000.0;
  options.block_size = 0;
  CHECK_THROWS_AS(options.validate(), ConfigError);
  options.block_size = 1024;
  options.scale = {1.0, NAN};
  CHECK_THROWS_WITH(options.validate(), Contains("'scale' nan"));
  options.scale = {};
  options.offset = {INFINITY};
  CHECK_THROWS_AS(options.validate(), ConfigError);
}
