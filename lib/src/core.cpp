// core: errors, number formatting and the Philox4x32-10 counter-based generator.
#include "qamsight/core.hpp"

#include "qamsight/detail/kernels.hpp"

#include <bit>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <numbers>

namespace qamsight {

std::string_view version() noexcept { return QAMSIGHT_VERSION; }

namespace {
std::string compose(const std::string& parameter, const std::string& value,
                    const std::string& allowed) {
  return parameter + " = " + value + " is not allowed; allowed: " + allowed;
}
}  // namespace

ConfigError::ConfigError(std::string parameter, std::string value, std::string allowed)
    : std::invalid_argument(compose(parameter, value, allowed)),
      parameter_(std::move(parameter)),
      value_(std::move(value)),
      allowed_(std::move(allowed)) {}

std::string format_number(double value) {
  if (std::isnan(value)) return "nan";
  if (std::isinf(value)) return value > 0 ? "inf" : "-inf";
  char buf[64];
  auto res = std::to_chars(buf, buf + sizeof buf, value);
  return std::string(buf, res.ptr);
}

void require_range(std::string_view parameter, double value, double lo, double hi) {
  if (!std::isfinite(value) || value < lo || value > hi) {
    throw ConfigError(std::string(parameter), format_number(value),
                      "finite, " + format_number(lo) + " to " + format_number(hi));
  }
}

void require_range_open_low(std::string_view parameter, double value, double lo, double hi) {
  if (!std::isfinite(value) || value <= lo || value > hi) {
    throw ConfigError(std::string(parameter), format_number(value),
                      "finite, greater than " + format_number(lo) + " and at most " +
                          format_number(hi));
  }
}

namespace detail {
void assertion_failed(const char* expr, const char* file, int line, const char* msg) {
  std::fprintf(stderr, "qamsight: internal assertion failed: %s (%s) at %s:%d\n", msg, expr, file,
               line);
  std::abort();
}
}  // namespace detail

// ---------------------------------------------------------------------------------------------
// Philox4x32 (Salmon et al., SC 2011): multipliers and Weyl key increments of the paper.
namespace {
constexpr std::uint32_t kPhiloxM0 = 0xD2511F53u;
constexpr std::uint32_t kPhiloxM1 = 0xCD9E8D57u;
constexpr std::uint32_t kPhiloxW0 = 0x9E3779B9u;
constexpr std::uint32_t kPhiloxW1 = 0xBB67AE85u;

inline PhiloxCounter philox_round(const PhiloxCounter& c, const PhiloxKey& k) noexcept {
  const std::uint64_t p0 = std::uint64_t{kPhiloxM0} * c[0];
  const std::uint64_t p1 = std::uint64_t{kPhiloxM1} * c[2];
  const auto hi0 = static_cast<std::uint32_t>(p0 >> 32), lo0 = static_cast<std::uint32_t>(p0);
  const auto hi1 = static_cast<std::uint32_t>(p1 >> 32), lo1 = static_cast<std::uint32_t>(p1);
  return {hi1 ^ c[1] ^ k[0], lo1, hi0 ^ c[3] ^ k[1], lo0};
}
}  // namespace

PhiloxCounter philox4x32(PhiloxCounter counter, PhiloxKey key, int rounds) noexcept {
  for (int r = 0; r < rounds; ++r) {
    if (r > 0) {
      key[0] += kPhiloxW0;
      key[1] += kPhiloxW1;
    }
    counter = philox_round(counter, key);
  }
  return counter;
}

std::array<double, 2> box_muller(std::uint32_t a0, std::uint32_t a1, std::uint32_t b0,
                                 std::uint32_t b1) noexcept {
  // The sequence is defined once, in detail::gaussian_pair (kernels_portable.cpp): Box-Muller
  // on u = (x + 1/2) 2^-64, exact for small x where the tail lives (radius up to 9.49), with the
  // library's own double-precision log and sin/cos so that the vector kernels match it exactly.
  std::array<double, 2> g;
  detail::gaussian_pair(a0, a1, b0, b1, &g[0], &g[1]);
  return g;
}

std::array<float, 2> box_muller_f32(std::uint32_t a0, std::uint32_t a1, std::uint32_t b0,
                                    std::uint32_t b1) noexcept {
  // Defined in detail::gaussian_pair_f32 (kernels_portable.cpp): the same Box-Muller in float
  // arithmetic, with u kept at float precision down to 2^-65; b1 is not used.
  std::array<float, 2> g;
  detail::gaussian_pair_f32(a0, a1, b0, b1, &g[0], &g[1]);
  return g;
}

namespace {
detail::PhiloxStart philox_start(const PhiloxCounter& c, const PhiloxKey& k) noexcept {
  return {{c[0], c[1], c[2], c[3]}, {k[0], k[1]}};
}
}  // namespace

RandomStream::RandomStream(std::uint64_t seed, std::uint64_t stream, Substream substream) noexcept
    : RandomStream(seed, stream, static_cast<std::uint32_t>(substream)) {}

RandomStream::RandomStream(std::uint64_t seed, std::uint64_t stream,
                           std::uint32_t substream) noexcept
    : counter_{0u, substream, static_cast<std::uint32_t>(stream),
               static_cast<std::uint32_t>(stream >> 32)},
      key_{static_cast<std::uint32_t>(seed), static_cast<std::uint32_t>(seed >> 32)} {}

PhiloxCounter RandomStream::next_block() noexcept {
  PhiloxCounter out = philox4x32(counter_, key_);
  ++counter_[0];
  return out;
}

std::uint32_t RandomStream::next_u32() noexcept {
  if (used_ == 4) {
    buffer_ = next_block();
    used_ = 0;
  }
  return buffer_[used_++];
}

std::uint64_t RandomStream::next_u64() noexcept {
  const std::uint64_t hi = next_u32();
  return (hi << 32) | next_u32();
}

double RandomStream::uniform() noexcept {
  return static_cast<double>(next_u64() >> 11) * 0x1p-53;
}

double RandomStream::gaussian() noexcept {
  if (have_spare_) {
    have_spare_ = false;
    return spare_;
  }
  const auto b = next_block();
  const auto g = box_muller(b[0], b[1], b[2], b[3]);
  spare_ = g[1];
  have_spare_ = true;
  return g[0];
}

void RandomStream::fill_uniform(std::span<float> out) noexcept {
  // Words in stream order: the rest of the current block, whole blocks by the kernel, a tail.
  std::size_t i = 0;
  const std::size_t n = out.size();
  for (; i < n && used_ < 4; ++i) out[i] = static_cast<float>(next_u32() >> 8) * 0x1p-24f;
  const std::size_t blocks = (n - i) / 4;
  detail::kernels().philox_uniform_f32(philox_start(counter_, key_), blocks, out.data() + i);
  counter_[0] += static_cast<std::uint32_t>(blocks);
  for (i += 4 * blocks; i < n; ++i) out[i] = static_cast<float>(next_u32() >> 8) * 0x1p-24f;
}

void RandomStream::fill_gaussian(std::span<float> out) noexcept {
  used_ = 4;
  const std::size_t pairs = (out.size() + 1) / 2;  // an odd count uses the first half of a last pair
  const detail::PhiloxStart start = philox_start(counter_, key_);
  detail::kernels().gaussian_f32(start, out.size() / 2, out.data());
  if (out.size() % 2) {
    const std::size_t p = pairs - 1, b = p / 2;
    const PhiloxCounter c{counter_[0] + static_cast<std::uint32_t>(b), counter_[1], counter_[2], counter_[3]};
    const auto w = philox4x32(c, key_);
    const unsigned h = static_cast<unsigned>(p % 2);
    float g1;
    detail::gaussian_pair_f32_at(start, b, h, w[2 * h], w[2 * h + 1], &out.back(), &g1);
  }
  counter_[0] += static_cast<std::uint32_t>((pairs + 1) / 2);
}

void RandomStream::fill_gaussian(std::span<double> out) noexcept {
  used_ = 4;
  const std::size_t pairs = out.size() / 2;
  detail::kernels().gaussian_f64(philox_start(counter_, key_), pairs, out.data());
  counter_[0] += static_cast<std::uint32_t>(pairs);
  if (out.size() % 2) {
    const auto b = next_block();
    out.back() = box_muller(b[0], b[1], b[2], b[3])[0];
  }
}

void RandomStream::fill_complex_gaussian(std::span<cf32> out, double variance) noexcept {
  used_ = 4;
  const double sigma = std::sqrt(variance / 2.0);
  detail::kernels().noise_cf32(philox_start(counter_, key_), out.size(), static_cast<float>(sigma), nullptr,
                               reinterpret_cast<float*>(out.data()));
  counter_[0] += static_cast<std::uint32_t>((out.size() + 1) / 2);
}

void RandomStream::add_complex_noise(std::span<const cf32> in, std::span<cf32> out, double sigma) noexcept {
  used_ = 4;
  detail::kernels().noise_cf32(philox_start(counter_, key_), in.size(), static_cast<float>(sigma),
                               reinterpret_cast<const float*>(in.data()), reinterpret_cast<float*>(out.data()));
  counter_[0] += static_cast<std::uint32_t>((in.size() + 1) / 2);
}

void RandomStream::fill_labels(std::span<std::uint32_t> out, unsigned bits) noexcept {
  const unsigned shift = 32u - bits;
  if (shift >= 32u) {
    for (auto& v : out) v = 0u;
    return;
  }
  std::size_t i = 0;
  const std::size_t n = out.size();
  for (; i < n && used_ < 4; ++i) out[i] = next_u32() >> shift;
  const std::size_t blocks = (n - i) / 4;
  detail::kernels().philox_words(philox_start(counter_, key_), blocks, shift, out.data() + i);
  counter_[0] += static_cast<std::uint32_t>(blocks);
  for (i += 4 * blocks; i < n; ++i) out[i] = next_u32() >> shift;
}

void RandomStream::fill_packed_labels(std::span<std::uint32_t> out, unsigned bits) noexcept {
  used_ = 4;
  if (bits == 0u || bits > 32u) {  // as fill_labels: no bits, no randomness
    for (auto& v : out) v = 0u;
    return;
  }
  const std::size_t group = 8u * (32u / bits);
  detail::kernels().philox_packed_labels(philox_start(counter_, key_), out.size(), bits, out.data());
  counter_[0] += static_cast<std::uint32_t>(2 * ((out.size() + group - 1) / group));
}

void RandomStream::fill_bits(std::span<std::uint8_t> out) noexcept {
  std::size_t i = 0;
  const std::size_t n = out.size();
  while (i < n) {
    std::uint32_t w = next_u32();
    for (int b = 0; b < 32 && i < n; ++b, ++i) {
      out[i] = static_cast<std::uint8_t>((w >> 31) & 1u);
      w <<= 1;
    }
  }
}

void RandomStream::seek_block(std::uint32_t block) noexcept {
  counter_[0] = block;
  used_ = 4;
  have_spare_ = false;
}

}  // namespace qamsight
