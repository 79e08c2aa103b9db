// channel: additive white Gaussian noise and the SNR conventions that calibrate it.
#pragma once

#include <span>

#include "qamsight/core.hpp"

namespace qamsight {

/// Complex AWGN with total variance N0 per sample (N0/2 per real dimension).
///
/// Convention: the signal entering the block has mean symbol energy `symbol_energy` (1 for
/// the library's unit-energy constellations) when summed over the samples of one symbol, and
/// the receive filter, if any, has unit energy. Then N0 = symbol_energy / (Es/N0) per sample
/// gives the configured Es/N0 at the matched-filter output for any oversampling factor; the
/// per-sample SNR is Es/N0 - 10 log10(samples per symbol).
struct AwgnConfig {
  double es_n0_db = 10.0;     ///< Es/N0 at the matched-filter output, dB; -50 to 150
  double symbol_energy = 1.0; ///< mean energy per symbol of the input; > 0
};

class AwgnChannel {
 public:
  explicit AwgnChannel(const AwgnConfig& config);
  /// Total complex noise variance per sample, N0.
  double noise_variance() const noexcept { return n0_; }
  const AwgnConfig& config() const noexcept { return config_; }
  /// out = in + noise; in and out may be the same span. Draws from `rng` in whole blocks.
  void process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) const noexcept;

 private:
  AwgnConfig config_;
  double n0_;
};

}  // namespace qamsight
