// Loops with published or closed-form margins (REFERENCES.md section 5:
// values computed to 1e-12 by root finding; closed loops checked by their
// poles). Frequencies there are in rad/s; these helpers take Hz.
#pragma once

#include <cmath>
#include <complex>
#include <numbers>
#include <optional>
#include <string>
#include <vector>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/spectral/response.hpp"

namespace known {

using Complex = std::complex<double>;
inline constexpr double kTwoPi = 2.0 * std::numbers::pi;

inline Complex s_of(double frequency_hz) { return {0.0, kTwoPi * frequency_hz}; }
inline double hz(double omega) { return omega / kTwoPi; }

struct KnownLoop {
  std::string name;
  loopaudit::LoopFunction loop;
  double low_hz;
  double high_hz;
  std::optional<double> gain_crossover_rad_s;  // the one with the smallest PM
  std::optional<double> phase_margin_deg;
  std::optional<double> phase_crossover_rad_s;  // the one with the smallest |GM|
  std::optional<double> gain_margin_db;
  std::optional<double> delay_margin_s;
  double modulus_margin;
};

inline double db(double ratio) { return 20.0 * std::log10(ratio); }

inline std::vector<KnownLoop> table() {
  return {
      {"1/(s(s+1)(s+2))", [](double f) { auto s = s_of(f); return 1.0 / (s * (s + 1.0) * (s + 2.0)); },
       hz(0.01), hz(100.0), 0.4457479596, 53.41078618, std::sqrt(2.0), db(6.0), 2.091303067, 0.6376002779},
      {"2/(s(s+1)(s+2))", [](double f) { auto s = s_of(f); return 2.0 / (s * (s + 1.0) * (s + 2.0)); },
       hz(0.01), hz(100.0), 0.7493682758, 32.61309705, std::sqrt(2.0), db(3.0), 0.7595810, 0.4324672},
      {"10/(s(s+1)(s+5))", [](double f) { auto s = s_of(f); return 10.0 / (s * (s + 1.0) * (s + 5.0)); },
       hz(0.01), hz(100.0), 1.227063884, 25.38982326, std::sqrt(5.0), db(3.0), 0.3611352, 0.3682460},
      {"1/(s(s+1)^2)", [](double f) { auto s = s_of(f); return 1.0 / (s * (s + 1.0) * (s + 1.0)); },
       hz(0.01), hz(100.0), 0.6823278038, 21.38638975, 1.0, db(2.0), 0.5470434, 0.2969888},
      {"e^(-0.5s)/s", [](double f) { auto s = s_of(f); return std::exp(-0.5 * s) / s; },
       hz(0.01), hz(30.0), 1.0, 61.35211024, std::numbers::pi, db(std::numbers::pi), 1.070796327, 0.6287369637},
      {"e^(-0.5s)/(s(s+1))", [](double f) { auto s = s_of(f); return std::exp(-0.5 * s) / (s * (s + 1.0)); },
       hz(0.01), hz(30.0), 0.7861513778, 29.30571437, 1.306542374, 6.647438, 0.6506141, 0.3750995},
      // Conditionally stable: phase crossovers at 2 (L = -12) and 3 (L = -4.5).
      {"3(s+6)^2/(s(s+1)^2)", [](double f) { auto s = s_of(f); return 3.0 * (s + 6.0) * (s + 6.0) / (s * (s + 1.0) * (s + 1.0)); },
       hz(0.01), hz(1000.0), 5.916379435, 18.38307488, 3.0, -db(4.5), 0.0542300, 0.3146025},
      // Three gain crossovers; the delay margin is set by the third one.
      {"85(s+1)(s^2+2s+43.25)/(s^2(s^2+2s+82)(s^2+2s+101))",
       [](double f) {
         auto s = s_of(f);
         return 85.0 * (s + 1.0) * (s * s + 2.0 * s + 43.25) / (s * s * (s * s + 2.0 * s + 82.0) * (s * s + 2.0 * s + 101.0));
       },
       hz(0.01), hz(1000.0), 0.7436481752, 36.73682917, 10.34310797, -db(0.792108383), 0.0693781, 0.187205714},
  };
}

// A discrete loop with a zero-order hold and one sample of delay,
// L(z) = K T / (z (z - 1)) with K T = 0.5, sampled at 1 Hz (T = 1 s).
inline Complex discrete_hold_loop(double frequency_hz) {
  const Complex z = std::polar(1.0, kTwoPi * frequency_hz);
  return 0.5 / (z * (z - 1.0));
}

// Lines on a logarithmic grid, `per_decade` to a decade.
inline loopaudit::Response sample(const loopaudit::LoopFunction& loop, double low_hz, double high_hz, int per_decade) {
  loopaudit::Response r;
  const int count = static_cast<int>(std::ceil(std::log10(high_hz / low_hz) * per_decade)) + 1;
  for (int k = 0; k < count; ++k) {
    const double f = low_hz * std::pow(high_hz / low_hz, static_cast<double>(k) / (count - 1));
    r.frequency_hz.push_back(f);
    r.value.push_back(loop(f));
    r.relative_sigma.push_back(0.0);
  }
  return r;
}

}  // namespace known
