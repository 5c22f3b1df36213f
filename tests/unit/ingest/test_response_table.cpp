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
  } catch (const Error& e) {
    return e.what();
  }
  return "no error";
}
}  // namespace

TEST_CASE("tables in re/im and in mag_db/phase_deg read to the same values", "[ingest][table]") {
  TempFile cartesian("freq_hz,re,im\n10,-1,0\n20,0,-0.5\n");
  TempFile polar("phase_deg;freq_hz;mag_db\n180;10;0\n-90;20;-6.020599913\n");
  const Response a = read_response_table(cartesian.path()).response;
  const Response b = read_response_table(polar.path()).response;
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
  const Response r = read_response_table(file.path()).response;
  REQUIRE(r.coherence.size() == 2);
  CHECK(r.coherence[1] == 0.8);
  // 0.8686 dB is 0.1 neper (20/ln 10 = 8.686 dB per neper).
  CHECK(r.relative_sigma[0] == Approx(0.1).epsilon(1e-4));
  CHECK(r.relative_sigma[1] == 0.0);
}

TEST_CASE("bad tables are refused with file and line and column", "[ingest][table]") {
  CHECK_THAT(message_of("hz,re,im\n1,1,0\n"), Catch::Contains("no frequency column"));
  CHECK_THAT(message_of("freq_hz,re\n1,1\n"), Catch::Contains("a real and an imaginary column"));
  CHECK_THAT(message_of("freq_hz,re,im\n1,1,0\n2,x,0\n"), Catch::Contains("line 3, column 2 ('re')"));
  CHECK_THAT(message_of("freq_hz,re,im\n0,1,0\n1,1,0\n"), Catch::Contains("positive"));
  CHECK_THAT(message_of("freq_hz,re,im\n1,nan,0\n2,1,0\n"), Catch::Contains("not a finite number"));
  CHECK_THAT(message_of("freq_hz,re,im\n"), Catch::Contains("no rows of data"));
}

TEST_CASE("analyzer headers with units are understood", "[ingest][table]") {
  // An analyzer-style export: metadata lines, names with units, kHz.
  TempFile file("Analyzer,FRA-1\nSweep,log\nFrequency (kHz),Gain (dB),Phase (deg)\n1,20,-90\n10,0,-135\n");
  const ResponseTable t = read_response_table(file.path());
  REQUIRE(t.response.size() == 2);
  CHECK(t.response.frequency_hz[0] == 1000.0);
  CHECK(std::abs(t.response.value[0] - std::polar(10.0, -std::numbers::pi / 2)) < 1e-12);
  CHECK(t.findings.empty());
  TempFile linear("Freq [Hz];Magnitude;Phase [rad]\n10;0,5;-1,5\n20;0,25;-2\n");
  const Response r = read_response_table(linear.path()).response;
  CHECK(std::abs(r.value[1] - std::polar(0.25, -2.0)) < 1e-12);
  TempFile parts("Frequency,Real,Imag\n5,-1,0.5\n");
  CHECK(read_response_table(parts.path()).response.value[0] == std::complex<double>(-1.0, 0.5));
  CHECK_THAT(message_of("Frequency,Magnitude,Phase\n5,-20,10\n"), Catch::Contains("--gain-column"));
  CHECK_THAT(message_of("Frequency (rpm),Gain,Phase\n5,-20,10\n"), Catch::Contains("unit 'rpm'"));
}

TEST_CASE("columns may be named by the user", "[ingest][table]") {
  TempFile file("w,G,P,note\n10,-6,-100,a\n20,-12,-120,b\n");
  TableColumns columns;
  columns.frequency = "w";
  columns.gain_db = "G";
  columns.phase = "P";
  const Response r = read_response_table(file.path(), columns).response;
  CHECK(std::abs(r.value[0]) == Approx(0.50119).epsilon(1e-4));
  columns.phase = "phi";
  CHECK_THROWS_AS(read_response_table(file.path(), columns), ConfigError);
}

TEST_CASE("descending frequencies are sorted with a note and repeated ones refused", "[ingest][table]") {
  TempFile file("Frequency (Hz),Gain (dB),Phase (deg)\n300,-10,-170\n200,0,-150\n100,10,-120\n");
  const ResponseTable t = read_response_table(file.path());
  CHECK(t.response.frequency_hz == std::vector<double>{100, 200, 300});
  CHECK(std::abs(t.response.value[0]) == Approx(std::sqrt(10.0)));
  REQUIRE(t.findings.size() == 1);
  CHECK(t.findings[0].code == "table.sorted");
  const std::string repeated = message_of("freq_hz,re,im\n100,1,0\n200,1,0\n100,2,0\n");
  CHECK_THAT(repeated, Catch::Contains("100 Hz on lines 2 and 4"));
}

TEST_CASE("an unknown header lists the accepted names", "[ingest][table]") {
  const std::string message = message_of("Hertz,Volts\n1,2\n");
  CHECK_THAT(message, Catch::Contains("'Hertz' 'Volts'"));
  CHECK_THAT(message, Catch::Contains("freq_hz freq frequency f") && Catch::Contains("--freq-column"));
}

TEST_CASE("a table whose lines end with a delimiter", "[ingest][table]") {
  TempFile file("freq_hz,mag_db,phase_deg,\n10,0,-90,\n20,-6.020599913,180,\n");
  const Response r = read_response_table(file.path()).response;
  REQUIRE(r.size() == 2);
  CHECK(std::abs(r.value[0] - std::complex<double>(0, -1)) < 1e-9);
  CHECK(std::abs(r.value[1] - std::complex<double>(-0.5, 0)) < 1e-9);
  CHECK_THAT(message_of("freq_hz,mag_db,phase_deg,\n10,0,-90,\n20,0,180,x\n"),
             Catch::Contains("line 3, column 4: 'x'") && Catch::Contains("empty last cell"));
}

TEST_CASE("a table with a row of units under its header", "[ingest][table]") {
  TempFile file("Frequency,Gain,Phase\nkHz,dB,rad\n1,0,-1.5707963268\n2,-6.020599913,3.1415926536\n");
  const Response r = read_response_table(file.path()).response;
  REQUIRE(r.size() == 2);
  CHECK(r.frequency_hz == std::vector<double>{1000, 2000});
  CHECK(std::abs(r.value[0] - std::complex<double>(0, -1)) < 1e-9);
  CHECK(std::abs(r.value[1] - std::complex<double>(-0.5, 0)) < 1e-9);
}

TEST_CASE("a table with units written as name / unit", "[ingest][table]") {
  // The degree sign in UTF-8 and in Latin-1 (one byte, 0xB0).
  for (const std::string degree : {"\xC2\xB0", "\xB0"}) {
    TempFile file("Frequency / kHz;Gain / dB;Phase / " + degree + "\n1;0;-90\n2;-6,020599913;180\n");
    const Response r = read_response_table(file.path()).response;
    REQUIRE(r.size() == 2);
    CHECK(r.frequency_hz == std::vector<double>{1000, 2000});
    CHECK(std::abs(r.value[0] - std::complex<double>(0, -1)) < 1e-9);
    CHECK(std::abs(r.value[1] - std::complex<double>(-0.5, 0)) < 1e-9);
  }
  CHECK_THAT(message_of("Frequency / Hz,Gain / dB,Phase / grad\n1,0,0\n"), Catch::Contains("unit 'grad'"));
}

TEST_CASE("a simulator's AC export with one complex value per cell", "[ingest][table]") {
  TempFile polar("Freq.\tV(out)/V(in)\n1.0e+03\t(0.0dB,-90.0\xC2\xB0)\n2.0e+03\t(-6.020599913dB,180\xB0)\n");
  const Response r = read_response_table(polar.path()).response;
  REQUIRE(r.size() == 2);
  CHECK(r.frequency_hz == std::vector<double>{1000, 2000});
  CHECK(std::abs(r.value[0] - std::complex<double>(0, -1)) < 1e-9);
  CHECK(std::abs(r.value[1] - std::complex<double>(-0.5, 0)) < 1e-9);
  TempFile cartesian("Freq.\tV(out)/V(in)\n1e3\t(0,-1)\n2e3\t(-0.5,0)\n");
  const Response c = read_response_table(cartesian.path()).response;
  REQUIRE(c.size() == 2);
  CHECK(std::abs(c.value[1] - std::complex<double>(-0.5, 0)) < 1e-12);
  TempFile ratio("Freq.\tV(out)/V(in)\n1e3\t(0.5,180deg)\n");
  CHECK(std::abs(read_response_table(ratio.path()).response.value[0] - std::complex<double>(-0.5, 0)) < 1e-12);
  // A decimal comma is no complex value: "1,5" in a ';' table stays a number.
  TempFile comma("f;re;im\n1;1,5;0\n");
  CHECK(read_response_table(comma.path()).response.value[0] == std::complex<double>(1.5, 0));
  CHECK_THAT(message_of("Freq.\tV(out)/V(in)\n1e3\t(0dB,-90\xC2\xB0)\n2e3\t(0dB)\n"),
             Catch::Contains("line 3, column 2 ('V(out)/V(in)'): not one complex value: '(0dB)'"));
  CHECK_THAT(message_of("Freq.\tV(out)\tV(in)\n1e3\t(0dB,-90\xC2\xB0)\t(0dB,0\xC2\xB0)\n"),
             Catch::Contains("2 columns hold complex values") && Catch::Contains("--gain-column"));
  CHECK_THAT(message_of("Freq.\tV(out)/V(in)\nStep Information: R=1\n1e3\t(0dB,-90\xC2\xB0)\nStep Information: R=2\n"),
             Catch::Contains("line 2: 'Step Information: R=1'") && Catch::Contains("export one run"));
}
