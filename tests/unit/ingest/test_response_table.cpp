#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/response_table.hpp"
#include "temp_file.hpp"

using namespace loopaudit;
using testing::TempFile;

namespace {
std::string message_of(const std::string& content) {
  TempFile file(content);
  try {
    read_response_table(file.path());
  } catch (const InputError& e) {
    return e.what();
  }
  return "no error";
}
}  // namespace

TEST_CASE("tables in re/im and in mag_db/phase_deg read to the same values", "[ingest][table]") {
  TempFile cartesian("freq_hz,re,im\n10,-1,0\n20,0,-0.5\n");
  TempFile polar("phase_deg;freq_hz;mag_db\n180;10;0\n-90;20;-6.020599913\n");
  const Response a = read_response_table(cartesian.path());
  const Response b = read_response_table(polar.path());
  REQUIRE(a.size() == 2);
  REQUIRE(b.size() == 2);
  for (std::size_t k = 0; k < 2; ++k) {
    CHECK(a.frequency_hz[k] == b.frequency_hz[k]);
    CHECK(std::abs(a.value[k] - b.value[k]) < 1e-9);
  }
  CHECK(a.coherence.empty());
}

TEST_CASE("optional columns are read; others are ignored", "[ingest][table]") {
  TempFile file("freq_hz,re,im,coherence,mag_sigma_db,note\n1,1,0,0.9,0.8686,a\n2,1,0,0.8,,b\n");
  const Response r = read_response_table(file.path());
  REQUIRE(r.coherence.size() == 2);
  CHECK(r.coherence[1] == 0.8);
  // 0.8686 dB is 0.1 neper (20/ln 10 = 8.686 dB per neper).
  CHECK(r.relative_sigma[0] == Approx(0.1).epsilon(1e-4));
  CHECK(r.relative_sigma[1] == 0.0);
}

TEST_CASE("bad tables are refused with file and line and column", "[ingest][table]") {
  CHECK_THAT(message_of("f,re,im\n1,1,0\n"), Catch::Contains("no 'freq_hz'"));
  CHECK_THAT(message_of("freq_hz,re\n1,1\n"), Catch::Contains("'re' and 'im'"));
  CHECK_THAT(message_of("freq_hz,re,im\n1,1,0\n2,x,0\n"), Catch::Contains("line 3, column 2 ('re')"));
  CHECK_THAT(message_of("freq_hz,re,im\n2,1,0\n1,1,0\n"), Catch::Contains("increasing"));
  CHECK_THAT(message_of("freq_hz,re,im\n0,1,0\n1,1,0\n"), Catch::Contains("positive"));
  CHECK_THAT(message_of("freq_hz,re,im\n1,nan,0\n2,1,0\n"), Catch::Contains("not a finite number"));
  CHECK_THAT(message_of("freq_hz,re,im\n"), Catch::Contains("no rows of data"));
}
