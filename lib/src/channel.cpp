// channel: AWGN block.
#include "qamsight/channel.hpp"

#include <cmath>

namespace qamsight {

AwgnChannel::AwgnChannel(const AwgnConfig& config) : config_(config) {
  require_range("es_n0_db", config.es_n0_db, -50.0, 150.0);
  require_range_open_low("symbol_energy", config.symbol_energy, 0.0, 1e30);
  n0_ = config.symbol_energy / db_to_linear(config.es_n0_db);
}

void AwgnChannel::process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) const noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  const double sigma = std::sqrt(n0_ / 2.0);
  rng.seek_block(rng.block_index());  // bulk draws start at a block boundary
  rng.add_complex_noise(in, out.first(in.size()), sigma);  // vectorised kernel, same numbers on any CPU
}

}  // namespace qamsight
