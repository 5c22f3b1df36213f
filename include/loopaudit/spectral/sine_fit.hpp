// Least-squares sine fits of IEEE Std 1057 (Standard for Digitizing Waveform
// Recorders; the same algorithms in IEEE Std 1241): the three-parameter fit
// at a known frequency (linear least squares on cos, sin and 1), and the
// four-parameter fit that also refines the frequency (Gauss-Newton from a
// three-parameter pre-fit).
//
// Time runs from the first sample of the record given, t = n / fs, so fits
// of two channels over the same samples share their phase origin: the ratio
// of their phasors is the response at that frequency.
#pragma once

#include <complex>
#include <cstddef>
#include <span>
#include <vector>

namespace loopaudit {

struct SineFit {
  double frequency_hz = 0.0;
  // x[n] ~ a cos(w t) + b sin(w t) + offset = Re{phasor e^{j w t}} + offset,
  // so phasor = a - j b: amplitude |phasor|, phase angle(phasor).
  double a = 0.0;
  double b = 0.0;
  double offset = 0.0;
  double residual_rms = 0.0;  // RMS of what the fit leaves
  std::size_t samples = 0;

  std::complex<double> phasor() const { return {a, -b}; }
  double amplitude() const { return std::abs(phasor()); }
};

// Throws NumericalError for fewer than 4 samples or a frequency at DC or at
// or above Nyquist, where the columns are not independent.
SineFit fit_sine_three(std::span<const double> x, double frequency_hz, double sample_rate_hz);

// Starts from `frequency_guess_hz`; stops when the frequency step is below
// 1e-12 of the frequency or after `iterations`.
SineFit fit_sine_four(std::span<const double> x, double frequency_guess_hz, double sample_rate_hz, int iterations = 20);

// A three-parameter fit with a drift beside the sine: columns cos, sin and a
// polynomial of `drift_order` (0 is the plain three-parameter fit, 2 adds a
// slope and a curvature), as sine-fit practice extends IEEE 1057 when the
// record wanders (common practice). The polynomial takes what slow drift
// would otherwise leak into the sine. When `residual` is given it receives
// x minus the fit. Throws NumericalError as fit_sine_three does, and for a
// record too short to tell the sine from the polynomial (under one cycle).
SineFit fit_sine_with_drift(std::span<const double> x, double frequency_hz, double sample_rate_hz, int drift_order,
                            std::vector<double>* residual = nullptr);

// Amplitudes of harmonics 2 .. highest of f0 (three-parameter fits at k f0,
// skipped at or above Nyquist: 0 there).
std::vector<double> harmonic_amplitudes(std::span<const double> x, double f0_hz, double sample_rate_hz,
                                        int highest = 5);

}  // namespace loopaudit
