// measure: error counters that merge by addition, exact binomial intervals, EVM accumulation.
#pragma once

#include <cstdint>
#include <span>

#include "qamsight/core.hpp"

namespace qamsight {

/// Counts of one simulation point. Integers only, so merging in any grouping gives the
/// same totals; merged by addition.
struct ErrorCounts {
  std::uint64_t bits = 0;
  std::uint64_t bit_errors = 0;
  std::uint64_t symbols = 0;
  std::uint64_t symbol_errors = 0;
  std::uint64_t frames = 0;
  std::uint64_t frame_errors = 0;

  ErrorCounts& operator+=(const ErrorCounts& o) noexcept {
    bits += o.bits;
    bit_errors += o.bit_errors;
    symbols += o.symbols;
    symbol_errors += o.symbol_errors;
    frames += o.frames;
    frame_errors += o.frame_errors;
    return *this;
  }
  friend bool operator==(const ErrorCounts&, const ErrorCounts&) = default;
};

/// A two-sided confidence interval for a proportion.
struct Interval {
  double low = 0.0;
  double high = 1.0;
};

/// Exact (Clopper-Pearson) two-sided interval for k successes in n trials at the given
/// confidence (for example 0.95), from beta quantiles (Boost.Math). With k = 0 the low end
/// is 0, with k = n the high end is 1. Throws ConfigError if k > n, n = 0 or the confidence
/// is not in (0, 1).
Interval clopper_pearson(std::uint64_t k, std::uint64_t n, double confidence);

/// Two-sided exact binomial test p-value of H0: p = p0 given k of n (sum of the
/// probabilities of outcomes no more likely than k; Boost.Math binomial distribution).
double binomial_test_p_value(std::uint64_t k, std::uint64_t n, double p0);

/// One-sided p-value that a rate k1/n1 exceeds a baseline rate k0/n0: the conditional test
/// given k0 + k1 total events, under which k1 ~ Binomial(k0 + k1, n1 / (n0 + n1)) (exact
/// for Poisson counts, the regime of bit errors). Returns 1 when k0 + k1 = 0.
double rate_increase_p_value(std::uint64_t k1, std::uint64_t n1, std::uint64_t k0, std::uint64_t n0);

/// Accumulates data-aided error-vector statistics. Sums in double; merge by addition in a
/// fixed order for reproducible results.
struct EvmAccumulator {
  double error_power = 0.0;      // sum |r - s|^2
  double reference_power = 0.0;  // sum |s|^2
  double peak_error_power = 0.0; // max |r - s|^2
  std::uint64_t count = 0;

  /// Adds received symbols against their references (same length).
  void add(std::span<const cf32> received, std::span<const cf32> reference) noexcept;
  EvmAccumulator& operator+=(const EvmAccumulator& o) noexcept;

  /// RMS EVM normalised to the mean reference power, as a ratio (not %). NaN if empty.
  double rms() const noexcept;
  double rms_percent() const noexcept { return 100.0 * rms(); }
  /// 20 log10(rms()).
  double rms_db() const noexcept;
  /// MER in dB: 10 log10(reference power / error power).
  double mer_db() const noexcept;
};

}  // namespace qamsight
