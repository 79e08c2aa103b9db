// fft: FFT plans over FFTW (the only part of qamsight that talks to FFTW).
#pragma once

#include <cstddef>
#include <memory>
#include <span>

#include "qamsight/core.hpp"

namespace qamsight {

enum class FftDirection { forward, inverse };

/// A complex FFT of fixed size, planned once. Unnormalised in both directions (FFTW's
/// convention: inverse(forward(x)) = n x), X[k] = sum_n x[n] exp(-+ 2 pi i k n / N).
///
/// Threading: building a plan takes a process-wide lock (FFTW's planner is not thread-safe);
/// execute() on a built plan may run on many threads at once, on any arrays (unaligned
/// allowed), in place or not.
template <class Complex>
class FftPlan {
 public:
  FftPlan(std::size_t size, FftDirection direction);
  ~FftPlan();
  FftPlan(FftPlan&&) noexcept;
  FftPlan& operator=(FftPlan&&) noexcept;
  FftPlan(const FftPlan&) = delete;
  FftPlan& operator=(const FftPlan&) = delete;

  std::size_t size() const noexcept { return size_; }
  FftDirection direction() const noexcept { return direction_; }
  /// out = FFT(in); both of length size(); in == out allowed.
  void execute(std::span<const Complex> in, std::span<Complex> out) const noexcept;

 private:
  std::size_t size_;
  FftDirection direction_;
  void* plan_;          // out of place
  void* plan_inplace_;  // FFTW's new-array execute must keep the plan's in-place-ness
};

using FftPlanF = FftPlan<cf32>;
using FftPlanD = FftPlan<cf64>;

/// Smallest size >= n whose prime factors are 2, 3, 5 and 7 (fast FFTW sizes).
std::size_t fft_good_size(std::size_t n) noexcept;

}  // namespace qamsight
