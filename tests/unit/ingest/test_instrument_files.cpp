// Files as scopes, DAQs and analyzers write them: metadata lines above the
// header, decimal commas, units in headers, per-channel probe factors. The
// files are invented here, in the shape such exports commonly take.
#include <catch2/catch.hpp>

#include "ingest/header_search.hpp"
#include "loopaudit/error.hpp"
#include "loopaudit/ingest/delimited.hpp"
#include "loopaudit/ingest/recording.hpp"
#include "temp_file.hpp"

using namespace loopaudit;
using testing::TempFile;

namespace {

Record read_text(const std::string& content, DelimitedOptions options = {}) {
  TempFile file(content);
  const auto source = open_delimited(file.path(), options);
  return read_all(*source);
}

std::string message_of(const std::string& content, DelimitedOptions options = {}) {
  try {
    read_text(content, options);
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}

const char* kScopeExport =
    "Model,DSO 4104\n"
    "Serial Number,XY12345\n"
    "Sample Interval,1e-06\n"
    "Record Length,3\n"
    "\n"
    "TIME,CH1,CH2,CH3\n"
    "0,1,2,3\n"
    "1e-06,4,5,6\n"
    "2e-06,7,8,9\n";

}  // namespace

TEST_CASE("metadata lines above the header are skipped", "[ingest][instrument]") {
  const Record r = read_text(kScopeExport);
  CHECK(r.channel_names == std::vector<std::string>{"CH1", "CH2", "CH3"});
  CHECK(r.sample_rate_hz == Approx(1e6));
  CHECK(r.channels[2] == std::vector<double>{3, 6, 9});
}

TEST_CASE("metadata lines and decimal commas with semicolons", "[ingest][instrument]") {
  const Record r = read_text(
      "Instrument;DAQ-8\nSample Interval;2,0E-06\nChannels;2\nTime [us];U1 [V];U2 [V]\n0,0;1,5;-2,25\n2,0;3,0;4\n"
      "4,0;-0,5;0,125\n");
  CHECK(r.channel_names == std::vector<std::string>{"U1", "U2"});
  CHECK(r.sample_rate_hz == Approx(500000.0));
  CHECK(r.channels[0] == std::vector<double>{1.5, 3.0, -0.5});
  CHECK(r.channels[1] == std::vector<double>{-2.25, 4.0, 0.125});
}

TEST_CASE("lines_before_header skips exactly that many lines", "[ingest][instrument]") {
  DelimitedOptions options;
  options.lines_before_header = 2;
  // The first line would pass for a header of two columns over rows of numbers.
  const Record r = read_text("a,b\n1,2\nt,z\n0,5\n0.5,6\n", options);
  CHECK(r.channel_names == std::vector<std::string>{"z"});
  CHECK(r.channels[0] == std::vector<double>{5, 6});
  options.lines_before_header = 9;
  CHECK_THAT(message_of("t,z\n0,1\n", options), Catch::Contains("--skip-rows"));
}

TEST_CASE("without a time column the message names --sample-rate and what the metadata say", "[ingest][instrument]") {
  const std::string message = message_of("Device: logger 3\nSampling rate: 250000\nch1,ch2\n1,2\n3,4\n");
  CHECK_THAT(message, Catch::Contains("--sample-rate HZ"));
  CHECK_THAT(message, Catch::Contains("'ch1' 'ch2'"));
  CHECK_THAT(message, Catch::Contains("line 2 ('Sampling rate: 250000') suggests --sample-rate 250000"));
}

TEST_CASE("sample intervals and rates in metadata lines are understood with their units", "[ingest][instrument]") {
  using detail::find_rate_hint;
  const auto rate = [](const std::string& line) {
    const auto hint = find_rate_hint({{1, line}});
    return hint ? hint->sample_rate_hz : 0.0;
  };
  CHECK(rate("XInc;2,0E-06") == Approx(500000.0));
  CHECK(rate("Sample Rate,250 kS/s") == Approx(250000.0));
  CHECK(rate("Sample interval: 10 us") == Approx(100000.0));
  CHECK(rate("Sampling frequency = 1.5 MHz") == Approx(1.5e6));
  CHECK(rate("Record Length,10000") == 0.0);
  CHECK(rate("Trigger Level,0.5 V") == 0.0);
}

TEST_CASE("a file whose header cannot be found says how to skip the lines above it", "[ingest][instrument]") {
  CHECK_THAT(message_of("Serial,1234\nt,z\n0,1\n0.5,x\n"), Catch::Contains("--skip-rows N"));
}

TEST_CASE("a per-channel scale by name applies to text recordings", "[ingest][instrument]") {
  TempFile file("t,z,x,y\n0,1,2,3\n0.5,4,5,6\n", ".csv");
  RecordingOptions options;
  options.named_scale = {{"y", -10.0}};
  options.scale = {2.0};  // every channel, under the named factor
  const auto source = open_recording(file.path(), options);
  const Record r = read_all(*source);
  CHECK(r.channels[0] == std::vector<double>{2, 8});
  CHECK(r.channels[2] == std::vector<double>{-60, -120});
  options.named_scale = {{"vout", 10.0}};
  try {
    open_recording(file.path(), options);
    FAIL("a scale for a channel the file lacks must be refused");
  } catch (const ConfigError& e) {
    CHECK_THAT(std::string(e.what()), Catch::Contains("'vout'") && Catch::Contains("'z' 'x' 'y'"));
  }
  options.named_scale = {{"y", 0.0}};
  CHECK_THROWS_AS(open_recording(file.path(), options), ConfigError);
}

TEST_CASE("a delimiter at the end of every line leaves no unnamed column", "[ingest][instrument]") {
  const Record r = read_text("t,z,x,y,\n0,1,2,3,\n0.5,4,5,6,\n1,7,8,9,\n");
  CHECK(r.channel_names == std::vector<std::string>{"z", "x", "y"});
  CHECK(r.sample_rate_hz == Approx(2.0));
  CHECK(r.channels[2] == std::vector<double>{3, 6, 9});
  const Record tabs = read_text("time\tv1\t\r\n0\t1\t\r\n1e-3\t2\t\r\n");
  CHECK(tabs.channels[0] == std::vector<double>{1, 2});
  // A value under the empty last cell is refused with its line and column.
  const std::string message = message_of("t,z,x,y,\n0,1,2,3,\n0.5,4,5,6,\n1,7,8,9,\n1.5,1,2,3,4\n");
  CHECK_THAT(message, Catch::Contains("line 5, column 5: '4'") && Catch::Contains("empty last cell"));
  CHECK_THAT(message_of("t,z,x,y,\n0,1,2,3,\n0.5,4,5,6,\n1,7,8,9\n"), Catch::Contains("line 4: 4 cells"));
}

TEST_CASE("a row of units under the header gives the channels their units", "[ingest][instrument]") {
  TempFile file("X,CH1,CH2,CH3\nSecond,Volt,Volt,Volt\n0,1,2,3\n1e-06,4,5,6\n2e-06,7,8,9\n");
  const auto source = open_delimited(file.path(), {});
  CHECK(source->channel_names() == std::vector<std::string>{"CH1", "CH2", "CH3"});
  CHECK(source->channel_units() == std::vector<std::string>{"Volt", "Volt", "Volt"});
  const Record r = read_all(*source);
  CHECK(r.sample_rate_hz == Approx(1e6));  // X is the time: its unit is one
  CHECK(r.channels[0] == std::vector<double>{1, 4, 7});
  // Units in brackets, a time in ms, a trailing delimiter, and below metadata.
  const Record ms = read_text("Model;DAQ\nt;u1;u2;\n(ms);(mV);[A];\n0;1;2;\n0,5;3;4;\n1,0;5;6;\n");
  CHECK(ms.sample_rate_hz == Approx(2000.0));
  CHECK(ms.channels[1] == std::vector<double>{2, 4, 6});
  // After --skip-rows too.
  DelimitedOptions skip;
  skip.lines_before_header = 1;
  const Record skipped = read_text("Model,DSO\nX,CH1\ns,V\n0,1\n0.25,2\n", skip);
  CHECK(skipped.sample_rate_hz == Approx(4.0));
  // A second line of names that are not units is still taken as the header.
  const Record names = read_text("Name,Value\nt,v\n0,1\n1,2\n");
  CHECK(names.channel_names == std::vector<std::string>{"v"});
}

TEST_CASE("units written as name / unit and sec as seconds", "[ingest][instrument]") {
  TempFile file("Time / ms;CH1 / V;CH2 / A\n0;1;2\n0,5;3;4\n");
  const auto source = open_delimited(file.path(), {});
  CHECK(source->channel_names() == std::vector<std::string>{"CH1", "CH2"});
  CHECK(source->channel_units() == std::vector<std::string>{"V", "A"});
  CHECK(read_all(*source).sample_rate_hz == Approx(2000.0));
  CHECK(read_text("time (sec),z\n0,1\n0.5,2\n").sample_rate_hz == Approx(2.0));
  // Without a blank before the slash the name stays whole.
  CHECK(read_text("t,vout/vin\n0,1\n1,2\n").channel_names == std::vector<std::string>{"vout/vin"});
}

TEST_CASE("channel names given for a text file with a header are reported unused", "[ingest][instrument]") {
  TempFile file("t,z,x,y\n0,1,2,3\n0.5,4,5,6\n", ".csv");
  RecordingOptions options;
  options.channel_names = {"a", "b", "c"};
  const auto source = open_recording(file.path(), options);
  CHECK(source->channel_names() == std::vector<std::string>{"z", "x", "y"});
  read_all(*source);
  const auto findings = source->summary().findings;
  const auto unused = std::find_if(findings.begin(), findings.end(),
                                   [](const Diagnostic& d) { return d.code == "ingest.channels-unused"; });
  REQUIRE(unused != findings.end());
  CHECK(unused->severity == Severity::kWarning);
  CHECK_THAT(unused->message, Catch::Contains("--channels") && Catch::Contains("'z' 'x' 'y'"));
  options.channel_names.clear();
  const auto plain = open_recording(file.path(), options);
  read_all(*plain);
  CHECK(plain->summary().findings.empty());
}
