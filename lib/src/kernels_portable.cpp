// kernels_portable: the reference implementation of the hot kernels, and the run-time dispatcher.
//
// Compiled with the library's default code generation plus -ffp-contract=off (lib/CMakeLists.txt),
// so that every a * b + c below is rounded twice, exactly as the AVX2 path computes it.
#include <bit>
#include <cmath>
#include <cstdlib>
#include <cstring>

#include "qamsight/core.hpp"
#include "qamsight/detail/kernels.hpp"
#include "kernel_constants.hpp"
#include "pulse_kernels.hpp"

namespace qamsight::detail {

// ---------------------------------------------------------------------------------------------
// The scalar definitions of the random-number transforms.

namespace {

using namespace constants;

inline double sin_kernel(double x) noexcept {
  const double z = x * x;
  const double v = z * x;
  const double r = kS2 + z * (kS3 + z * (kS4 + z * (kS5 + z * kS6)));
  return x + v * (kS1 + z * r);
}

inline double cos_kernel(double x) noexcept {
  const double z = x * x;
  const double w = z * z;
  const double r = z * (kC1 + z * (kC2 + z * kC3)) + w * w * (kC4 + z * (kC5 + z * kC6));
  const double hz = 0.5 * z;
  const double one_minus = 1.0 - hz;
  return one_minus + (((1.0 - one_minus) - hz) + z * r);
}

}  // namespace

double log_unit(double u) noexcept {
  // u = 2^k m with m in [sqrt(2)/2, sqrt(2)): shift the exponent field so that the carry out of
  // the mantissa decides k (musl's integer reduction, on the whole 64-bit pattern).
  std::uint64_t ix = std::bit_cast<std::uint64_t>(u);
  ix += std::uint64_t{0x3ff00000 - 0x3fe6a09e} << 32;
  const auto kb = static_cast<std::int64_t>(ix >> 52);  // k + 1023
  ix = (ix & 0x000fffffffffffffull) + (std::uint64_t{0x3fe6a09e} << 32);
  const double m = std::bit_cast<double>(ix);
  const double f = m - 1.0;
  const double hfsq = 0.5 * f * f;
  const double s = f / (2.0 + f);
  const double z = s * s;
  const double w = z * z;
  const double t1 = w * (kLg2 + w * (kLg4 + w * kLg6));
  const double t2 = z * (kLg1 + w * (kLg3 + w * (kLg5 + w * kLg7)));
  const double r = t2 + t1;
  const double dk = static_cast<double>(kb - 1023);
  return s * (hfsq + r) + dk * kLn2Lo - hfsq + f + dk * kLn2Hi;
}

void gaussian_pair(std::uint32_t w0, std::uint32_t w1, std::uint32_t w2, std::uint32_t w3, double* g0,
                   double* g1) noexcept {
  const std::uint64_t x = (std::uint64_t{w0} << 32) | w1;
  const std::uint64_t y53 = ((std::uint64_t{w2} << 32) | w3) >> 11;
  // Radius: u in (0, 1], exact near 0 where the tail lives.
  const double u = (static_cast<double>(x) + 0.5) * 0x1p-64;
  const double radius = std::sqrt(-2.0 * log_unit(u));
  // Angle y53 / 2^53 turns = j quarter turns + a, |a| <= pi/4, reduced exactly in integers.
  const std::uint64_t j = (y53 + (std::uint64_t{1} << 50)) >> 51;  // 0..4
  const auto rem = static_cast<std::int64_t>(y53) - static_cast<std::int64_t>(j << 51);
  const double a = static_cast<double>(rem) * kAngleStep;
  const double sa = sin_kernel(a), ca = cos_kernel(a);
  double c = (j & 1u) ? sa : ca;
  double s = (j & 1u) ? ca : sa;
  if ((j + 1) & 2u) c = -c;  // quadrants 1 and 2
  if (j & 2u) s = -s;        // quadrants 2 and 3
  *g0 = radius * c;
  *g1 = radius * s;
}

// The single-precision definition (float kernels: gaussian_f32, noise_cf32). Polynomials of the
// Cephes single-precision log, sin and cos (minimax on the reduced ranges, about 1 ulp).
namespace {

inline float sin_kernel_f32(float x) noexcept {
  const float z = x * x;
  const float p = (kSinF0 * z + kSinF1) * z + kSinF2;
  return ((p * z) * x) + x;
}

inline float cos_kernel_f32(float x) noexcept {
  const float z = x * x;
  const float p = (kCosF0 * z + kCosF1) * z + kCosF2;
  return (((p * z) * z) - 0.5f * z) + 1.0f;
}

}  // namespace

float log_unit_f32(float u) noexcept {
  // u = 2^k m with m in [sqrt(1/2), sqrt(2)): shifting the bits by 1 - sqrt(1/2) moves the
  // exponent boundary to sqrt(1/2) (0x3f3504f3 is sqrt(1/2) as a float).
  const std::uint32_t ix = std::bit_cast<std::uint32_t>(u) + (0x3f800000u - 0x3f3504f3u);
  const float e = static_cast<float>(static_cast<std::int32_t>(ix >> 23) - 127);
  const float m = std::bit_cast<float>((ix & 0x007fffffu) + 0x3f3504f3u);
  const float f = m - 1.0f;
  const float z = f * f;
  float p = kLogF[0];
  for (int i = 1; i < 9; ++i) p = p * f + kLogF[i];
  float y = (p * f) * z;
  y = y + kLn2LoF * e;
  y = y - 0.5f * z;
  return (f + y) + kLn2HiF * e;
}

void gaussian_pair_f32(std::uint32_t w0, std::uint32_t w1, std::uint32_t w2, std::uint32_t /*w3*/, float* g0,
                       float* g1) noexcept {
  // u = (x + 1/2) 2^-64 for x = (w0 << 32) | w1, summed from three exact 24-, 24- and 16-bit
  // parts so that u keeps float precision however small it is (the tail lives near 0).
  const float hi = static_cast<float>(w0 >> 8) * 0x1p-24f;
  const float mid = static_cast<float>(((w0 & 0xffu) << 16) | (w1 >> 16)) * 0x1p-48f;
  const float lo = static_cast<float>(w1 & 0xffffu) * 0x1p-64f + 0x1p-65f;
  const float u = hi + (mid + lo);
  const float radius = std::sqrt(-2.0f * log_unit_f32(u));
  // Angle k / 2^24 turns = j quarter turns + a, |a| <= pi/4, reduced exactly in integers.
  const std::uint32_t k = w2 >> 8;
  const std::uint32_t j = (k + (1u << 21)) >> 22;  // 0..4
  const std::int32_t rem = static_cast<std::int32_t>(k) - static_cast<std::int32_t>(j << 22);
  const float a = static_cast<float>(rem) * kAngleStepF;
  const float sa = sin_kernel_f32(a), ca = cos_kernel_f32(a);
  float c = (j & 1u) ? sa : ca;
  float s = (j & 1u) ? ca : sa;
  if ((j + 1) & 2u) c = -c;  // quadrants 1 and 2
  if (j & 2u) s = -s;        // quadrants 2 and 3
  *g0 = radius * c;
  *g1 = radius * s;
}

void gaussian_pair_f32_at(const PhiloxStart& s, std::size_t b, unsigned h, std::uint32_t radial,
                          std::uint32_t angle, float* g0, float* g1) noexcept {
  std::uint32_t extension = 0x80000000u;  // the middle of the 2^-32 cell (see kernels.hpp)
  if (radial < kRadialExtendBelow) {
    const PhiloxCounter c{s.counter[0] + static_cast<std::uint32_t>(b), s.counter[1] ^ kExtensionSubstreamBit,
                          s.counter[2], s.counter[3]};
    extension = philox4x32(c, PhiloxKey{s.key[0], s.key[1]})[h];
  }
  gaussian_pair_f32(radial, extension, angle, 0u, g0, g1);
}

// ---------------------------------------------------------------------------------------------
// Portable kernels.

namespace {

inline PhiloxCounter block_at(const PhiloxStart& s, std::size_t b) noexcept {
  const PhiloxCounter c{s.counter[0] + static_cast<std::uint32_t>(b), s.counter[1], s.counter[2], s.counter[3]};
  return philox4x32(c, PhiloxKey{s.key[0], s.key[1]});
}

void philox_words(const PhiloxStart& s, std::size_t blocks, unsigned shift, std::uint32_t* out) {
  for (std::size_t b = 0; b < blocks; ++b) {
    const auto w = block_at(s, b);
    for (int j = 0; j < 4; ++j) out[4 * b + j] = w[j] >> shift;
  }
}

void philox_packed_labels(const PhiloxStart& s, std::size_t n, unsigned bits, std::uint32_t* out) {
  const unsigned per = 32u / bits;
  const std::uint32_t mask = bits == 32u ? 0xffffffffu : (1u << bits) - 1u;
  const std::size_t group = 8u * per;
  for (std::size_t g = 0; g * group < n; ++g) {
    const auto lo = block_at(s, 2 * g), hi = block_at(s, 2 * g + 1);
    const std::uint32_t w[8] = {lo[0], lo[1], lo[2], lo[3], hi[0], hi[1], hi[2], hi[3]};
    for (std::size_t r = 0; r < group && g * group + r < n; ++r) {
      const unsigned k = static_cast<unsigned>(r / 8), j = static_cast<unsigned>(r % 8);
      out[g * group + r] = (w[j] >> (32u - bits * (k + 1))) & mask;
    }
  }
}

void philox_uniform_f32(const PhiloxStart& s, std::size_t blocks, float* out) {
  for (std::size_t b = 0; b < blocks; ++b) {
    const auto w = block_at(s, b);
    for (int j = 0; j < 4; ++j) out[4 * b + j] = static_cast<float>(w[j] >> 8) * 0x1p-24f;
  }
}

void gaussian_f64(const PhiloxStart& s, std::size_t blocks, double* out) {
  for (std::size_t b = 0; b < blocks; ++b) {
    const auto w = block_at(s, b);
    gaussian_pair(w[0], w[1], w[2], w[3], out + 2 * b, out + 2 * b + 1);
  }
}

void gaussian_f32(const PhiloxStart& s, std::size_t pairs, float* out) {
  for (std::size_t p = 0; p < pairs; p += 2) {
    const std::size_t b = p / 2;
    const auto w = block_at(s, b);
    gaussian_pair_f32_at(s, b, 0, w[0], w[1], out + 2 * p, out + 2 * p + 1);
    if (p + 1 < pairs) gaussian_pair_f32_at(s, b, 1, w[2], w[3], out + 2 * p + 2, out + 2 * p + 3);
  }
}

void noise_cf32(const PhiloxStart& s, std::size_t pairs, float sigma, const float* in, float* out) {
  for (std::size_t p = 0; p < pairs; p += 2) {
    const std::size_t b = p / 2;
    const auto w = block_at(s, b);
    for (unsigned h = 0; h < 2 && p + h < pairs; ++h) {
      float g0, g1;
      gaussian_pair_f32_at(s, b, h, w[2 * h], w[2 * h + 1], &g0, &g1);
      const float n0 = sigma * g0, n1 = sigma * g1;
      const std::size_t i = 2 * (p + h);
      if (in) {
        out[i] = in[i] + n0;
        out[i + 1] = in[i + 1] + n1;
      } else {
        out[i] = n0;
        out[i + 1] = n1;
      }
    }
  }
}

void map_labels(const std::uint32_t* labels, std::size_t n, std::uint32_t mask, const float* table, float* out) {
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint32_t l = labels[i] & mask;
    out[2 * i] = table[2 * l];
    out[2 * i + 1] = table[2 * l + 1];
  }
}

inline std::uint32_t axis_level_gray(float x, float inv, float fl, float top) noexcept {
  float t = (x * inv + fl) * 0.5f;
  t = t > 0.0f ? t : 0.0f;  // NaN -> 0, as the vector max does
  t = t < top ? t : top;
  const auto k = static_cast<std::uint32_t>(static_cast<std::int32_t>(t));
  return k ^ (k >> 1);
}

void slice_square_qam(const float* in, std::size_t n, float inv, unsigned levels, unsigned half,
                      std::uint32_t* labels) {
  const auto fl = static_cast<float>(levels);
  const auto top = static_cast<float>(levels - 1);
  for (std::size_t i = 0; i < n; ++i) {
    labels[i] = (axis_level_gray(in[2 * i], inv, fl, top) << half) | axis_level_gray(in[2 * i + 1], inv, fl, top);
  }
}

void count_label_errors(const std::uint32_t* a, const std::uint32_t* b, std::size_t n, std::uint64_t* bit_errors,
                        std::uint64_t* symbol_errors) {
  std::uint64_t be = 0, se = 0;
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint32_t d = a[i] ^ b[i];
    be += static_cast<unsigned>(std::popcount(d));
    se += d != 0;
  }
  *bit_errors = be;
  *symbol_errors = se;
}

void evm_sums(const float* rx, const float* ref, std::size_t n, double* error_power, double* reference_power,
              double* peak) {
  double e[4] = {0, 0, 0, 0}, p[4] = {0, 0, 0, 0}, m[4] = {*peak, *peak, *peak, *peak};
  for (std::size_t i = 0; i < n; ++i) {
    const double xr = ref[2 * i], xi = ref[2 * i + 1];
    const double dr = static_cast<double>(rx[2 * i]) - xr, di = static_cast<double>(rx[2 * i + 1]) - xi;
    const double ei = dr * dr + di * di;
    const std::size_t l = i % 4;
    e[l] += ei;
    p[l] += xr * xr + xi * xi;
    m[l] = m[l] > ei ? m[l] : ei;
  }
  *error_power += (e[0] + e[1]) + (e[2] + e[3]);
  *reference_power += (p[0] + p[1]) + (p[2] + p[3]);
  const double m01 = m[0] > m[1] ? m[0] : m[1], m23 = m[2] > m[3] ? m[2] : m[3];
  *peak = m01 > m23 ? m01 : m23;
}

}  // namespace

namespace {

void interpolate_f32(const float* phase_taps, std::size_t L, std::size_t K, const float* line, std::size_t symbols,
                     float* out) {
  interpolate_chunk(phase_taps, L, K, line, symbols, reinterpret_cast<std::complex<float>*>(out));
}

std::size_t decimate_f32(const float* taps2, std::size_t n2, const float* line, std::size_t first, std::size_t end,
                         std::size_t step, float* out) {
  return decimate_chunk(taps2, n2, line, first, end, step, reinterpret_cast<std::complex<float>*>(out));
}

}  // namespace

const KernelTable kPortableKernels = {
    "portable",       philox_words,       philox_packed_labels, philox_uniform_f32, gaussian_f64, gaussian_f32, noise_cf32, map_labels,
    slice_square_qam, count_label_errors, evm_sums,       interpolate_f32,    decimate_f32,
};

const KernelTable& portable_kernels() noexcept { return kPortableKernels; }

namespace {

struct Dispatch {
  const KernelTable* chosen = &kPortableKernels;
  const KernelTable* list[2] = {&kPortableKernels, nullptr};
  std::size_t count = 1;

  Dispatch() {
    const KernelTable* avx2 = avx2_kernels_compiled();
#if defined(__x86_64__) || defined(__i386__)
    if (avx2 && !(__builtin_cpu_supports("avx2") && __builtin_cpu_supports("fma"))) avx2 = nullptr;
#else
    avx2 = nullptr;
#endif
    if (avx2) list[count++] = avx2;
    const char* force = std::getenv("QAMSIGHT_KERNELS");
    const bool portable_only = force && std::strcmp(force, "portable") == 0;
    chosen = (avx2 && !portable_only) ? avx2 : &kPortableKernels;
  }
};

const Dispatch& dispatch() noexcept {
  static const Dispatch d;  // initialised once, thread-safe (C++11 static initialisation)
  return d;
}

}  // namespace

const KernelTable& kernels() noexcept { return *dispatch().chosen; }

std::span<const KernelTable* const> available_kernels() noexcept {
  const Dispatch& d = dispatch();
  return {d.list, d.count};
}

}  // namespace qamsight::detail
