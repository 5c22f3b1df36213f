// The injection signals synth can make, sample by sample.
#pragma once

#include <random>
#include <vector>

#include "loopaudit/synth/scenario.hpp"

namespace loopaudit::detail {

// Samples n = -warm_up .. count - 1 of the injection (the recording starts at
// n = 0). Periodic kinds repeat backwards too; a stepped sine holds its first
// frequency before n = 0.
std::vector<double> injection_signal(const Scenario& s, std::size_t warm_up, std::size_t count, std::mt19937_64& rng);

// `signal` scaled so that its RMS is `rms` (unchanged when it is all zero).
std::vector<double> scaled_to_rms(std::vector<double> signal, double rms);

// The frequencies of a stepped sine, log-spaced over the band.
std::vector<double> stepped_frequencies(const Injection& injection, double sample_rate_hz);

}  // namespace loopaudit::detail
