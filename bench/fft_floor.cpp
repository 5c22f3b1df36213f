// The floor no Welch implementation can beat on one core: the time the FFTs
// alone take, with the plans the library makes, for a given number of
// segments. Prints "<transforms> <seconds>" (best of `repeats`).
//   fft_floor SEGMENT_LENGTH TRANSFORMS [REPEATS]
#include <chrono>
#include <cstdio>
#include <random>
#include <string>

#include "fft/fft_plan.hpp"

int main(int argc, char** argv) {
  if (argc < 3) {
    std::fprintf(stderr, "usage: fft_floor SEGMENT_LENGTH TRANSFORMS [REPEATS]\n");
    return 2;
  }
  const std::size_t n = std::stoul(argv[1]);
  const std::size_t transforms = std::stoul(argv[2]);
  const int repeats = argc > 3 ? std::stoi(argv[3]) : 3;
  loopaudit::detail::RealFft fft(n);
  std::mt19937_64 rng(1);
  std::normal_distribution<double> normal;
  for (double& v : fft.input()) v = normal(rng);
  double best = 1e300;
  double checksum = 0.0;
  for (int r = 0; r < repeats; ++r) {
    const auto start = std::chrono::steady_clock::now();
    for (std::size_t i = 0; i < transforms; ++i) {
      fft.execute();
      checksum += fft.output()[1].real();
    }
    best = std::min(best, std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count());
  }
  std::printf("%zu %.6f\n", transforms, best);
  return checksum == 12345.678 ? 1 : 0;  // keeps the loop from being optimised away
}
