// pulse_kernels: the inner loops of the pulse filters, written for the compiler's vectoriser.
#pragma once

#include <complex>
#include <cstddef>

namespace qamsight::detail {

// Lanes of the dot-product accumulators: one 64-byte line (16 floats, 8 doubles). Independent
// lanes let the compiler keep several vector registers of partial sums without reassociating
// a floating-point reduction (which it may not do without -ffast-math); the final sum over
// lanes is in a fixed order, so a result never depends on where a call starts or ends.
template <class R>
inline constexpr std::size_t kDotLanes = 64 / sizeof(R);

/// Complex taps per dot-kernel step; tap tables are padded (with leading zeros) to a multiple.
template <class R>
inline constexpr std::size_t kDotStep = kDotLanes<R> / 2;

/// sum_i t[i] x[i] over n2 interleaved reals, t holding each real tap twice (t0 t0 t1 t1 ...),
/// x the complex samples viewed as re, im pairs. n2 is a multiple of kDotLanes.
template <class R>
inline std::complex<R> dot_real_taps(const R* __restrict t2, const R* __restrict x2,
                                     std::size_t n2) noexcept {
  constexpr std::size_t W = kDotLanes<R>;
  R acc[W] = {};
  for (std::size_t i = 0; i < n2; i += W)
    for (std::size_t l = 0; l < W; ++l) acc[l] += t2[i + l] * x2[i + l];
  R re = 0, im = 0;
  for (std::size_t l = 0; l < W; l += 2) {
    re += acc[l];
    im += acc[l + 1];
  }
  return {re, im};
}

/// The same with complex taps, given as duplicated real parts tr2 and imaginary parts ti2:
/// (a + ib)(u + iv) = (au - bv) + i(av + bu). Two real-tap passes over the (cached) window
/// vectorise cleanly; one fused loop with two accumulator sets made the compiler shuffle.
template <class R>
inline std::complex<R> dot_complex_taps(const R* __restrict tr2, const R* __restrict ti2,
                                        const R* __restrict x2, std::size_t n2) noexcept {
  const std::complex<R> a = dot_real_taps(tr2, x2, n2);  // (sum a u, sum a v)
  const std::complex<R> b = dot_real_taps(ti2, x2, n2);  // (sum b u, sum b v)
  return {a.real() - b.imag(), a.imag() + b.real()};
}

/// Lanes of one interpolator block: 128 bytes (32 floats, 16 doubles), i.e. eight SSE
/// accumulators, enough independent additions to hide the add latency (a 16-float block was
/// latency-bound and three times slower in a micro-benchmark on the build machine).
template <class R>
inline constexpr std::size_t kBlockLanes = 128 / sizeof(R);

/// One block of the interpolator: out[l] = sum_{i<k} c[i] x[2i + l] for l < kBlockLanes, i.e.
/// kBlockLanes/2 consecutive complex outputs of one phase (x interleaved re, im). The block's
/// accumulators stay in registers across the k taps; the sum runs over i in order, so an
/// output does not depend on which block it falls in.
template <class R>
inline void phase_block(const R* __restrict c, std::size_t k, const R* __restrict x,
                        R* __restrict out) noexcept {
  constexpr std::size_t W = kBlockLanes<R>;
  R a[W] = {};
  for (std::size_t i = 0; i < k; ++i) {
    const R ci = c[i];
    const R* s = x + 2 * i;
    for (std::size_t l = 0; l < W; ++l) a[l] += ci * s[l];
  }
  for (std::size_t l = 0; l < W; ++l) out[l] = a[l];
}

}  // namespace qamsight::detail
