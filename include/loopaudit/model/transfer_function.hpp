// Transfer functions described as designers write them: a gain, integrators,
// and real or complex-pair zeros and poles given by their frequency (and Q),
// each stage continuous or discretised at a sample rate. Synthesis simulates
// loops described this way; model comparison and fitting use the same types.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "loopaudit/names.hpp"

namespace loopaudit {

// One factor of a transfer function in s (rad/s): a real root (1 + s/w) or a
// complex pair (1 + s/(Q w) + s^2/w^2), with w = 2 pi frequency_hz.
struct Factor {
  double frequency_hz = 0.0;
  std::optional<double> quality;  // present for a pair
};

enum class Discretization { kZeroOrderHold, kBilinear };
inline constexpr NameTable<Discretization, 2> kDiscretizationNames{
    {{Discretization::kZeroOrderHold, "zoh"}, {Discretization::kBilinear, "bilinear"}}};
static_assert(one_to_one(kDiscretizationNames));

// gain * prod(zeros) / (s^integrators * prod(poles)).
struct Stage {
  std::string name;
  double gain = 1.0;
  int integrators = 0;
  std::vector<Factor> zeros;
  std::vector<Factor> poles;
  Discretization discretization = Discretization::kZeroOrderHold;
};

}  // namespace loopaudit
