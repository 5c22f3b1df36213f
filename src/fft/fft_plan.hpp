// A real-to-complex FFT of fixed length with its buffers, planned once and
// reused for every segment. Only this file and its .cpp touch FFTW.
#pragma once

#include <complex>
#include <cstddef>
#include <memory>
#include <span>

namespace loopaudit::detail {

class RealFft {
 public:
  explicit RealFft(std::size_t length);
  ~RealFft();
  RealFft(RealFft&&) noexcept;
  RealFft& operator=(RealFft&&) noexcept;
  RealFft(const RealFft&) = delete;
  RealFft& operator=(const RealFft&) = delete;

  std::span<double> input();  // fill, then execute()
  void execute();
  std::span<const std::complex<double>> output() const;  // length / 2 + 1 lines

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// The inverse: length / 2 + 1 complex lines in, `length` real samples out
// (unnormalised: a forward then inverse transform multiplies by length).
class InverseRealFft {
 public:
  explicit InverseRealFft(std::size_t length);
  ~InverseRealFft();
  InverseRealFft(InverseRealFft&&) noexcept;
  InverseRealFft& operator=(InverseRealFft&&) noexcept;
  InverseRealFft(const InverseRealFft&) = delete;
  InverseRealFft& operator=(const InverseRealFft&) = delete;

  std::span<std::complex<double>> input();  // fill, then execute()
  void execute();
  std::span<const double> output() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace loopaudit::detail
