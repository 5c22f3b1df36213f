// Loops whose margins are known exactly. The margins are read from
// data/reference/known_loops.csv (closed forms, or root finding on the exact
// response; every closed loop there checked stable by its poles), the row
// named by the loop's expression; frequencies there are in rad/s, these
// helpers take Hz.
#pragma once

#include <cmath>
#include <complex>
#include <numbers>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "loopaudit/analysis/margins.hpp"
#include "loopaudit/spectral/response.hpp"
#include "reference_data.hpp"

namespace known {

using Complex = std::complex<double>;
inline constexpr double kTwoPi = 2.0 * std::numbers::pi;

inline Complex s_of(double frequency_hz) { return {0.0, kTwoPi * frequency_hz}; }
inline double hz(double omega) { return omega / kTwoPi; }

struct KnownLoop {
  std::string name;  // the loop's row in data/reference/known_loops.csv
  loopaudit::LoopFunction loop;
  double low_hz;
  double high_hz;
  std::optional<double> gain_crossover_rad_s;  // the one with the smallest PM
  std::optional<double> phase_margin_deg;
  std::optional<double> phase_crossover_rad_s;  // the one with the smallest |GM|
  std::optional<double> gain_margin_db;
  std::optional<double> delay_margin_s;
  double modulus_margin = 0.0;
};

// The row of data/reference/known_loops.csv for the loop written `expression`.
inline reference::Row reference_values(std::string_view expression) {
  static const reference::Table values("known_loops.csv");
  return values.row(expression);
}

// The crossovers of one kind ("gain" or "phase") of a loop with several, in
// order of frequency (data/reference/known_loop_crossings.csv).
inline std::vector<reference::Row> reference_crossovers(std::string_view expression, std::string_view kind) {
  static const reference::Table crossings("known_loop_crossings.csv");
  return crossings.rows_where({{"loop", expression}, {"crossover", kind}});
}

inline std::vector<KnownLoop> table() {
  std::vector<KnownLoop> loops = {
      {"1/(s(s+1)(s+2))", [](double f) { auto s = s_of(f); return 1.0 / (s * (s + 1.0) * (s + 2.0)); },
       hz(0.01), hz(100.0)},
      {"2/(s(s+1)(s+2))", [](double f) { auto s = s_of(f); return 2.0 / (s * (s + 1.0) * (s + 2.0)); },
       hz(0.01), hz(100.0)},
      {"10/(s(s+1)(s+5))", [](double f) { auto s = s_of(f); return 10.0 / (s * (s + 1.0) * (s + 5.0)); },
       hz(0.01), hz(100.0)},
      {"1/(s(s+1)^2)", [](double f) { auto s = s_of(f); return 1.0 / (s * (s + 1.0) * (s + 1.0)); },
       hz(0.01), hz(100.0)},
      {"e^(-0.5s)/s", [](double f) { auto s = s_of(f); return std::exp(-0.5 * s) / s; },
       hz(0.01), hz(30.0)},
      {"e^(-0.5s)/(s(s+1))", [](double f) { auto s = s_of(f); return std::exp(-0.5 * s) / (s * (s + 1.0)); },
       hz(0.01), hz(30.0)},
      // Conditionally stable: phase crossovers at 2 (L = -12) and 3 (L = -4.5).
      {"3(s+6)^2/(s(s+1)^2)", [](double f) { auto s = s_of(f); return 3.0 * (s + 6.0) * (s + 6.0) / (s * (s + 1.0) * (s + 1.0)); },
       hz(0.01), hz(1000.0)},
      // Three gain crossovers; the delay margin is set by the third one.
      {"85(s+1)(s^2+2s+43.25)/(s^2(s^2+2s+82)(s^2+2s+101))",
       [](double f) {
         auto s = s_of(f);
         return 85.0 * (s + 1.0) * (s * s + 2.0 * s + 43.25) / (s * s * (s * s + 2.0 * s + 82.0) * (s * s + 2.0 * s + 101.0));
       },
       hz(0.01), hz(1000.0)},
  };
  for (KnownLoop& k : loops) {
    const reference::Row r = reference_values(k.name);
    k.gain_crossover_rad_s = r.number("gain_crossover_rad_s");
    k.phase_margin_deg = r.number("phase_margin_deg");
    k.phase_crossover_rad_s = r.number("phase_crossover_rad_s");
    k.gain_margin_db = r.number("gain_margin_db");
    k.delay_margin_s = r.number("delay_margin_s");
    k.modulus_margin = r.number("modulus_margin");
  }
  return loops;
}

// A discrete loop with a zero-order hold and one sample of delay,
// L(z) = K T / (z (z - 1)) with K T = 0.5, sampled at 1 Hz (T = 1 s); its
// row in data/reference/known_loops.csv is kDiscreteHold.
inline constexpr std::string_view kDiscreteHold = "0.5/(z(z-1))";
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
