#include <catch2/catch.hpp>
#include <cstdio>
#include <random>
#include <sstream>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/delimited.hpp"
#include "temp_file.hpp"

using namespace loopaudit;
using testing::TempFile;

namespace {

Record read(const std::string& content, DelimitedOptions options = {}) {
  TempFile file(content);
  const auto source = open_delimited(file.path(), options);
  return read_all(*source);
}

std::string message_of(const std::string& content, DelimitedOptions options = {}) {
  try {
    read(content, options);
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}

}  // namespace

TEST_CASE("a CSV with a time column gives channels and the sample rate", "[ingest]") {
  const Record r = read("t,z,x,y\n0,1,2,3\n0.001,4,5,6\n0.002,7,8,9\n");
  REQUIRE(r.channel_names == std::vector<std::string>{"z", "x", "y"});
  CHECK(r.sample_rate_hz == Approx(1000.0));
  CHECK(r.channels[1] == std::vector<double>{2, 5, 8});
}

TEST_CASE("delimiters are detected: tab and semicolon", "[ingest]") {
  CHECK(read("time\tz\tx\n0\t1\t2\n0.5\t3\t4\n").sample_rate_hz == Approx(2.0));
  CHECK(read("time_s;a;b\n0;1;2\n0.25;3;4\n").channel_names == std::vector<std::string>{"a", "b"});
}

TEST_CASE("without a time column the stated sample rate is used", "[ingest]") {
  DelimitedOptions options;
  options.sample_rate_hz = 48000.0;
  const Record r = read("z,x,y\n1,2,3\n4,5,6\n", options);
  CHECK(r.sample_rate_hz == 48000.0);
  CHECK(r.sample_count() == 2);
  CHECK_THAT(message_of("z,x,y\n1,2,3\n"), Catch::Contains("no time column"));
}

TEST_CASE("stamps printed to 7 significant digits are accepted past 10^6 samples", "[ingest]") {
  // At 1 MHz, %.7g stamps past t = 1 s step by 0 or 2 us: rounding, not a fault.
  std::ostringstream text;
  text << "t,z\n";
  const std::size_t count = 1'200'000;
  char stamp[32];
  for (std::size_t n = 0; n < count; ++n) {
    std::snprintf(stamp, sizeof stamp, "%.7g", static_cast<double>(n) * 1e-6);
    text << stamp << ",1\n";
  }
  const Record r = read(text.str());
  CHECK(r.sample_count() == count);
  // Rate from the whole span: the last stamp is rounded by at most 5e-7 s.
  CHECK(r.sample_rate_hz == Approx(1e6).epsilon(1e-6));
}

TEST_CASE("bad cells name the file and line and column", "[ingest]") {
  const std::string message = message_of("t,z,x\n0,1,2\n0.1,abc,3\n");
  CHECK_THAT(message, Catch::Contains("line 3, column 2 ('z')"));
  CHECK_THAT(message, Catch::Contains("'abc'"));
  CHECK_THAT(message_of("t,z,x\n0,1,2\n0.1,nan,3\n"), Catch::Contains("not a finite number"));
  CHECK_THAT(message_of("t,z,x\n0,1,2\n0.1,inf,3\n"), Catch::Contains("line 3, column 2"));
  CHECK_THAT(message_of("t,z,x\n0,1\n"), Catch::Contains("line 2: 2 cells where the header names 3"));
  CHECK_THAT(message_of("t,z,x\n0,1,2,3\n"), Catch::Contains("more cells"));
}

TEST_CASE("time columns that go back and stall or jump are refused", "[ingest]") {
  CHECK_THAT(message_of("t,z\n0,1\n0.1,1\n0.2,1\n0.15,1\n"), Catch::Contains("line 5"));
  CHECK_THAT(message_of("t,z\n0.00,1\n0.10,1\n0.10,1\n0.30,1\n"), Catch::Contains("does not increase"));
  std::ostringstream gap;
  gap << "t,z\n";
  for (int n = 0; n < 100; ++n) gap << (n < 50 ? n : n + 3) * 0.001 << ",0\n";
  CHECK_THAT(message_of(gap.str()), Catch::Contains("line 52") && Catch::Contains("not uniform"));
}

TEST_CASE("headers and files that cannot be used are refused", "[ingest]") {
  CHECK_THAT(message_of(""), Catch::Contains("empty"));
  CHECK_THAT(message_of("t,z\n"), Catch::Contains("no data rows"));
  CHECK_THAT(message_of("0,1,2\n1,2,3\n"), Catch::Contains("must name every column"));
  CHECK_THAT(message_of("t,z\n0,1\n"), Catch::Contains("fewer than two rows"));
  CHECK_THROWS_AS(open_delimited("/nonexistent/rec.csv", {}), InputError);
  DelimitedOptions options;
  options.time_column = "clock";
  CHECK_THROWS_AS(read("t,z\n0,1\n1,1\n", options), ConfigError);
}

TEST_CASE("Windows line ends and blank lines and a missing last newline are fine", "[ingest]") {
  const Record r = read("t,z\r\n\r\n0,1\r\n0.5,2\r\n\r\n1.0,3");
  CHECK(r.channels[0] == std::vector<double>{1, 2, 3});
  CHECK(r.sample_rate_hz == Approx(2.0));
}

TEST_CASE("blocks are handed out in order and sized as asked", "[ingest]") {
  std::ostringstream text;
  text << "t,a\n";
  for (int n = 0; n < 1000; ++n) text << n * 0.01 << ',' << n << '\n';
  TempFile file(text.str());
  DelimitedOptions options;
  options.block_size = 64;
  const auto source = open_delimited(file.path(), options);
  SampleBlock block;
  std::size_t expected_first = 0;
  while (source->next(block)) {
    CHECK(block.first_sample == expected_first);
    CHECK(block.channels[0].front() == static_cast<double>(expected_first));
    CHECK(block.size() <= 64);
    expected_first += block.size();
  }
  CHECK(expected_first == 1000);
  CHECK(source->summary().sample_rate_hz == Approx(100.0));
}

TEST_CASE("comment lines before the header and among the rows are skipped", "[ingest]") {
  const Record r = read("# scope export\n% probe 10:1\n\nt,z\n0,1\n# marker\n0.5,2\n");
  CHECK(r.channel_names == std::vector<std::string>{"z"});
  CHECK(r.channels[0] == std::vector<double>{1, 2});
}

TEST_CASE("unit suffixes are taken off names and a time unit scales the stamps", "[ingest]") {
  TempFile file("time [ms],vout (V),iL [A]\n0,1,2\n0.5,3,4\n1.0,5,6\n");
  const auto source = open_delimited(file.path(), {});
  const Record r = read_all(*source);
  CHECK(r.channel_names == std::vector<std::string>{"vout", "iL"});
  CHECK(source->channel_units() == std::vector<std::string>{"V", "A"});
  CHECK(r.sample_rate_hz == Approx(2000.0));  // 0.5 ms a sample
  CHECK_THAT(message_of("t [furlong],z\n0,1\n1,2\n"), Catch::Contains("'furlong'"));
}

TEST_CASE("semicolon files may use a decimal comma", "[ingest]") {
  const Record r = read("t;z;x\n0,000;1,5;-2,25\n0,001;3,0;4\n");
  CHECK(r.sample_rate_hz == Approx(1000.0));
  CHECK(r.channels[0] == std::vector<double>{1.5, 3.0});
  CHECK(r.channels[1] == std::vector<double>{-2.25, 4.0});
}

TEST_CASE("a jittering sample clock is reported and a clean one is not", "[ingest][quality]") {
  // Stamps printed to 1 ns; samples every 1 us with 20 ns RMS jitter, invented:
  // steps then scatter by 28 ns RMS, above the 1 % (10 ns) the check allows.
  std::mt19937_64 rng(2);
  std::normal_distribution<double> normal(0.0, 20e-9);
  std::ostringstream jittery, clean;
  jittery << "t,z\n";
  clean << "t,z\n";
  for (int n = 0; n < 5000; ++n) {
    char stamp[32];
    std::snprintf(stamp, sizeof stamp, "%.9f", n * 1e-6 + normal(rng));
    jittery << stamp << ",0\n";
    std::snprintf(stamp, sizeof stamp, "%.9f", n * 1e-6);
    clean << stamp << ",0\n";
  }
  const auto code_of = [](const Record& r) { return r.findings.empty() ? std::string() : r.findings.front().code; };
  CHECK(code_of(read(jittery.str())) == "ingest.time-jitter");
  CHECK(read(clean.str()).findings.empty());
}

TEST_CASE("a gigantic line is refused without growing memory without bound", "[ingest]") {
  std::string huge = "t,z\n0,";
  huge.append(20u << 20, '1');  // 20 MiB with no line end
  CHECK_THAT(message_of(huge), Catch::Contains("line 2 is longer than 16 MiB"));
}

TEST_CASE("mixed line ends and a truncated last row", "[ingest]") {
  CHECK(read("t,z\r\n0,1\n0.5,2\r\n1,3").channels[0] == std::vector<double>{1, 2, 3});
  CHECK_THAT(message_of("t,z,x\n0,1,2\n0.5,2,"), Catch::Contains("line 3, column 3"));
}

TEST_CASE("a UTF-8 byte-order mark before the header is not part of it", "[ingest]") {
  // Spreadsheets save "CSV UTF-8" with EF BB BF first (the Unicode standard's byte-order mark in UTF-8).
  const Record r = read("\xEF\xBB\xBFt,z,x,y\n0,1,2,3\n0.001,4,5,6\n0.002,7,8,9\n");
  REQUIRE(r.channel_names == std::vector<std::string>{"z", "x", "y"});
  CHECK(r.sample_rate_hz == Approx(1000.0));
}

TEST_CASE("two columns of one name are refused with both named", "[ingest]") {
  // t,z,x,x,y: --x x could reach only the first; a scope's Volt,Volt,Volt the same.
  const std::string message = message_of("t,z,x,x,y\n0,1,2,3,4\n0.001,1,2,3,4\n0.002,1,2,3,4\n");
  CHECK_THAT(message, Catch::Contains("columns 3 and 4 are both named 'x'"));
}
