#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <random>

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
