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
  for (std::size_t i = 0; i < in.size(); ++i) {
    const auto b = rng.next_block();
    const auto g = box_muller(b[0], b[1], b[2], b[3]);
    out[i] = in[i] + cf32(static_cast<float>(sigma * g[0]), static_cast<float>(sigma * g[1]));
  }
}

}  // namespace qamsight
