#include "fft/fft_plan.hpp"

#include <fftw3.h>

#include <mutex>
#include <new>

namespace loopaudit::detail {
namespace {
std::mutex& planner_mutex() {  // FFTW's planner is not thread-safe
  static std::mutex mutex;
  return mutex;
}
}  // namespace

struct RealFft::Impl {
  std::size_t length = 0;
  double* in = nullptr;
  fftw_complex* out = nullptr;
  fftw_plan plan = nullptr;

  explicit Impl(std::size_t n) : length(n) {
    in = fftw_alloc_real(n);
    out = fftw_alloc_complex(n / 2 + 1);
    if (in == nullptr || out == nullptr) throw std::bad_alloc();
    std::lock_guard lock(planner_mutex());
    plan = fftw_plan_dft_r2c_1d(static_cast<int>(n), in, out, FFTW_ESTIMATE);
  }
  ~Impl() {
    {
      std::lock_guard lock(planner_mutex());
      if (plan != nullptr) fftw_destroy_plan(plan);
    }
    fftw_free(in);
    fftw_free(out);
  }
};

RealFft::RealFft(std::size_t length) : impl_(std::make_unique<Impl>(length)) {}
RealFft::~RealFft() = default;
RealFft::RealFft(RealFft&&) noexcept = default;
RealFft& RealFft::operator=(RealFft&&) noexcept = default;

std::span<double> RealFft::input() { return {impl_->in, impl_->length}; }
void RealFft::execute() { fftw_execute(impl_->plan); }
std::span<const std::complex<double>> RealFft::output() const {
  return {reinterpret_cast<const std::complex<double>*>(impl_->out), impl_->length / 2 + 1};
}

struct InverseRealFft::Impl {
  std::size_t length = 0;
  fftw_complex* in = nullptr;
  double* out = nullptr;
  fftw_plan plan = nullptr;

  explicit Impl(std::size_t n) : length(n) {
    in = fftw_alloc_complex(n / 2 + 1);
    out = fftw_alloc_real(n);
    if (in == nullptr || out == nullptr) throw std::bad_alloc();
    std::lock_guard lock(planner_mutex());
    plan = fftw_plan_dft_c2r_1d(static_cast<int>(n), in, out, FFTW_ESTIMATE);
  }
  ~Impl() {
    {
      std::lock_guard lock(planner_mutex());
      if (plan != nullptr) fftw_destroy_plan(plan);
    }
    fftw_free(in);
    fftw_free(out);
  }
};

InverseRealFft::InverseRealFft(std::size_t length) : impl_(std::make_unique<Impl>(length)) {}
InverseRealFft::~InverseRealFft() = default;
InverseRealFft::InverseRealFft(InverseRealFft&&) noexcept = default;
InverseRealFft& InverseRealFft::operator=(InverseRealFft&&) noexcept = default;

std::span<std::complex<double>> InverseRealFft::input() {
  return {reinterpret_cast<std::complex<double>*>(impl_->in), impl_->length / 2 + 1};
}
void InverseRealFft::execute() { fftw_execute(impl_->plan); }
std::span<const double> InverseRealFft::output() const { return {impl_->out, impl_->length}; }

}  // namespace loopaudit::detail
