#include <catch2/catch.hpp>

#include "loopaudit/error.hpp"
#include "loopaudit/spectral/welch.hpp"
#include "loopaudit/fft/window.hpp"
#include "reference_data.hpp"

using namespace loopaudit;

namespace {
// Periodic windows of this length match the closed forms to about 1e-6.
constexpr std::size_t kLength = 4096;
// Closed forms for cosine sums hold to rounding for periodic windows.
constexpr double kExact = 1e-9;
}  // namespace

TEST_CASE("coherent gain and ENBW of cosine-sum windows match their closed forms", "[spectral][window]") {
  // CG = a0, ENBW = (a0^2 + 0.5 sum a_k^2) / a0^2 for a periodic cosine sum
  // (exact; data/reference/windows.csv, columns coherent_gain and enbw_bins).
  const reference::Table windows("windows.csv");
  REQUIRE(windows.rows().size() == 4);
  for (const auto& row : windows.rows()) {
    INFO(row.text("window"));
    const WindowFigures f = window_figures(make_window(window_from_name(row.text("window")), kLength));
    CHECK(f.coherent_gain == Approx(row.number("coherent_gain")).margin(kExact));
    CHECK(f.enbw_bins == Approx(row.number("enbw_bins")).margin(kExact));
  }
}

TEST_CASE("window figures agree with Heinzel et al. and Harris", "[spectral][window]") {
  // Heinzel, Rudiger, Schilling 2002, Appendix C: NENBW and flatness
  // (scalloping loss) to the 4 decimals printed there (data/reference/windows.csv,
  // columns heinzel_nenbw_bins and heinzel_scalloping_loss_db).
  constexpr double kPrinted = 1e-4;
  const reference::Table windows("windows.csv");
  const auto heinzel = [&](const WindowFigures& f, std::string_view window) {
    INFO(window);
    const auto row = windows.row(window);
    CHECK(f.enbw_bins == Approx(row.number("heinzel_nenbw_bins")).margin(kPrinted));
    CHECK(f.scalloping_loss_db == Approx(row.number("heinzel_scalloping_loss_db")).margin(kPrinted));
  };
  const WindowFigures hann = window_figures(make_window(WindowKind::kHann, kLength));
  heinzel(hann, "hann");
  const WindowFigures hamming = window_figures(make_window(WindowKind::kHamming, kLength));
  heinzel(hamming, "hamming");
  const WindowFigures bh = window_figures(make_window(WindowKind::kBlackmanHarris, kLength));
  heinzel(bh, "blackman-harris");
  const WindowFigures rect = window_figures(make_window(WindowKind::kRectangular, kLength));
  // Harris 1978, Table I, as recalled (from memory; data/reference/windows.csv,
  // column harris_scalloping_loss_db): rectangular 3.92 dB, Hann 1.42 dB,
  // Hamming 1.78 dB; Harris's Hamming differs from the exact 1.7514 by about 0.03 dB.
  const auto harris = [&](std::string_view window) { return windows.row(window).number("harris_scalloping_loss_db"); };
  CHECK(rect.scalloping_loss_db == Approx(harris("rectangular")).margin(0.01));
  CHECK(hann.scalloping_loss_db == Approx(harris("hann")).margin(0.01));
  CHECK(hamming.scalloping_loss_db == Approx(harris("hamming")).margin(0.03));
}

TEST_CASE("overlap correlation and effective averages follow Welch 1967", "[spectral][window]") {
  const auto hann = make_window(WindowKind::kHann, kLength);
  // data/reference/welch_overlap.csv (exact).
  const reference::Table overlap("welch_overlap.csv");
  const auto ten = overlap.row_where({{"window", "hann"}, {"overlap", "0.5"}, {"segments", "10"}});
  const auto hundred = overlap.row_where({{"window", "hann"}, {"overlap", "0.5"}, {"segments", "100"}});
  // Hann at 50 % overlap: c(1) = 1/6.
  CHECK(overlap_correlation(hann, kLength / 2) == Approx(ten.number("correlation")).margin(1e-9));
  // K Var / P^2 = 1 + (K - 1)/(18 K): K_eff = 9.524 for K = 10, 94.79 for K = 100.
  CHECK(effective_averages(hann, kLength / 2, 10) == Approx(10.0 / (1.0 + 9.0 / 180.0)).epsilon(1e-9));
  CHECK(effective_averages(hann, kLength / 2, 10) == Approx(ten.number("effective_averages")).margin(1e-3));
  CHECK(effective_averages(hann, kLength / 2, 100) == Approx(hundred.number("effective_averages")).margin(1e-2));
  // Hann at 75 %: variance factor 1.92464 for many segments.
  const auto limit = overlap.row_where({{"window", "hann"}, {"overlap", "0.75"}, {"segments", "inf"}});
  const std::size_t many = 100000;
  CHECK(many / effective_averages(hann, kLength / 4, many) == Approx(limit.number("variance_factor")).margin(1e-4));
  // Without overlap the segments are independent.
  CHECK(effective_averages(hann, kLength, 7) == Approx(7.0));
}

TEST_CASE("unknown window names are refused with the list of names", "[spectral][window]") {
  CHECK(window_from_name("hann") == WindowKind::kHann);
  CHECK(window_from_name("blackman-harris") == WindowKind::kBlackmanHarris);
  CHECK_THROWS_AS(window_from_name("kaiser"), ConfigError);
  CHECK_THROWS_WITH(window_from_name("kaiser"), Catch::Contains("rectangular, hann, hamming, blackman-harris"));
}
