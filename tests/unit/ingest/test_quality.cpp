#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>
#include <regex>
#include <utility>

#include "loopaudit/error.hpp"
#include "loopaudit/ingest/quality.hpp"
#include "loopaudit/spectral/welch.hpp"

using namespace loopaudit;

namespace {

constexpr std::size_t kSamples = 200000;

struct Channels {
  std::vector<double> z, x, y;
};

// A clean invented record: white injection, x and y moderate, no trend.
Channels clean(unsigned seed = 1) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  Channels c;
  for (std::size_t n = 0; n < kSamples; ++n) {
    const double z = 0.05 * normal(rng);
    c.z.push_back(z);
    c.x.push_back(2.0 * z + 0.01 * normal(rng));
    c.y.push_back(c.x.back() - z);
  }
  return c;
}

Diagnostics screen(const Channels& c) {
  QualityMonitor monitor({"z", "x", "y"}, 0, "test.csv");
  const std::vector<std::span<const double>> views = {c.z, c.x, c.y};
  monitor.push(views, 0);
  return monitor.findings();
}

bool has(const Diagnostics& findings, const std::string& code, const std::string& channel = "") {
  for (const auto& d : findings) {
    if (d.code == code && (channel.empty() || d.where.channel == channel)) return true;
  }
  return false;
}

}  // namespace

TEST_CASE("a clean record raises no finding", "[ingest][quality]") { CHECK(screen(clean()).empty()); }

TEST_CASE("a flat top at the extreme is reported as clipping", "[ingest][quality]") {
  Channels c = clean();
  for (double& v : c.y) v = std::clamp(v, -0.08, 0.08);  // about 11 % of samples beyond 1.6 sigma
  const Diagnostics findings = screen(c);
  CHECK(has(findings, "ingest.clipping", "y"));
  CHECK_FALSE(has(findings, "ingest.clipping", "x"));
}

namespace {

const Diagnostic* clipping(const Diagnostics& findings, const std::string& channel) {
  for (const auto& d : findings) {
    if (d.code == "ingest.clipping" && d.where.channel == channel) return &d;
  }
  return nullptr;
}

// The samples and the percentage a clipping finding states ("... 3712 samples (1.9 %) ...").
std::pair<std::size_t, double> stated_fraction(const std::string& message) {
  const std::regex pattern(R"((\d+) samples \(([0-9.]+) %\))");
  std::smatch m;
  REQUIRE(std::regex_search(message, m, pattern));
  return {std::stoul(m[1].str()), std::stod(m[2].str())};
}

// The same screening with the record handed over in blocks, as readers do.
Diagnostics screen_in_blocks(const Channels& c, std::size_t block) {
  QualityMonitor monitor({"z", "x", "y"}, 0, "test.csv");
  for (std::size_t first = 0; first < kSamples; first += block) {
    const std::size_t n = std::min(block, kSamples - first);
    const std::vector<std::span<const double>> views = {
        std::span(c.z).subspan(first, n), std::span(c.x).subspan(first, n), std::span(c.y).subspan(first, n)};
    monitor.push(views, first);
  }
  return monitor.findings();
}

// Samples of v on a 16-bit ADC's steps (full scale 1): what a scope or DAQ
// hands over, rounded to its codes and held at its rails.
double adc16(double v) { return std::clamp(std::round(v * 32768.0), -32768.0, 32767.0) / 32768.0; }

}  // namespace

TEST_CASE("broadband noise clipped at half its peak is reported with the fraction clipped", "[ingest][quality]") {
  // Gaussian noise clipped at half its largest excursion: about 2 % of the
  // samples, nearly all of them alone or in pairs, so runs of three or more
  // at the extremes see almost none of it.
  Channels c = clean();
  const double peak = std::max(*std::max_element(c.y.begin(), c.y.end()), -*std::min_element(c.y.begin(), c.y.end()));
  std::size_t clipped = 0;
  for (double& v : c.y) {
    if (std::abs(v) >= 0.5 * peak) ++clipped;
    v = std::clamp(v, -0.5 * peak, 0.5 * peak);
  }
  const double percent = 100.0 * static_cast<double>(clipped) / kSamples;
  REQUIRE(percent > 1.0);
  REQUIRE(percent < 3.0);
  const Diagnostics findings = screen(c);
  const Diagnostic* d = clipping(findings, "y");
  REQUIRE(d != nullptr);
  const auto [samples, stated_percent] = stated_fraction(d->message);
  // The count is of the samples at the two clip values; the one value just
  // inside may join it when it lies within one step of them (as close as
  // the values inside lie to each other): at most one sample a side more.
  CHECK(samples >= clipped);
  CHECK(samples <= clipped + 2);
  // Printed with one decimal: within half a unit of it.
  CHECK(std::abs(stated_percent - percent) <= 0.05);
  CHECK_FALSE(clipping(findings, "x"));
  // Streamed in blocks (of a size that splits runs and piles across them), the same finding.
  const Diagnostics streamed = screen_in_blocks(c, 4099);
  REQUIRE(clipping(streamed, "y") != nullptr);
  CHECK(clipping(streamed, "y")->message == d->message);
  CHECK(clipping(streamed, "y")->where.first_sample == d->where.first_sample);
}

TEST_CASE("a 16-bit recording held at its rails is reported and one inside them is not", "[ingest][quality]") {
  // The same noise on ADC codes: 0.05 rms is 1638 codes. Raised 12 times
  // (0.6 rms) about a tenth of it sits at the rails (+-1), a fraction found
  // by counting the codes there.
  Channels c = clean();
  for (double& v : c.y) v = adc16(v);
  CHECK_FALSE(clipping(screen(c), "y"));
  const Channels raw = clean();
  const double top = 1.0 - 1.0 / 32768.0, step = 1.0 / 32768.0;
  std::size_t railed = 0, next_to_rails = 0;
  for (std::size_t n = 0; n < kSamples; ++n) {
    const double v = c.y[n] = adc16(12.0 * raw.y[n]);
    if (v == top || v == -1.0) ++railed;
    if (v == top - step || v == -1.0 + step) ++next_to_rails;
  }
  const Diagnostics findings = screen(c);
  const Diagnostic* d = clipping(findings, "y");
  REQUIRE(d != nullptr);
  // The codes one step inside the rails count with them (within one
  // quantisation step); they hold what one code of the density there
  // holds, about 0.01 % of the samples here.
  const auto [samples, percent] = stated_fraction(d->message);
  CHECK(samples == railed + next_to_rails);
  CHECK(std::abs(percent - 100.0 * static_cast<double>(railed) / kSamples) <= 0.05);
}

TEST_CASE("sines and multisines whose samples crowd near their peaks are not clipping", "[ingest][quality]") {
  // A sine's samples crowd near its peaks (arcsine density): on ADC codes the
  // top code holds up to 2.4 times the samples of the next; slow sines stay
  // on it for runs of many samples.
  Channels c = clean();
  const auto sine = [&](double cycles_per_sample, double amplitude, bool codes) {
    for (std::size_t n = 0; n < kSamples; ++n) {
      const double v = amplitude * std::sin(2.0 * std::numbers::pi * cycles_per_sample * static_cast<double>(n));
      c.y[n] = codes ? adc16(v) : v;
    }
    return clipping(screen(c), "y") == nullptr;
  };
  CHECK(sine(1.0 / 50.0, 0.5, false));   // whole periods: every value repeats exactly
  CHECK(sine(0.0123457, 0.5, false));    // no period in samples
  CHECK(sine(1.0 / 2000.0, 0.9, true));  // slow, on ADC codes: the top code held about 40 samples a cycle
  CHECK(sine(0.0123457, 0.001, true));   // 66 codes from peak to peak
  // A periodic multisine (16 tones, random phases, period 8192): its values
  // repeat once a period, the extremes no more often than the rest.
  std::mt19937_64 rng(3);
  std::uniform_real_distribution<double> phase(0.0, 2.0 * std::numbers::pi);
  std::vector<double> phases(16);
  for (double& p : phases) p = phase(rng);
  for (std::size_t n = 0; n < kSamples; ++n) {
    double v = 0.0;
    for (std::size_t k = 0; k < phases.size(); ++k) {
      v += 0.05 * std::cos(2.0 * std::numbers::pi * static_cast<double>((k + 1) * 37 * n % 8192) / 8192.0 + phases[k]);
    }
    c.y[n] = v;
  }
  CHECK_FALSE(clipping(screen(c), "y"));
  for (double& v : c.y) v = adc16(v);
  CHECK_FALSE(clipping(screen(c), "y"));
}

TEST_CASE("a slow drift larger than the injection is reported", "[ingest][quality]") {
  Channels c = clean();
  for (std::size_t n = 0; n < kSamples; ++n) c.x[n] += 0.2 * static_cast<double>(n) / kSamples;  // 4 x RMS of z
  CHECK(has(screen(c), "ingest.drift", "x"));
}

TEST_CASE("a large DC offset against the injection is noted", "[ingest][quality]") {
  Channels c = clean();
  for (double& v : c.y) v += 12.0;  // 240 x RMS of z: an operating point seen DC-coupled
  const Diagnostics findings = screen(c);
  CHECK(has(findings, "ingest.dc-offset", "y"));
  CHECK_FALSE(has(findings, "ingest.drift", "y"));
}

TEST_CASE("a NaN sample stops the run naming channel and sample", "[ingest][quality]") {
  Channels c = clean();
  c.x[1234] = NAN;
  CHECK_THROWS_WITH(screen(c), Catch::Contains("channel 'x', sample 1234"));
}

namespace {
CrossSpectra spectra_of(const Channels& c, std::size_t segment) {
  WelchOptions options;
  options.segment_length = segment;
  WelchAccumulator welch(3, options);
  const std::vector<std::span<const double>> views = {c.z, c.x, c.y};
  welch.push(views);
  return welch.finish(1000.0);
}
}  // namespace

TEST_CASE("power near Nyquist that the injection does not explain is reported", "[spectral][quality]") {
  Channels c = clean();
  CHECK_FALSE(has(spectral_findings(spectra_of(c, 1024), {"z", "x", "y"}), "spectral.near-nyquist"));
  // A tone at 0.95 of Nyquist, unrelated to z: what an aliased switching ripple looks like.
  for (std::size_t n = 0; n < kSamples; ++n) c.y[n] += 0.05 * std::cos(0.95 * std::numbers::pi * static_cast<double>(n));
  CHECK(has(spectral_findings(spectra_of(c, 1024), {"z", "x", "y"}), "spectral.near-nyquist", "y"));
}

TEST_CASE("too few averages for the resolution asked are reported", "[spectral][quality]") {
  Channels c = clean();
  CHECK_FALSE(has(spectral_findings(spectra_of(c, 4096), {"z", "x", "y"}), "spectral.few-averages"));
  CHECK(has(spectral_findings(spectra_of(c, 65536), {"z", "x", "y"}), "spectral.few-averages"));
}
