// pulse_kernels: the inner loops of the pulse filters, written for the compiler's vectoriser.
#pragma once

#include <complex>
#include <cstddef>

namespace qamsight::detail {

// Internal linkage on purpose: kernels_portable.cpp and kernels_avx2.cpp compile these templates
// with different instruction sets, and the linker must not merge the two copies (as it would
// for ordinary inline templates) and run the AVX2 one on the portable path, or the reverse.
namespace {

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

/// Four dot products with the same real taps over four windows (x0..x3), in one pass: the tap
/// loads are shared and the four accumulator sets are independent, so the loop is bound by the
/// multiply-add throughput instead of the add latency. Each result is bit-identical to
/// dot_real_taps on its window (the same per-lane order and the same final sum).
template <class R>
inline void dot_real_taps_x4(const R* __restrict t2, const R* __restrict x0, const R* __restrict x1,
                             const R* __restrict x2, const R* __restrict x3, std::size_t n2,
                             std::complex<R>* __restrict out) noexcept {
  constexpr std::size_t W = kDotLanes<R>;
  R a0[W] = {}, a1[W] = {}, a2[W] = {}, a3[W] = {};
  for (std::size_t i = 0; i < n2; i += W) {
    for (std::size_t l = 0; l < W; ++l) {
      const R t = t2[i + l];
      a0[l] += t * x0[i + l];
      a1[l] += t * x1[i + l];
      a2[l] += t * x2[i + l];
      a3[l] += t * x3[i + l];
    }
  }
  const R* acc[4] = {a0, a1, a2, a3};
  for (int g = 0; g < 4; ++g) {
    R re = 0, im = 0;
    for (std::size_t l = 0; l < W; l += 2) {
      re += acc[g][l];
      im += acc[g][l + 1];
    }
    out[g] = {re, im};
  }
}

/// The matched decimator's inner loop over one chunk of its delay line: outputs at window
/// starts first, first + step, ... below end (complex samples; line interleaved re, im), written
/// to out. Returns the number of outputs.
template <class R>
inline std::size_t decimate_chunk(const R* __restrict t2, std::size_t n2, const R* __restrict line,
                                  std::size_t first, std::size_t end, std::size_t step,
                                  std::complex<R>* __restrict out) noexcept {
  std::size_t m = 0, j = first;
  for (; j + 3 * step < end; j += 4 * step, m += 4)
    dot_real_taps_x4(t2, line + 2 * j, line + 2 * (j + step), line + 2 * (j + 2 * step), line + 2 * (j + 3 * step),
                     n2, out + m);
  for (; j < end; j += step) out[m++] = dot_real_taps(t2, line + 2 * j, n2);
  return m;
}

/// The polyphase interpolator's inner loop over one chunk: `symbols` inputs at line[K - 1 ...]
/// (K - 1 symbols of history before them; line interleaved re, im, and readable for whole
/// blocks past the end), L phases of K taps each (row p = phase p), out[q L + p] = output p of
/// symbol q. Blocks past `symbols` read stale entries; those outputs are dropped.
template <class R>
inline void interpolate_chunk(const R* __restrict phase_taps, std::size_t L, std::size_t K,
                              const R* __restrict line, std::size_t symbols,
                              std::complex<R>* __restrict out) noexcept {
  constexpr std::size_t lanes = kBlockLanes<R>;
  constexpr std::size_t per_block = lanes / 2;  // complex outputs of one phase per block
  R block[lanes];
  for (std::size_t q0 = 0; q0 < symbols; q0 += per_block) {
    const std::size_t nq = symbols - q0 < per_block ? symbols - q0 : per_block;
    for (std::size_t p = 0; p < L; ++p) {
      phase_block(phase_taps + p * K, K, line + 2 * q0, block);
      for (std::size_t j = 0; j < nq; ++j) out[(q0 + j) * L + p] = {block[2 * j], block[2 * j + 1]};
    }
  }
}

}  // namespace
}  // namespace qamsight::detail
