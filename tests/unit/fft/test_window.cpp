#include <catch2/catch.hpp>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/welch.hpp"
#include "loopaudit/fft/window.hpp"

using namespace loopaudit;

namespace {
// Periodic windows of this length match the closed forms to about 1e-6.
constexpr std::size_t kLength = 4096;
// Closed forms for cosine sums hold to rounding for periodic windows.
constexpr double kExact = 1e-9;
}  // namespace

TEST_CASE("coherent gain and ENBW of cosine-sum windows match their closed forms", "[spectral][window]") {
  // CG = a0, ENBW = (a0^2 + 0.5 sum a_k^2) / a0^2 for a periodic cosine sum
  // (exact; REFERENCES.md section 1, Heinzel, Rudiger, Schilling 2002, App. C).
  struct Case {
    WindowKind kind;
    double coherent_gain;
    double enbw_bins;
  };
  const double bh_enbw = (0.35875 * 0.35875 + 0.5 * (0.48829 * 0.48829 + 0.14128 * 0.14128 + 0.01168 * 0.01168)) /
                         (0.35875 * 0.35875);
  const Case cases[] = {
      {WindowKind::kRectangular, 1.0, 1.0},
      {WindowKind::kHann, 0.5, 1.5},
      {WindowKind::kHamming, 0.54, (0.54 * 0.54 + 0.5 * 0.46 * 0.46) / (0.54 * 0.54)},
      {WindowKind::kBlackmanHarris, 0.35875, bh_enbw},
  };
  for (const Case& c : cases) {
    const WindowFigures f = window_figures(make_window(c.kind, kLength));
    CHECK(f.coherent_gain == Approx(c.coherent_gain).margin(kExact));
    CHECK(f.enbw_bins == Approx(c.enbw_bins).margin(kExact));
  }
}

TEST_CASE("window figures agree with Heinzel et al. and Harris", "[spectral][window]") {
  // Heinzel, Rudiger, Schilling 2002, Appendix C: NENBW and flatness
  // (scalloping loss) to the 4 decimals printed there.
  constexpr double kPrinted = 1e-4;
  const WindowFigures hann = window_figures(make_window(WindowKind::kHann, kLength));
  CHECK(hann.enbw_bins == Approx(1.5).margin(kPrinted));
  CHECK(hann.scalloping_loss_db == Approx(1.4236).margin(kPrinted));
  const WindowFigures hamming = window_figures(make_window(WindowKind::kHamming, kLength));
  CHECK(hamming.enbw_bins == Approx(1.3628).margin(kPrinted));
  CHECK(hamming.scalloping_loss_db == Approx(1.7514).margin(kPrinted));
  const WindowFigures bh = window_figures(make_window(WindowKind::kBlackmanHarris, kLength));
  CHECK(bh.enbw_bins == Approx(2.0044).margin(kPrinted));
  CHECK(bh.scalloping_loss_db == Approx(0.8256).margin(kPrinted));
  const WindowFigures rect = window_figures(make_window(WindowKind::kRectangular, kLength));
  // Harris 1978, Table I, as recalled (from memory): rectangular 3.92 dB,
  // Hann 1.42 dB, Hamming 1.78 dB; Harris's Hamming differs from the exact
  // 1.7514 by about 0.03 dB (REFERENCES.md section 1).
  CHECK(rect.scalloping_loss_db == Approx(3.92).margin(0.01));
  CHECK(hann.scalloping_loss_db == Approx(1.42).margin(0.01));
  CHECK(hamming.scalloping_loss_db == Approx(1.78).margin(0.03));
}

TEST_CASE("overlap correlation and effective averages follow Welch 1967", "[spectral][window]") {
  const auto hann = make_window(WindowKind::kHann, kLength);
  // Hann at 50 % overlap: c(1) = 1/6 (REFERENCES.md section 3, exact).
  CHECK(overlap_correlation(hann, kLength / 2) == Approx(1.0 / 6.0).margin(1e-9));
  // K Var / P^2 = 1 + (K - 1)/(18 K): K_eff = 9.524 for K = 10, 94.79 for K = 100.
  CHECK(effective_averages(hann, kLength / 2, 10) == Approx(10.0 / (1.0 + 9.0 / 180.0)).epsilon(1e-9));
  CHECK(effective_averages(hann, kLength / 2, 10) == Approx(9.524).margin(1e-3));
  CHECK(effective_averages(hann, kLength / 2, 100) == Approx(94.79).margin(1e-2));
  // Hann at 75 %: variance factor 1.92454 for many segments (REFERENCES.md section 3).
  const std::size_t many = 100000;
  CHECK(many / effective_averages(hann, kLength / 4, many) == Approx(1.92454).margin(1e-4));
  // Without overlap the segments are independent.
  CHECK(effective_averages(hann, kLength, 7) == Approx(7.0));
}

TEST_CASE("unknown window names are refused with the list of names", "[spectral][window]") {
  CHECK(window_from_name("hann") == WindowKind::kHann);
  CHECK(window_from_name("blackman-harris") == WindowKind::kBlackmanHarris);
  CHECK_THROWS_AS(window_from_name("kaiser"), ConfigError);
  CHECK_THROWS_WITH(window_from_name("kaiser"), Catch::Contains("rectangular, hann, hamming, blackman-harris"));
}
