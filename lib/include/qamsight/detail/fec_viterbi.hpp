// fec_viterbi: the add-compare-select kernels of the K = 7 Viterbi decoder (portable and vector).
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>

namespace qamsight::detail {

/// Position of state s's decision in a decision word. The order suits 4-lane vectors: states
/// 4g + j (g = 0..7, j = 0..3) of each half occupy bit 8j + g of that half (s >= 32: +32).
constexpr unsigned decision_bit(unsigned s) noexcept {
  return 32u * (s >> 5) + 8u * (s & 3u) + ((s & 31u) >> 2);
}

/// Forward pass of the 64-state (171, 133) trellis over per-step LLRs la (output A) and lb
/// (output B), starting in state 0. Writes one decision word per step: bit decision_bit(s) is 1
/// if the survivor into state s came from the odd predecessor ((s << 1) & 63) | 1. Both kernels use
/// the same float operations in the same order and give identical decisions; the portable one
/// is the reference for the tests.
void viterbi_forward_portable(std::span<const float> la, std::span<const float> lb,
                              std::span<std::uint64_t> decisions) noexcept;
void viterbi_forward_vector(std::span<const float> la, std::span<const float> lb,
                            std::span<std::uint64_t> decisions) noexcept;

}  // namespace qamsight::detail
