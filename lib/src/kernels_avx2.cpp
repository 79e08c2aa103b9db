// kernels_avx2: AVX2 versions of the hot kernels, bit-identical to kernels_portable.cpp.
//
// The only file of the library compiled with -mavx2 -mfma (and -ffp-contract=off, so the
// compiler never fuses a multiply and an add: the portable reference rounds both). The table is
// used only after the dispatcher has checked the CPU (kernels_portable.cpp). Each function
// mirrors its portable twin operation by operation; see detail/kernels.hpp for the contract.
#include "qamsight/detail/kernels.hpp"
#include "kernel_constants.hpp"
#include "pulse_kernels.hpp"

#if defined(__x86_64__) && defined(__AVX2__)

#include <immintrin.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstring>

namespace qamsight::detail {

namespace {

// Philox4x32 multipliers and Weyl increments (Salmon et al., SC 2011), as in core.cpp.
constexpr std::uint32_t kM0 = 0xD2511F53u, kM1 = 0xCD9E8D57u;
constexpr std::uint32_t kW0 = 0x9E3779B9u, kW1 = 0xBB67AE85u;

using namespace constants;  // the coefficients of kernels_portable.cpp (kernel_constants.hpp)

inline __m256d add(__m256d a, __m256d b) { return _mm256_add_pd(a, b); }
inline __m256d sub(__m256d a, __m256d b) { return _mm256_sub_pd(a, b); }
inline __m256d mul(__m256d a, __m256d b) { return _mm256_mul_pd(a, b); }
inline __m256d cst(double v) { return _mm256_set1_pd(v); }

// Eight Philox4x32-10 blocks in structure-of-arrays form: c[j] lane l = word j of block l.
struct Blocks8 {
  __m256i c[4];
};

inline void mulhilo(__m256i a, __m256i m, __m256i& hi, __m256i& lo) {
  const __m256i even = _mm256_mul_epu32(a, m);
  const __m256i odd = _mm256_mul_epu32(_mm256_srli_epi64(a, 32), m);
  lo = _mm256_blend_epi32(even, _mm256_slli_epi64(odd, 32), 0xAA);
  hi = _mm256_blend_epi32(_mm256_srli_epi64(even, 32), odd, 0xAA);
}

// kGroups independent groups of 8 blocks (blocks first .. first + 8 kGroups - 1), rounds
// interleaved so the multiplier latency of one group hides behind the others.
template <int kGroups>
inline void philox8(const PhiloxStart& s, std::size_t first, Blocks8 (&out)[kGroups]) {
  __m256i c0[kGroups], c1[kGroups], c2[kGroups], c3[kGroups];
  for (int g = 0; g < kGroups; ++g) {
    const auto base = s.counter[0] + static_cast<std::uint32_t>(first) + static_cast<std::uint32_t>(8 * g);
    c0[g] = _mm256_add_epi32(_mm256_set1_epi32(static_cast<int>(base)), _mm256_setr_epi32(0, 1, 2, 3, 4, 5, 6, 7));
    c1[g] = _mm256_set1_epi32(static_cast<int>(s.counter[1]));
    c2[g] = _mm256_set1_epi32(static_cast<int>(s.counter[2]));
    c3[g] = _mm256_set1_epi32(static_cast<int>(s.counter[3]));
  }
  const __m256i m0 = _mm256_set1_epi32(static_cast<int>(kM0)), m1 = _mm256_set1_epi32(static_cast<int>(kM1));
  std::uint32_t k0 = s.key[0], k1 = s.key[1];
  for (int r = 0; r < 10; ++r) {
    if (r > 0) {
      k0 += kW0;
      k1 += kW1;
    }
    const __m256i vk0 = _mm256_set1_epi32(static_cast<int>(k0)), vk1 = _mm256_set1_epi32(static_cast<int>(k1));
    for (int g = 0; g < kGroups; ++g) {
      __m256i hi0, lo0, hi1, lo1;
      mulhilo(c0[g], m0, hi0, lo0);
      mulhilo(c2[g], m1, hi1, lo1);
      c0[g] = _mm256_xor_si256(_mm256_xor_si256(hi1, c1[g]), vk0);
      c1[g] = lo1;
      c2[g] = _mm256_xor_si256(_mm256_xor_si256(hi0, c3[g]), vk1);
      c3[g] = lo0;
    }
  }
  for (int g = 0; g < kGroups; ++g) out[g] = Blocks8{{c0[g], c1[g], c2[g], c3[g]}};
}

// Words of the 8 blocks in natural order (block-major), 32 words.
inline void store_words(const Blocks8& b, __m256i out[4]) {
  const __m256i t0 = _mm256_unpacklo_epi32(b.c[0], b.c[1]), t1 = _mm256_unpackhi_epi32(b.c[0], b.c[1]);
  const __m256i t2 = _mm256_unpacklo_epi32(b.c[2], b.c[3]), t3 = _mm256_unpackhi_epi32(b.c[2], b.c[3]);
  const __m256i u0 = _mm256_unpacklo_epi64(t0, t2), u1 = _mm256_unpackhi_epi64(t0, t2);
  const __m256i u2 = _mm256_unpacklo_epi64(t1, t3), u3 = _mm256_unpackhi_epi64(t1, t3);
  out[0] = _mm256_permute2x128_si256(u0, u1, 0x20);
  out[1] = _mm256_permute2x128_si256(u2, u3, 0x20);
  out[2] = _mm256_permute2x128_si256(u0, u1, 0x31);
  out[3] = _mm256_permute2x128_si256(u2, u3, 0x31);
}

inline __m256d sin_kernel(__m256d x) {
  const __m256d z = mul(x, x);
  const __m256d v = mul(z, x);
  const __m256d r = add(cst(kS2), mul(z, add(cst(kS3), mul(z, add(cst(kS4), mul(z, add(cst(kS5), mul(z, cst(kS6)))))))));
  return add(x, mul(v, add(cst(kS1), mul(z, r))));
}

inline __m256d cos_kernel(__m256d x) {
  const __m256d z = mul(x, x);
  const __m256d w = mul(z, z);
  const __m256d r = add(mul(z, add(cst(kC1), mul(z, add(cst(kC2), mul(z, cst(kC3)))))),
                        mul(mul(w, w), add(cst(kC4), mul(z, add(cst(kC5), mul(z, cst(kC6)))))));
  const __m256d hz = mul(cst(0.5), z);
  const __m256d one_minus = sub(cst(1.0), hz);
  return add(one_minus, add(sub(sub(cst(1.0), one_minus), hz), mul(z, r)));
}

inline __m256d log_unit4(__m256d u) {
  __m256i ix = _mm256_add_epi64(_mm256_castpd_si256(u), _mm256_set1_epi64x(std::int64_t{0x3ff00000 - 0x3fe6a09e} << 32));
  const __m256i kb = _mm256_srli_epi64(ix, 52);
  ix = _mm256_add_epi64(_mm256_and_si256(ix, _mm256_set1_epi64x(0x000fffffffffffffll)),
                        _mm256_set1_epi64x(std::int64_t{0x3fe6a09e} << 32));
  const __m256d m = _mm256_castsi256_pd(ix);
  const __m256d f = sub(m, cst(1.0));
  const __m256d hfsq = mul(mul(cst(0.5), f), f);
  const __m256d s = _mm256_div_pd(f, add(cst(2.0), f));
  const __m256d z = mul(s, s);
  const __m256d w = mul(z, z);
  const __m256d t1 = mul(w, add(cst(kLg2), mul(w, add(cst(kLg4), mul(w, cst(kLg6))))));
  const __m256d t2 = mul(z, add(cst(kLg1), mul(w, add(cst(kLg3), mul(w, add(cst(kLg5), mul(w, cst(kLg7))))))));
  const __m256d r = add(t2, t1);
  // k + 1023 is a small integer: 2^52 + (k + 1023) - (2^52 + 1023) is exact.
  const __m256d dk = sub(_mm256_castsi256_pd(_mm256_or_si256(kb, _mm256_set1_epi64x(0x4330000000000000ll))),
                         cst(0x1p52 + 1023.0));
  return add(add(sub(add(mul(s, add(hfsq, r)), mul(dk, cst(kLn2Lo))), hfsq), f), mul(dk, cst(kLn2Hi)));
}

// Gaussian pairs of four blocks, given their words w0..w3 in the low halves of 64-bit lanes
// (lane l: w0 in bits 0..31 of hi_src etc. are unpacked by the caller's selector).
struct Pair4 {
  __m256d g0, g1;
};

template <bool kHigh>
inline Pair4 gaussian4(const Blocks8& b) {
  auto unpack = [](__m256i lo_word, __m256i hi_word) {
    return kHigh ? _mm256_unpackhi_epi32(lo_word, hi_word) : _mm256_unpacklo_epi32(lo_word, hi_word);
  };
  // x = (w0 << 32) | w1 as the exact sum w0 2^32 + w1, rounded once: the correctly rounded
  // conversion that static_cast<double>(uint64) performs.
  const __m256d hi = sub(_mm256_castsi256_pd(unpack(b.c[0], _mm256_set1_epi32(0x45300000))), cst(0x1p84));
  const __m256d lo = sub(_mm256_castsi256_pd(unpack(b.c[1], _mm256_set1_epi32(0x43300000))), cst(0x1p52));
  const __m256d u = mul(add(add(hi, lo), cst(0.5)), cst(0x1p-64));
  const __m256d radius = _mm256_sqrt_pd(mul(cst(-2.0), log_unit4(u)));
  const __m256i y53 = _mm256_srli_epi64(unpack(b.c[3], b.c[2]), 11);
  const __m256i j = _mm256_srli_epi64(_mm256_add_epi64(y53, _mm256_set1_epi64x(std::int64_t{1} << 50)), 51);
  const __m256i rem = _mm256_sub_epi64(y53, _mm256_slli_epi64(j, 51));  // |rem| <= 2^50
  const __m256d remd =
      sub(_mm256_castsi256_pd(_mm256_add_epi64(rem, _mm256_set1_epi64x(0x4338000000000000ll))), cst(0x1.8p52));
  const __m256d a = mul(remd, cst(kAngleStep));
  const __m256d sa = sin_kernel(a), ca = cos_kernel(a);
  const __m256i one = _mm256_set1_epi64x(1), two = _mm256_set1_epi64x(2);
  const __m256d swap = _mm256_castsi256_pd(_mm256_cmpeq_epi64(_mm256_and_si256(j, one), one));
  __m256d c = _mm256_blendv_pd(ca, sa, swap);
  __m256d s = _mm256_blendv_pd(sa, ca, swap);
  const __m256i neg_c = _mm256_slli_epi64(_mm256_and_si256(_mm256_add_epi64(j, one), two), 62);
  const __m256i neg_s = _mm256_slli_epi64(_mm256_and_si256(j, two), 62);
  c = _mm256_xor_pd(c, _mm256_castsi256_pd(neg_c));
  s = _mm256_xor_pd(s, _mm256_castsi256_pd(neg_s));
  return {mul(radius, c), mul(radius, s)};
}

// The 16 Gaussians of 8 blocks in block order (g0, g1 of block 0, then block 1, ...), as four
// vectors of two blocks each.
inline void gaussian8(const Blocks8& b, __m256d* out) {
  const Pair4 pa = gaussian4<false>(b);  // blocks 0, 1, 4, 5
  const Pair4 pb = gaussian4<true>(b);   // blocks 2, 3, 6, 7
  const __m256d alo = _mm256_unpacklo_pd(pa.g0, pa.g1), ahi = _mm256_unpackhi_pd(pa.g0, pa.g1);
  const __m256d blo = _mm256_unpacklo_pd(pb.g0, pb.g1), bhi = _mm256_unpackhi_pd(pb.g0, pb.g1);
  out[0] = _mm256_permute2f128_pd(alo, ahi, 0x20);
  out[1] = _mm256_permute2f128_pd(blo, bhi, 0x20);
  out[2] = _mm256_permute2f128_pd(alo, ahi, 0x31);
  out[3] = _mm256_permute2f128_pd(blo, bhi, 0x31);
}

// ---- single precision: eight blocks per vector, no unpacking (Blocks8 is already SoA) ----

inline __m256 addf(__m256 a, __m256 b) { return _mm256_add_ps(a, b); }
inline __m256 subf(__m256 a, __m256 b) { return _mm256_sub_ps(a, b); }
inline __m256 mulf(__m256 a, __m256 b) { return _mm256_mul_ps(a, b); }
inline __m256 cstf(float v) { return _mm256_set1_ps(v); }
inline __m256i cst32(std::uint32_t v) { return _mm256_set1_epi32(static_cast<int>(v)); }

inline __m256 log_unit8(__m256 u) {
  const __m256i ix = _mm256_add_epi32(_mm256_castps_si256(u), cst32(0x3f800000u - 0x3f3504f3u));
  const __m256 e = _mm256_cvtepi32_ps(_mm256_sub_epi32(_mm256_srli_epi32(ix, 23), cst32(127)));
  const __m256 m = _mm256_castsi256_ps(_mm256_add_epi32(_mm256_and_si256(ix, cst32(0x007fffffu)), cst32(0x3f3504f3u)));
  const __m256 f = subf(m, cstf(1.0f));
  const __m256 z = mulf(f, f);
  __m256 p = cstf(kLogF[0]);
  for (int i = 1; i < 9; ++i) p = addf(mulf(p, f), cstf(kLogF[i]));
  __m256 y = mulf(mulf(p, f), z);
  y = addf(y, mulf(cstf(kLn2LoF), e));
  y = subf(y, mulf(cstf(0.5f), z));
  return addf(addf(f, y), mulf(cstf(kLn2HiF), e));
}

// The single-precision Gaussian pairs of eight lanes: gaussian_pair_f32(w0[l], w1[l], w2[l]).
inline void gaussian8_f32(__m256i w0, __m256i w1, __m256i w2, __m256& g0, __m256& g1) {
  const __m256 hi = mulf(_mm256_cvtepi32_ps(_mm256_srli_epi32(w0, 8)), cstf(0x1p-24f));
  const __m256i midi = _mm256_or_si256(_mm256_slli_epi32(_mm256_and_si256(w0, cst32(0xffu)), 16),
                                       _mm256_srli_epi32(w1, 16));
  const __m256 mid = mulf(_mm256_cvtepi32_ps(midi), cstf(0x1p-48f));
  const __m256 lo = addf(mulf(_mm256_cvtepi32_ps(_mm256_and_si256(w1, cst32(0xffffu))), cstf(0x1p-64f)),
                         cstf(0x1p-65f));
  const __m256 u = addf(hi, addf(mid, lo));
  const __m256 radius = _mm256_sqrt_ps(mulf(cstf(-2.0f), log_unit8(u)));
  const __m256i k = _mm256_srli_epi32(w2, 8);
  const __m256i j = _mm256_srli_epi32(_mm256_add_epi32(k, cst32(1u << 21)), 22);
  const __m256i rem = _mm256_sub_epi32(k, _mm256_slli_epi32(j, 22));
  const __m256 a = mulf(_mm256_cvtepi32_ps(rem), cstf(kAngleStepF));
  const __m256 z = mulf(a, a);
  const __m256 ps = addf(mulf(addf(mulf(cstf(kSinF0), z), cstf(kSinF1)), z), cstf(kSinF2));
  const __m256 sa = addf(mulf(mulf(ps, z), a), a);
  const __m256 pc = addf(mulf(addf(mulf(cstf(kCosF0), z), cstf(kCosF1)), z), cstf(kCosF2));
  const __m256 ca = addf(subf(mulf(mulf(pc, z), z), mulf(cstf(0.5f), z)), cstf(1.0f));
  const __m256i one = cst32(1), two = cst32(2);
  const __m256 swap = _mm256_castsi256_ps(_mm256_cmpeq_epi32(_mm256_and_si256(j, one), one));
  __m256 c = _mm256_blendv_ps(ca, sa, swap);
  __m256 s = _mm256_blendv_ps(sa, ca, swap);
  c = _mm256_xor_ps(c, _mm256_castsi256_ps(_mm256_slli_epi32(_mm256_and_si256(_mm256_add_epi32(j, one), two), 30)));
  s = _mm256_xor_ps(s, _mm256_castsi256_ps(_mm256_slli_epi32(_mm256_and_si256(j, two), 30)));
  g0 = mulf(radius, c);
  g1 = mulf(radius, s);
}

// Groups of eight blocks per step of the word, uniform and float Gaussian loops: four
// interleaved Philox groups keep the multiplier busy (about 20% more blocks per second than two,
// measured on the build machine; the 16 state vectors still fit the register file).
constexpr int kGroupsF = 4;
constexpr std::size_t kStepF = 8 * kGroupsF;

// Blocks per step of the double Gaussian loops: two interleaved groups of eight.
constexpr std::size_t kStep = 16;

// The 32 Gaussians of 16 blocks in block order (g0, g1 of block 0, then block 1, ...).
inline void gaussian16(const PhiloxStart& st, std::size_t first, __m256d out[8]) {
  Blocks8 b[2];
  philox8<2>(st, first, b);
  gaussian8(b[0], out);
  gaussian8(b[1], out + 4);
}

// ---------------------------------------------------------------------------------------------

void philox_words(const PhiloxStart& s, std::size_t blocks, unsigned shift, std::uint32_t* out) {
  const __m128i sh = _mm_cvtsi32_si128(static_cast<int>(shift));
  for (std::size_t b = 0; b < blocks; b += kStepF) {
    Blocks8 g[kGroupsF];
    philox8<kGroupsF>(s, b, g);
    __m256i w[4 * kGroupsF];
    for (int h = 0; h < kGroupsF; ++h) store_words(g[h], w + 4 * h);
    for (auto& v : w) v = _mm256_srl_epi32(v, sh);
    if (b + kStepF <= blocks) {
      std::memcpy(out + 4 * b, w, sizeof w);
    } else {
      std::memcpy(out + 4 * b, w, 16 * (blocks - b));
    }
  }
}

void philox_packed_labels(const PhiloxStart& s, std::size_t n, unsigned bits, std::uint32_t* out) {
  const unsigned per = 32u / bits;
  const __m256i mask = cst32(bits == 32u ? 0xffffffffu : (1u << bits) - 1u);
  const std::size_t group = 8u * per;                  // labels per eight words
  const std::size_t step = 4u * kGroupsF * group;       // labels per Philox step (kStepF blocks)
  for (std::size_t i = 0, b = 0; i < n; i += step, b += kStepF) {
    Blocks8 g[kGroupsF];
    philox8<kGroupsF>(s, b, g);
    __m256i w[4 * kGroupsF];
    for (int h = 0; h < kGroupsF; ++h) store_words(g[h], w + 4 * h);  // w[v]: words 8v .. 8v + 7
    for (int v = 0; v < 4 * kGroupsF; ++v) {
      const std::size_t first = i + static_cast<std::size_t>(v) * group;
      if (first >= n) break;
      for (unsigned k = 0; k < per; ++k) {
        const std::size_t at = first + 8u * k;
        if (at >= n) break;
        const __m128i sh = _mm_cvtsi32_si128(static_cast<int>(32u - bits * (k + 1)));
        const __m256i labels = _mm256_and_si256(_mm256_srl_epi32(w[v], sh), mask);
        if (at + 8 <= n) {
          _mm256_storeu_si256(reinterpret_cast<__m256i*>(out + at), labels);
        } else {
          alignas(32) std::uint32_t t[8];
          _mm256_store_si256(reinterpret_cast<__m256i*>(t), labels);
          std::memcpy(out + at, t, (n - at) * sizeof(std::uint32_t));
        }
      }
    }
  }
}

void philox_uniform_f32(const PhiloxStart& s, std::size_t blocks, float* out) {
  for (std::size_t b = 0; b < blocks; b += kStepF) {
    Blocks8 g[kGroupsF];
    philox8<kGroupsF>(s, b, g);
    __m256i w[4 * kGroupsF];
    for (int h = 0; h < kGroupsF; ++h) store_words(g[h], w + 4 * h);
    __m256 f[4 * kGroupsF];
    for (int k = 0; k < 4 * kGroupsF; ++k)
      f[k] = _mm256_mul_ps(_mm256_cvtepi32_ps(_mm256_srli_epi32(w[k], 8)), _mm256_set1_ps(0x1p-24f));
    if (b + kStepF <= blocks) {
      std::memcpy(out + 4 * b, f, sizeof f);
    } else {
      std::memcpy(out + 4 * b, f, 16 * (blocks - b));
    }
  }
}

void gaussian_f64(const PhiloxStart& s, std::size_t blocks, double* out) {
  for (std::size_t b = 0; b < blocks; b += kStep) {
    __m256d g[8];
    gaussian16(s, b, g);
    if (b + kStep <= blocks) {
      std::memcpy(out + 2 * b, g, sizeof g);
    } else {
      std::memcpy(out + 2 * b, g, 16 * (blocks - b));
    }
  }
}

// The 4 kStepF floats of the 2 kStepF single-precision pairs of kStepF blocks (pair order: block
// l gives pairs 2l and 2l + 1), times sigma. Every lane is computed with the extension word 2^31;
// the rare lanes whose radial word is below 2^24 (one pair in 256) are redone by the scalar
// definition, so the result is bit-identical to the portable path.
inline void gaussian_step_f32(const PhiloxStart& st, std::size_t first, float sigma, float out[4 * kStepF]) {
  Blocks8 b[kGroupsF];
  philox8<kGroupsF>(st, first, b);
  const __m256i middle = cst32(0x80000000u), zero = _mm256_setzero_si256();
  const __m256 sg = cstf(sigma);
  unsigned extend[kGroupsF];
  unsigned any = 0;
  for (int h = 0; h < kGroupsF; ++h) {
    __m256 a0, a1, b0, b1;
    gaussian8_f32(b[h].c[0], middle, b[h].c[1], a0, a1);  // pairs 2l
    gaussian8_f32(b[h].c[2], middle, b[h].c[3], b0, b1);  // pairs 2l + 1
    const Blocks8 t{{_mm256_castps_si256(mulf(sg, a0)), _mm256_castps_si256(mulf(sg, a1)),
                     _mm256_castps_si256(mulf(sg, b0)), _mm256_castps_si256(mulf(sg, b1))}};
    __m256i w[4];
    store_words(t, w);  // block-major: re, im of pair 2l, then of pair 2l + 1
    std::memcpy(out + 32 * h, w, sizeof w);
    const auto low0 = static_cast<unsigned>(
        _mm256_movemask_ps(_mm256_castsi256_ps(_mm256_cmpeq_epi32(_mm256_srli_epi32(b[h].c[0], 24), zero))));
    const auto low2 = static_cast<unsigned>(
        _mm256_movemask_ps(_mm256_castsi256_ps(_mm256_cmpeq_epi32(_mm256_srli_epi32(b[h].c[2], 24), zero))));
    extend[h] = low0 | (low2 << 8);
    any |= extend[h];
  }
  if (!any) return;
  for (int h = 0; h < kGroupsF; ++h) {
    if (!extend[h]) continue;
    alignas(32) std::uint32_t words[4][8];
    for (int j = 0; j < 4; ++j) _mm256_store_si256(reinterpret_cast<__m256i*>(words[j]), b[h].c[j]);
    for (unsigned bits = extend[h]; bits; bits &= bits - 1) {
      const unsigned bit = static_cast<unsigned>(std::countr_zero(bits));
      const unsigned lane = bit & 7u, half = bit >> 3;
      const std::size_t block = 8 * static_cast<std::size_t>(h) + lane;
      float g0, g1;
      gaussian_pair_f32_at(st, first + block, half, words[2 * half][lane], words[2 * half + 1][lane], &g0, &g1);
      out[4 * block + 2 * half] = sigma * g0;
      out[4 * block + 2 * half + 1] = sigma * g1;
    }
  }
}

void gaussian_f32(const PhiloxStart& s, std::size_t pairs, float* out) {
  // sigma = 1 multiplies exactly, so these are the pairs themselves.
  const std::size_t blocks = (pairs + 1) / 2;
  for (std::size_t b = 0; b < blocks; b += kStepF) {
    alignas(32) float v[4 * kStepF];
    gaussian_step_f32(s, b, 1.0f, v);
    const std::size_t m = std::min<std::size_t>(4 * kStepF, 2 * pairs - 4 * b);
    std::memcpy(out + 4 * b, v, m * sizeof(float));
  }
}

void noise_cf32(const PhiloxStart& s, std::size_t pairs, float sigma, const float* in, float* out) {
  const std::size_t blocks = (pairs + 1) / 2;
  for (std::size_t b = 0; b < blocks; b += kStepF) {
    alignas(32) float v[4 * kStepF];
    gaussian_step_f32(s, b, sigma, v);
    float* o = out + 4 * b;
    if (2 * pairs - 4 * b >= 4 * kStepF) {
      for (std::size_t k = 0; k < 4 * kStepF; k += 8) {
        const __m256 y = in ? _mm256_add_ps(_mm256_loadu_ps(in + 4 * b + k), _mm256_load_ps(v + k))
                            : _mm256_load_ps(v + k);
        _mm256_storeu_ps(o + k, y);
      }
    } else {
      const std::size_t m = 2 * pairs - 4 * b;
      for (std::size_t k = 0; k < m; ++k) o[k] = in ? in[4 * b + k] + v[k] : v[k];
    }
  }
}

void map_labels(const std::uint32_t* labels, std::size_t n, std::uint32_t mask, const float* table, float* out) {
  const __m128i mk = _mm_set1_epi32(static_cast<int>(mask));
  const auto* base = reinterpret_cast<const long long*>(table);
  std::size_t i = 0;
  for (; i + 8 <= n; i += 8) {
    const __m128i i0 = _mm_and_si128(_mm_loadu_si128(reinterpret_cast<const __m128i*>(labels + i)), mk);
    const __m128i i1 = _mm_and_si128(_mm_loadu_si128(reinterpret_cast<const __m128i*>(labels + i + 4)), mk);
    _mm256_storeu_si256(reinterpret_cast<__m256i*>(out + 2 * i), _mm256_i32gather_epi64(base, i0, 8));
    _mm256_storeu_si256(reinterpret_cast<__m256i*>(out + 2 * i + 8), _mm256_i32gather_epi64(base, i1, 8));
  }
  for (; i < n; ++i) {
    const std::uint32_t l = labels[i] & mask;
    out[2 * i] = table[2 * l];
    out[2 * i + 1] = table[2 * l + 1];
  }
}

inline std::uint32_t axis_level_gray(float x, float inv, float fl, float top) noexcept {
  float t = (x * inv + fl) * 0.5f;
  t = t > 0.0f ? t : 0.0f;
  t = t < top ? t : top;
  const auto k = static_cast<std::uint32_t>(static_cast<std::int32_t>(t));
  return k ^ (k >> 1);
}

// Gray-coded level indices of 8 floats (4 complex samples); even lanes then hold the label.
inline __m256i slice4(const float* in, __m256 inv, __m256 fl, __m256 top, __m256i counts) {
  __m256 t = _mm256_mul_ps(_mm256_add_ps(_mm256_mul_ps(_mm256_loadu_ps(in), inv), fl), _mm256_set1_ps(0.5f));
  t = _mm256_max_ps(t, _mm256_setzero_ps());  // t > 0 ? t : 0 (second operand on NaN)
  t = _mm256_min_ps(t, top);                  // t < top ? t : top
  const __m256i k = _mm256_cvttps_epi32(t);
  const __m256i g = _mm256_sllv_epi32(_mm256_xor_si256(k, _mm256_srli_epi32(k, 1)), counts);
  return _mm256_or_si256(g, _mm256_srli_epi64(g, 32));
}

void slice_square_qam(const float* in, std::size_t n, float inv, unsigned levels, unsigned half,
                      std::uint32_t* labels) {
  const float fl = static_cast<float>(levels), top = static_cast<float>(levels - 1);
  const __m256 vinv = _mm256_set1_ps(inv), vfl = _mm256_set1_ps(fl), vtop = _mm256_set1_ps(top);
  const int h = static_cast<int>(half);
  const __m256i counts = _mm256_setr_epi32(h, 0, h, 0, h, 0, h, 0);
  std::size_t i = 0;
  for (; i + 8 <= n; i += 8) {
    const __m256i a = slice4(in + 2 * i, vinv, vfl, vtop, counts);      // labels 0..3 in even lanes
    const __m256i b = slice4(in + 2 * i + 8, vinv, vfl, vtop, counts);  // labels 4..7
    const __m256 p = _mm256_shuffle_ps(_mm256_castsi256_ps(a), _mm256_castsi256_ps(b), _MM_SHUFFLE(2, 0, 2, 0));
    const __m256i l = _mm256_permute4x64_epi64(_mm256_castps_si256(p), _MM_SHUFFLE(3, 1, 2, 0));
    _mm256_storeu_si256(reinterpret_cast<__m256i*>(labels + i), l);
  }
  for (; i < n; ++i) {
    labels[i] = (axis_level_gray(in[2 * i], inv, fl, top) << half) | axis_level_gray(in[2 * i + 1], inv, fl, top);
  }
}

void count_label_errors(const std::uint32_t* a, const std::uint32_t* b, std::size_t n, std::uint64_t* bit_errors,
                        std::uint64_t* symbol_errors) {
  const __m256i lut = _mm256_setr_epi8(0, 1, 1, 2, 1, 2, 2, 3, 1, 2, 2, 3, 2, 3, 3, 4, 0, 1, 1, 2, 1, 2, 2, 3, 1, 2,
                                       2, 3, 2, 3, 3, 4);
  const __m256i nib = _mm256_set1_epi8(0x0f);
  __m256i bits = _mm256_setzero_si256();
  std::uint64_t equal = 0;
  std::size_t i = 0;
  while (i + 8 <= n) {
    // Equal labels are counted per 32-bit lane (cmpeq gives -1); flushed before a lane can wrap.
    __m256i eq_count = _mm256_setzero_si256();
    const std::size_t stop = i + std::min<std::size_t>((n - i) / 8, std::size_t{1} << 28) * 8;
    for (; i < stop; i += 8) {
      const __m256i d = _mm256_xor_si256(_mm256_loadu_si256(reinterpret_cast<const __m256i*>(a + i)),
                                         _mm256_loadu_si256(reinterpret_cast<const __m256i*>(b + i)));
      const __m256i c = _mm256_add_epi8(_mm256_shuffle_epi8(lut, _mm256_and_si256(d, nib)),
                                        _mm256_shuffle_epi8(lut, _mm256_and_si256(_mm256_srli_epi32(d, 4), nib)));
      bits = _mm256_add_epi64(bits, _mm256_sad_epu8(c, _mm256_setzero_si256()));
      eq_count = _mm256_sub_epi32(eq_count, _mm256_cmpeq_epi32(d, _mm256_setzero_si256()));
    }
    std::uint32_t e[8];
    _mm256_storeu_si256(reinterpret_cast<__m256i*>(e), eq_count);
    for (std::uint32_t v : e) equal += v;
  }
  std::uint64_t lanes[4];
  _mm256_storeu_si256(reinterpret_cast<__m256i*>(lanes), bits);
  std::uint64_t be = lanes[0] + lanes[1] + lanes[2] + lanes[3];
  std::uint64_t se = i - equal;
  for (; i < n; ++i) {
    const std::uint32_t d = a[i] ^ b[i];
    be += static_cast<unsigned>(std::popcount(d));
    se += d != 0;
  }
  *bit_errors = be;
  *symbol_errors = se;
}

void evm_sums(const float* rx, const float* ref, std::size_t n, double* error_power, double* reference_power,
              double* peak) {
  __m256d e = _mm256_setzero_pd(), p = _mm256_setzero_pd(), m = _mm256_set1_pd(*peak);
  std::size_t i = 0;
  for (; i + 4 <= n; i += 4) {
    // Four complex samples: lanes (re0, im0, re1, im1) and (re2, im2, re3, im3) in double.
    const __m256 r8 = _mm256_loadu_ps(rx + 2 * i), x8 = _mm256_loadu_ps(ref + 2 * i);
    const __m256d r01 = _mm256_cvtps_pd(_mm256_castps256_ps128(r8)), r23 = _mm256_cvtps_pd(_mm256_extractf128_ps(r8, 1));
    const __m256d x01 = _mm256_cvtps_pd(_mm256_castps256_ps128(x8)), x23 = _mm256_cvtps_pd(_mm256_extractf128_ps(x8, 1));
    const __m256d d01 = sub(r01, x01), d23 = sub(r23, x23);
    const __m256d s01 = mul(d01, d01), s23 = mul(d23, d23);
    const __m256d q01 = mul(x01, x01), q23 = mul(x23, x23);
    // hadd pairs (a0 + a1, b0 + b1, a2 + a3, b2 + b3): re^2 + im^2 of samples 0, 2, 1, 3.
    const __m256d ei = _mm256_permute4x64_pd(_mm256_hadd_pd(s01, s23), _MM_SHUFFLE(3, 1, 2, 0));
    const __m256d pi = _mm256_permute4x64_pd(_mm256_hadd_pd(q01, q23), _MM_SHUFFLE(3, 1, 2, 0));
    e = add(e, ei);
    p = add(p, pi);
    m = _mm256_max_pd(m, ei);  // m > ei ? m : ei
  }
  double el[4], pl[4], ml[4];
  _mm256_storeu_pd(el, e);
  _mm256_storeu_pd(pl, p);
  _mm256_storeu_pd(ml, m);
  for (; i < n; ++i) {
    const double xr = ref[2 * i], xi = ref[2 * i + 1];
    const double dr = static_cast<double>(rx[2 * i]) - xr, di = static_cast<double>(rx[2 * i + 1]) - xi;
    const double v = dr * dr + di * di;
    const std::size_t l = i % 4;
    el[l] += v;
    pl[l] += xr * xr + xi * xi;
    ml[l] = ml[l] > v ? ml[l] : v;
  }
  *error_power += (el[0] + el[1]) + (el[2] + el[3]);
  *reference_power += (pl[0] + pl[1]) + (pl[2] + pl[3]);
  const double m01 = ml[0] > ml[1] ? ml[0] : ml[1], m23 = ml[2] > ml[3] ? ml[2] : ml[3];
  *peak = m01 > m23 ? m01 : m23;
}

// interpolate_chunk with the block's 32 accumulators held in four registers (the compiler kept
// the template's array on the stack): lane l of block q0 is still c[0] x[l] + c[1] x[2 + l] + ...
// in that order, one rounding per multiply and per addition, as in the portable template.
void interpolate_f32(const float* phase_taps, std::size_t L, std::size_t K, const float* line, std::size_t symbols,
                     float* out) {
  constexpr std::size_t per_block = kBlockLanes<float> / 2;
  static_assert(per_block == 16);
  alignas(32) float block[32];
  for (std::size_t q0 = 0; q0 < symbols; q0 += per_block) {
    const std::size_t nq = symbols - q0 < per_block ? symbols - q0 : per_block;
    const float* x = line + 2 * q0;
    for (std::size_t p = 0; p < L; ++p) {
      const float* c = phase_taps + p * K;
      __m256 a0 = _mm256_setzero_ps(), a1 = a0, a2 = a0, a3 = a0;
      for (std::size_t i = 0; i < K; ++i) {
        const __m256 ci = _mm256_broadcast_ss(c + i);
        const float* xs = x + 2 * i;
        a0 = _mm256_add_ps(a0, _mm256_mul_ps(ci, _mm256_loadu_ps(xs)));
        a1 = _mm256_add_ps(a1, _mm256_mul_ps(ci, _mm256_loadu_ps(xs + 8)));
        a2 = _mm256_add_ps(a2, _mm256_mul_ps(ci, _mm256_loadu_ps(xs + 16)));
        a3 = _mm256_add_ps(a3, _mm256_mul_ps(ci, _mm256_loadu_ps(xs + 24)));
      }
      _mm256_store_ps(block, a0);
      _mm256_store_ps(block + 8, a1);
      _mm256_store_ps(block + 16, a2);
      _mm256_store_ps(block + 24, a3);
      float* o = out + 2 * (q0 * L + p);
      for (std::size_t j = 0; j < nq; ++j) {
        o[2 * j * L] = block[2 * j];
        o[2 * j * L + 1] = block[2 * j + 1];
      }
    }
  }
}

// decimate_chunk with the four outputs' accumulators in registers and the final sums done for
// the four at once: the 16 lanes of an output are summed as re = ((0 + l0) + l2) + ... + l14,
// im likewise over the odd lanes, exactly the portable template's order, after a transpose that
// puts lane pair k of all four outputs in one vector.
std::size_t decimate_f32(const float* taps2, std::size_t n2, const float* line, std::size_t first, std::size_t end,
                         std::size_t step, float* out) {
  static_assert(kDotLanes<float> == 16);
  std::size_t m = 0, j = first;
  for (; j + 3 * step < end; j += 4 * step, m += 4) {
    const float* x[4] = {line + 2 * j, line + 2 * (j + step), line + 2 * (j + 2 * step), line + 2 * (j + 3 * step)};
    __m256 lo[4], hi[4];
    for (int g = 0; g < 4; ++g) lo[g] = hi[g] = _mm256_setzero_ps();
    for (std::size_t i = 0; i < n2; i += 16) {
      const __m256 t0 = _mm256_loadu_ps(taps2 + i), t1 = _mm256_loadu_ps(taps2 + i + 8);
      for (int g = 0; g < 4; ++g) {
        lo[g] = _mm256_add_ps(lo[g], _mm256_mul_ps(t0, _mm256_loadu_ps(x[g] + i)));
        hi[g] = _mm256_add_ps(hi[g], _mm256_mul_ps(t1, _mm256_loadu_ps(x[g] + i + 8)));
      }
    }
    // Lane pairs as doubles: v[k] = (pair k of output 0, 1, 2, 3), k = 0..7.
    __m256d v[8];
    for (int h = 0; h < 2; ++h) {
      const __m256* a = h == 0 ? lo : hi;
      const __m256d p0 = _mm256_castps_pd(a[0]), p1 = _mm256_castps_pd(a[1]);
      const __m256d p2 = _mm256_castps_pd(a[2]), p3 = _mm256_castps_pd(a[3]);
      const __m256d u0 = _mm256_unpacklo_pd(p0, p1), u1 = _mm256_unpackhi_pd(p0, p1);
      const __m256d u2 = _mm256_unpacklo_pd(p2, p3), u3 = _mm256_unpackhi_pd(p2, p3);
      v[4 * h + 0] = _mm256_permute2f128_pd(u0, u2, 0x20);
      v[4 * h + 1] = _mm256_permute2f128_pd(u1, u3, 0x20);
      v[4 * h + 2] = _mm256_permute2f128_pd(u0, u2, 0x31);
      v[4 * h + 3] = _mm256_permute2f128_pd(u1, u3, 0x31);
    }
    __m256 sum = _mm256_setzero_ps();
    for (const __m256d& vk : v) sum = _mm256_add_ps(sum, _mm256_castpd_ps(vk));
    _mm256_storeu_ps(out + 2 * m, sum);
  }
  for (; j < end; j += step, ++m) {
    const std::complex<float> r = dot_real_taps(taps2, line + 2 * j, n2);
    out[2 * m] = r.real();
    out[2 * m + 1] = r.imag();
  }
  return m;
}

const KernelTable kAvx2Kernels = {
    "avx2",           philox_words,       philox_packed_labels, philox_uniform_f32, gaussian_f64, gaussian_f32, noise_cf32, map_labels,
    slice_square_qam, count_label_errors, evm_sums,       interpolate_f32,    decimate_f32,
};

}  // namespace

const KernelTable* avx2_kernels_compiled() noexcept { return &kAvx2Kernels; }

}  // namespace qamsight::detail

#else

namespace qamsight::detail {
const KernelTable* avx2_kernels_compiled() noexcept { return nullptr; }
}  // namespace qamsight::detail

#endif
