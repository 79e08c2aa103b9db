// kernels: hot inner loops behind plain scalar-typed functions, one implementation chosen at run time.
//
// Not part of the public API (detail/ is not installed). Every kernel exists in a portable C++
// reference (kernels_portable.cpp, the library's default code generation) and, on x86-64, in an
// AVX2 version (kernels_avx2.cpp, the only file compiled with -mavx2 -mfma). The table is chosen
// once, on first use (a function-local static, so the choice is thread-safe), from the CPU's
// cpuid bits via __builtin_cpu_supports, never per sample.
//
// Reproducibility contract: every path performs the same IEEE-754 operations in the same order
// on every element (both kernel files are compiled with -ffp-contract=off, and no kernel uses a
// fused multiply-add, so the portable path needs no slow software fma), so all paths produce
// BIT-IDENTICAL random samples, sums and decisions. Counts therefore do not depend on the CPU a
// sweep runs on. tests/cpp/test_kernels.cpp compares every compiled path against the portable
// reference for exact equality.
//
// Two Gaussian sequences are defined here, not by the C library. The double-precision one
// (gaussian_f64, RandomStream::gaussian, box_muller) is Box-Muller on
//   u = (x + 1/2) 2^-64,  x the 64-bit word (w0 << 32) | w1 of a Philox block,
//   t = (y >> 11) 2^-53 turns, y = (w2 << 32) | w3,
//   (g0, g1) = sqrt(-2 ln u) (cos 2 pi t, sin 2 pi t),
// with ln from detail::log_unit (fdlibm's argument reduction and minimax polynomial, relative
// error below 1 ulp) and the trigonometric pair from an exact quadrant reduction of the integer
// angle followed by fdlibm's sin/cos kernels on [-pi/4, pi/4] (below 1 ulp). The radial uniform
// keeps 64-bit resolution near 0, so the largest radius is sqrt(-2 ln 2^-65) = 9.49 sigma and
// the tail probability P(|g| > r) is right to one count of x far beyond 7 sigma (at r = 7 the
// boundary x is 4.2e8, so the relative error of the tail is below 3e-9).
//
// The single-precision one (gaussian_f32, noise_cf32: every float sample stream, so the AWGN
// of the sweeps) is the same Box-Muller in float arithmetic, twice as wide per vector and
// without a division, and it takes two words per pair, so one Philox block gives two pairs:
//   pair p of a fill comes from block b = p / 2 (counted from the fill's first block), words
//   r = w[2h] (radial) and t = w[2h + 1] (angle) with h = p % 2;
//   e = 2^31 if r >= 2^24, else word h of the extension block: the Philox block with the same
//       counter except word 1 (the substream) XOR 2^31, same key;
//   (g0, g1) = gaussian_pair_f32(r, e, t), the pair of the 64-bit radial word x = (r << 32) | e:
//   u = hi + (mid + lo), hi = (r >> 8) 2^-24, mid = (((r & 0xff) << 16) | (e >> 16)) 2^-48,
//       lo = (e & 0xffff) 2^-64 + 2^-65   (three exact parts of (x + 1/2) 2^-64, so u keeps
//       float precision near 0),
//   k = t >> 8, angle k 2^-24 turns,
//   (g0, g1) = sqrt(-2 ln u) (cos 2 pi k 2^-24, sin 2 pi k 2^-24)
// with ln from detail::log_unit_f32 and sin/cos on [-pi/4, pi/4] after the same exact quadrant
// reduction (Cephes single-precision polynomials, about 1 ulp each). Why the extension is exact:
// for r >= 2^24, u >= 2^-8, where floats are 2^-31 or more apart, so the 2^-32 grid of (r + 1/2)
// 2^-32 already gives every float value of u the probability the 64-bit uniform would (the
// rounding boundaries fall on the grid); the tail below u = 2^-8 (radius above 3.33 sigma, one
// pair in 256) takes the 32 missing bits from the extension block, so u keeps its 64-bit
// resolution there and the largest radius is again sqrt(-2 ln 2^-65) = 9.49 sigma. From radius 1
// on the radius is within 2 float ulps of the exact sqrt(-2 ln u) (measured 1.7 ulp, 2e-7
// relative), so the tail probability exp(-r^2/2) is right to a relative r^2 2.4e-7: 1.2e-5 at
// 7 sigma, 2e-5 at 9 sigma (tests/cpp/test_kernels.cpp and test_core.cpp check the radius
// against a long double log, the tail crossing at 7, 8, 9 and the tail frequencies). The vector
// kernels compute every lane with e = 2^31 and redo the rare extended lanes with the scalar
// definition (gaussian_pair_f32_at), so all paths still agree bit for bit.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>

namespace qamsight::detail {

/// Philox starting point: counter words (word 0 is the block index, incremented per block, mod
/// 2^32) and the key.
struct PhiloxStart {
  std::uint32_t counter[4];
  std::uint32_t key[2];
};

/// One implementation of every kernel. All pointers are non-null unless stated; lengths count
/// Philox blocks (`blocks`) or elements (`n`). No kernel allocates or throws.
struct KernelTable {
  const char* name;  ///< "portable" or "avx2"

  /// out[4b + j] = word j of block b, shifted right by `shift` (0..31).
  void (*philox_words)(const PhiloxStart& s, std::size_t blocks, unsigned shift, std::uint32_t* out);
  /// n labels of `bits` bits (1..32), per = 32 / bits of them from each word: in groups of eight
  /// words (words 8g .. 8g + 7, i.e. blocks 2g and 2g + 1), label 8 per g + 8 k + j is bits
  /// 32 - bits (k + 1) .. 31 - bits k of word 8g + j (k < per). Uses 2 ceil(n / (8 per)) blocks.
  void (*philox_packed_labels)(const PhiloxStart& s, std::size_t n, unsigned bits, std::uint32_t* out);
  /// out[4b + j] = (word j >> 8) 2^-24: uniform floats on [0, 1).
  void (*philox_uniform_f32)(const PhiloxStart& s, std::size_t blocks, float* out);
  /// out[2b], out[2b + 1] = the Gaussian pair of block b (double precision).
  void (*gaussian_f64)(const PhiloxStart& s, std::size_t blocks, double* out);
  /// out[2p], out[2p + 1] = single-precision Gaussian pair p, p < pairs (two pairs per block,
  /// ceil(pairs / 2) blocks; see the definition above).
  void (*gaussian_f32)(const PhiloxStart& s, std::size_t pairs, float* out);
  /// Complex noise, pair p for complex sample p: out[2p + k] = sigma * g_k (float), plus
  /// in[2p + k] (float addition) when `in` is not null; in may equal out. Uses ceil(pairs / 2)
  /// blocks (and, for about one pair in 256, a word of the extension block).
  void (*noise_cf32)(const PhiloxStart& s, std::size_t pairs, float sigma, const float* in, float* out);

  /// Table lookup: out[i] = table[labels[i] & mask] for complex float points (re, im pairs).
  void (*map_labels)(const std::uint32_t* labels, std::size_t n, std::uint32_t mask, const float* table,
                     float* out);
  /// Square-QAM hard decisions, each axis independently: level index
  ///   k = trunc(min(max((x * inv_half_spacing + levels) * 0.5f, 0), levels - 1))
  /// (equal to floor of the level coordinate clamped to the constellation; NaN gives level 0),
  /// label = (gray(k_i) << half_bits) | gray(k_q), gray(k) = k ^ (k >> 1).
  void (*slice_square_qam)(const float* in, std::size_t n, float inv_half_spacing, unsigned levels,
                           unsigned half_bits, std::uint32_t* labels);
  /// Differences of two label streams: sum of popcount(a ^ b) and the number of i with a != b.
  void (*count_label_errors)(const std::uint32_t* a, const std::uint32_t* b, std::size_t n,
                             std::uint64_t* bit_errors, std::uint64_t* symbol_errors);
  /// Error-vector sums in double over complex float samples: with e_i = |rx_i - ref_i|^2 and
  /// p_i = |ref_i|^2 (each as dr*dr + di*di after widening to double), element i goes to lane
  /// i % 4 of four partial sums, which are combined as (l0 + l1) + (l2 + l3) and added to
  /// *error_power and *reference_power; *peak becomes the max of itself and every e_i.
  void (*evm_sums)(const float* rx, const float* ref, std::size_t n, double* error_power,
                   double* reference_power, double* peak);

  /// The float pulse filters' inner loops (lib/src/pulse_kernels.hpp, one template compiled in
  /// each kernel file: the per-lane order is fixed there, so every path gives the same bits).
  /// interpolate_chunk: L phases of K taps, `symbols` inputs after K - 1 of history in `line`
  /// (interleaved re, im; readable for whole 16-sample blocks past the end), outputs to `out`.
  void (*interpolate_f32)(const float* phase_taps, std::size_t L, std::size_t K, const float* line,
                          std::size_t symbols, float* out);
  /// decimate_chunk: outputs for window starts first, first + step, ... below end; returns
  /// their number. taps2 holds each real tap twice (n2 floats).
  std::size_t (*decimate_f32)(const float* taps2, std::size_t n2, const float* line, std::size_t first,
                              std::size_t end, std::size_t step, float* out);
};

/// The implementation chosen for this CPU (AVX2 when compiled in and the CPU has AVX2 and FMA,
/// else portable). The environment variable QAMSIGHT_KERNELS=portable, read once at the first
/// call, forces the portable reference (for testing that results do not depend on the CPU).
const KernelTable& kernels() noexcept;
/// The portable reference implementation.
const KernelTable& portable_kernels() noexcept;
/// Every implementation compiled in that this CPU can run, the portable one first.
std::span<const KernelTable* const> available_kernels() noexcept;

/// The scalar definitions shared by all paths (the portable file implements them; the vector
/// code mirrors them operation by operation).
/// ln u for u in (0, 1] (normal doubles).
double log_unit(double u) noexcept;
/// Gaussian pair from the four words of one Philox block.
void gaussian_pair(std::uint32_t w0, std::uint32_t w1, std::uint32_t w2, std::uint32_t w3,
                   double* g0, double* g1) noexcept;
/// ln u for u in [2^-65, 1] in float (normal floats).
float log_unit_f32(float u) noexcept;
/// The single-precision Gaussian pair of the 64-bit radial word (w0 << 32) | w1 and the angle
/// word w2 (w3 is not used).
void gaussian_pair_f32(std::uint32_t w0, std::uint32_t w1, std::uint32_t w2, std::uint32_t w3, float* g0,
                       float* g1) noexcept;
/// Single-precision stream pairs start below 2^24 in the radial word take their extension word.
inline constexpr std::uint32_t kRadialExtendBelow = 1u << 24;
/// Word 1 (substream) of the extension block's counter is the stream's XOR this bit.
inline constexpr std::uint32_t kExtensionSubstreamBit = 0x80000000u;
/// Half h (0 or 1) of block b of the single-precision stream at s, given the block's radial and
/// angle words of that half (w[2h], w[2h + 1]): the definition above, extension included.
void gaussian_pair_f32_at(const PhiloxStart& s, std::size_t b, unsigned h, std::uint32_t radial,
                          std::uint32_t angle, float* g0, float* g1) noexcept;

// Implementations, for the dispatcher (kernels_portable.cpp defines the table chooser).
extern const KernelTable kPortableKernels;
/// nullptr when the AVX2 file was compiled without AVX2 support (other architectures).
const KernelTable* avx2_kernels_compiled() noexcept;

}  // namespace qamsight::detail
