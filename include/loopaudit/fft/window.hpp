// Data windows for segment-averaged spectra, in the periodic form that DFT
// analysis uses (w[n] for n = 0..N-1 of a length-N+1 symmetric window).
//
// Figures of merit follow F. J. Harris, "On the use of windows for harmonic
// analysis with the discrete Fourier transform", Proc. IEEE 66(1), 1978, and
// G. Heinzel, A. Rudiger, R. Schilling, "Spectrum and spectral density
// estimation by the DFT", 2002.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include "loopaudit/names.hpp"

namespace loopaudit {

enum class WindowKind { kRectangular, kHann, kHamming, kBlackmanHarris };

inline constexpr NameTable<WindowKind, 4> kWindowNames{{{WindowKind::kRectangular, "rectangular"},
                                                        {WindowKind::kHann, "hann"},
                                                        {WindowKind::kHamming, "hamming"},
                                                        {WindowKind::kBlackmanHarris, "blackman-harris"}}};
static_assert(one_to_one(kWindowNames));

// The names of kWindowNames; throws ConfigError for anything else, listing them.
WindowKind window_from_name(std::string_view name);
const char* window_name(WindowKind kind);

std::vector<double> make_window(WindowKind kind, std::size_t length);

struct WindowFigures {
  double coherent_gain = 0.0;       // sum(w) / N
  double enbw_bins = 0.0;           // N sum(w^2) / sum(w)^2
  double scalloping_loss_db = 0.0;  // loss for a tone half a bin off centre
};

WindowFigures window_figures(const std::vector<double>& window);

// Correlation between windows shifted by `shift` samples,
// sum w[n] w[n + shift] / sum w^2 (Welch 1967; Harris 1978, eq. 21 form).
double overlap_correlation(const std::vector<double>& window, std::size_t shift);

}  // namespace loopaudit
