// fft: FFTW plans behind a small RAII type; the only file of qamsight that includes fftw3.h.
#include "qamsight/fft.hpp"

#include <fftw3.h>

#include <mutex>
#include <string>
#include <utility>

namespace qamsight {

namespace {
std::mutex& planner_mutex() {
  static std::mutex m;
  return m;
}

// Planning flags: FFTW_ESTIMATE keeps construction fast and deterministic (the measured
// planners pick algorithms by timing, which would make float results machine-load dependent);
// FFTW_UNALIGNED lets execute() take any array.
constexpr unsigned kFlags = FFTW_ESTIMATE | FFTW_UNALIGNED;
}  // namespace

template <>
FftPlan<cf32>::FftPlan(std::size_t size, FftDirection direction)
    : size_(size), direction_(direction), plan_(nullptr), plan_inplace_(nullptr) {
  if (size < 1 || size > (std::size_t{1} << 30)) throw ConfigError("fft size", std::to_string(size), "1 to 2^30");
  std::lock_guard lock(planner_mutex());
  // Planning with FFTW_ESTIMATE does not touch the arrays; small scratch buffers suffice for
  // the pointer/alignment arguments with FFTW_UNALIGNED.
  auto* a = static_cast<fftwf_complex*>(fftwf_malloc(sizeof(fftwf_complex) * size));
  auto* b = static_cast<fftwf_complex*>(fftwf_malloc(sizeof(fftwf_complex) * size));
  const int sign = direction == FftDirection::forward ? FFTW_FORWARD : FFTW_BACKWARD;
  plan_ = fftwf_plan_dft_1d(static_cast<int>(size), a, b, sign, kFlags);
  plan_inplace_ = fftwf_plan_dft_1d(static_cast<int>(size), a, a, sign, kFlags);
  fftwf_free(a);
  fftwf_free(b);
  if (!plan_ || !plan_inplace_) throw ConfigError("fft size", std::to_string(size), "a size FFTW can plan");
}

template <>
FftPlan<cf64>::FftPlan(std::size_t size, FftDirection direction)
    : size_(size), direction_(direction), plan_(nullptr), plan_inplace_(nullptr) {
  if (size < 1 || size > (std::size_t{1} << 30)) throw ConfigError("fft size", std::to_string(size), "1 to 2^30");
  std::lock_guard lock(planner_mutex());
  auto* a = static_cast<fftw_complex*>(fftw_malloc(sizeof(fftw_complex) * size));
  auto* b = static_cast<fftw_complex*>(fftw_malloc(sizeof(fftw_complex) * size));
  const int sign = direction == FftDirection::forward ? FFTW_FORWARD : FFTW_BACKWARD;
  plan_ = fftw_plan_dft_1d(static_cast<int>(size), a, b, sign, kFlags);
  plan_inplace_ = fftw_plan_dft_1d(static_cast<int>(size), a, a, sign, kFlags);
  fftw_free(a);
  fftw_free(b);
  if (!plan_ || !plan_inplace_) throw ConfigError("fft size", std::to_string(size), "a size FFTW can plan");
}

template <>
FftPlan<cf32>::~FftPlan() {
  std::lock_guard lock(planner_mutex());
  if (plan_) fftwf_destroy_plan(static_cast<fftwf_plan>(plan_));
  if (plan_inplace_) fftwf_destroy_plan(static_cast<fftwf_plan>(plan_inplace_));
}

template <>
FftPlan<cf64>::~FftPlan() {
  std::lock_guard lock(planner_mutex());
  if (plan_) fftw_destroy_plan(static_cast<fftw_plan>(plan_));
  if (plan_inplace_) fftw_destroy_plan(static_cast<fftw_plan>(plan_inplace_));
}

template <class C>
FftPlan<C>::FftPlan(FftPlan&& o) noexcept
    : size_(o.size_),
      direction_(o.direction_),
      plan_(std::exchange(o.plan_, nullptr)),
      plan_inplace_(std::exchange(o.plan_inplace_, nullptr)) {}

template <class C>
FftPlan<C>& FftPlan<C>::operator=(FftPlan&& o) noexcept {
  std::swap(size_, o.size_);
  std::swap(direction_, o.direction_);
  std::swap(plan_, o.plan_);
  std::swap(plan_inplace_, o.plan_inplace_);
  return *this;
}

template <>
void FftPlan<cf32>::execute(std::span<const cf32> in, std::span<cf32> out) const noexcept {
  QAMSIGHT_ASSERT(in.size() == size_ && out.size() == size_, "FFT buffer length differs from the plan size");
  // std::complex<float> is layout-compatible with fftwf_complex (C++ [complex.numbers]/4).
  const bool inplace = static_cast<const void*>(in.data()) == static_cast<const void*>(out.data());
  fftwf_execute_dft(static_cast<fftwf_plan>(inplace ? plan_inplace_ : plan_),
                    reinterpret_cast<fftwf_complex*>(const_cast<cf32*>(in.data())),
                    reinterpret_cast<fftwf_complex*>(out.data()));
}

template <>
void FftPlan<cf64>::execute(std::span<const cf64> in, std::span<cf64> out) const noexcept {
  QAMSIGHT_ASSERT(in.size() == size_ && out.size() == size_, "FFT buffer length differs from the plan size");
  const bool inplace = static_cast<const void*>(in.data()) == static_cast<const void*>(out.data());
  fftw_execute_dft(static_cast<fftw_plan>(inplace ? plan_inplace_ : plan_), reinterpret_cast<fftw_complex*>(const_cast<cf64*>(in.data())),
                   reinterpret_cast<fftw_complex*>(out.data()));
}

template class FftPlan<cf32>;
template class FftPlan<cf64>;

std::size_t fft_good_size(std::size_t n) noexcept {
  if (n <= 1) return 1;
  for (std::size_t m = n;; ++m) {
    std::size_t r = m;
    for (std::size_t p : {2u, 3u, 5u, 7u})
      while (r % p == 0) r /= p;
    if (r == 1) return m;
  }
}

}  // namespace qamsight
