// core: sample types, typed configuration errors, and the counter-based random generator.
#pragma once

#include <array>
#include <cmath>
#include <complex>
#include <cstddef>
#include <cstdint>
#include <span>
#include <stdexcept>
#include <string>
#include <string_view>

namespace qamsight {

using cf32 = std::complex<float>;
using cf64 = std::complex<double>;

/// The library's version string ("major.minor.patch").
std::string_view version() noexcept;

/// A configuration value outside its allowed range. Thrown when a block or a
/// sweep is built, never from a hot path. The message reads
///   "<parameter> = <value> is not allowed; allowed: <allowed>"
/// and the three parts are kept for programmatic use.
class ConfigError : public std::invalid_argument {
 public:
  ConfigError(std::string parameter, std::string value, std::string allowed);
  const std::string& parameter() const noexcept { return parameter_; }
  const std::string& value() const noexcept { return value_; }
  const std::string& allowed() const noexcept { return allowed_; }

 private:
  std::string parameter_, value_, allowed_;
};

/// A file or data stream that cannot be read as what it claims to be
/// (missing file, malformed JSON, wrong size). The message names the file
/// and, where there is one, the key or field.
class InputError : public std::runtime_error {
 public:
  explicit InputError(const std::string& message) : std::runtime_error(message) {}
};

/// Formats a double the way error messages and tables show it (shortest
/// round-trip form; "nan", "inf" spelled out).
std::string format_number(double value);

namespace detail {
[[noreturn]] void assertion_failed(const char* expr, const char* file, int line, const char* msg);
}  // namespace detail

/// Library assertion for broken preconditions in hot paths (wrong buffer
/// lengths and the like). Always on: the check is one compare per call.
#define QAMSIGHT_ASSERT(expr, msg)                                                   \
  do {                                                                               \
    if (!(expr)) ::qamsight::detail::assertion_failed(#expr, __FILE__, __LINE__, msg); \
  } while (0)

/// Throws ConfigError unless lo <= value <= hi and value is finite.
void require_range(std::string_view parameter, double value, double lo, double hi);
/// Throws ConfigError unless value is finite and lo < value <= hi.
void require_range_open_low(std::string_view parameter, double value, double lo, double hi);

// ---------------------------------------------------------------------------------------------
// Counter-based random numbers.
//
// Philox4x32-10 (J. K. Salmon, M. A. Moraes, R. O. Dror, D. E. Shaw, "Parallel random numbers:
// as easy as 1, 2, 3", SC 2011). A generator is a pure function of a 128-bit counter and a
// 64-bit key, so every frame of a simulation owns an independent stream that any thread or
// process can regenerate. qamsight keys it by the user's seed and builds the counter from
//   word 0: block index within the stream (2^32 blocks of 128 bits = 64 GiB per stream)
//   word 1: substream, the purpose of the numbers (payload bits, noise, phase noise, ...)
//   words 2-3: the 64-bit stream number (the sim module uses point and frame indices).
// ---------------------------------------------------------------------------------------------

using PhiloxCounter = std::array<std::uint32_t, 4>;
using PhiloxKey = std::array<std::uint32_t, 2>;

/// One Philox4x32 block with the given number of rounds (10 is the standard generator).
PhiloxCounter philox4x32(PhiloxCounter counter, PhiloxKey key, int rounds = 10) noexcept;

/// Purposes of random numbers within one frame; each gets its own substream so that
/// adding a block to a chain does not change the numbers that the other blocks draw.
enum class Substream : std::uint32_t {
  payload = 1,
  awgn = 2,
  phase_noise = 3,
  timing = 4,
  user = 16,
};

/// Sequential reader of one Philox stream. Cheap to construct (no state beyond the
/// counter), so a frame makes one per purpose.
///
/// Gaussian samples use the Box-Muller transform in double precision. The radial
/// uniform is u = (x + 1/2) 2^-64 from a 64-bit word x, exact near zero, so the largest
/// magnitude it can produce is sqrt(-2 ln 2^-65) = 9.49 sigma and the tail probability
/// is exact (to double rounding) far beyond the 7 sigma that a BER of 1e-12 needs.
/// Bulk fills start at a block boundary and use whole 128-bit blocks (double normals: two per
/// block; float normals: four, see fill_gaussian).
/// Bulk fills run vectorised kernels (AVX2 where the CPU has it) that produce bit-identical
/// numbers on every path: the log and sin/cos are the library's own double-precision
/// polynomials (detail/kernels.hpp), not the C library's, so a stream is the same on any CPU.
class RandomStream {
 public:
  RandomStream(std::uint64_t seed, std::uint64_t stream, Substream substream) noexcept;
  RandomStream(std::uint64_t seed, std::uint64_t stream, std::uint32_t substream) noexcept;

  /// Next four raw 32-bit words (one Philox block).
  PhiloxCounter next_block() noexcept;
  std::uint32_t next_u32() noexcept;
  std::uint64_t next_u64() noexcept;
  /// Uniform on [0, 1) with 53-bit resolution.
  double uniform() noexcept;
  /// Standard normal sample.
  double gaussian() noexcept;

  /// Fills with uniform [0, 1) floats (24-bit resolution).
  void fill_uniform(std::span<float> out) noexcept;
  /// Fills with independent standard normal samples (variance 1): floats from the
  /// single-precision generator (two pairs per Philox block; box_muller_f32 on a 32-bit radial
  /// word, extended to 64 bits in the tail: detail/kernels.hpp defines it), doubles from the
  /// double one (box_muller, one block per pair).
  void fill_gaussian(std::span<float> out) noexcept;
  void fill_gaussian(std::span<double> out) noexcept;
  /// Fills with circular complex Gaussian samples of total variance `variance`
  /// (variance/2 per real and imaginary part), single-precision pairs.
  void fill_complex_gaussian(std::span<cf32> out, double variance) noexcept;
  /// out[i] = in[i] + sigma (g0 + j g1), one single-precision Gaussian pair per sample (two
  /// samples per Philox block), all in float (sigma rounded to float first); in and out may be
  /// the same span. Draws the same Gaussian pairs as fill_complex_gaussian.
  void add_complex_noise(std::span<const cf32> in, std::span<cf32> out, double sigma) noexcept;
  /// Fills with uniformly random labels in [0, 2^bits), bits in 1..32.
  void fill_labels(std::span<std::uint32_t> out, unsigned bits) noexcept;
  /// Fills with uniformly random labels in [0, 2^bits), bits in 1..32, taking 32 / bits labels
  /// from each word (5 per word for 64-QAM) in the order of detail::KernelTable::
  /// philox_packed_labels; starts at the next block boundary and ends at one (a call uses
  /// 2 ceil(n / (8 (32 / bits))) blocks). The sweeps' payload; fill_labels uses one word per label.
  void fill_packed_labels(std::span<std::uint32_t> out, unsigned bits) noexcept;
  /// Fills with random bits, one per byte (values 0 or 1).
  void fill_bits(std::span<std::uint8_t> out) noexcept;

  /// Skips to an absolute block index (for random access into a stream).
  void seek_block(std::uint32_t block) noexcept;
  std::uint32_t block_index() const noexcept { return counter_[0]; }

 private:
  PhiloxCounter counter_;
  PhiloxKey key_;
  PhiloxCounter buffer_{};
  unsigned used_ = 4;  // words of buffer_ already consumed
  bool have_spare_ = false;
  double spare_ = 0.0;
};

/// The standard normal pair from two 32-bit-word pairs: (a0,a1) radial, (b0,b1) angular.
/// Exposed so vectorised generators can be checked against the reference.
std::array<double, 2> box_muller(std::uint32_t a0, std::uint32_t a1, std::uint32_t b0,
                                 std::uint32_t b1) noexcept;
/// The single-precision pair of the float streams (noise of the sweeps), from the same words
/// (b1 is not used): float arithmetic, the radial uniform kept at float precision down to 2^-65
/// so the tail reaches 9.49 sigma as in box_muller (detail/kernels.hpp states the accuracy).
std::array<float, 2> box_muller_f32(std::uint32_t a0, std::uint32_t a1, std::uint32_t b0,
                                    std::uint32_t b1) noexcept;

/// dB helpers (power ratios).
inline double db_to_linear(double db) noexcept { return std::pow(10.0, db / 10.0); }
inline double linear_to_db(double linear) noexcept { return 10.0 * std::log10(linear); }

}  // namespace qamsight
