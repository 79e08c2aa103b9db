// Private: the link implementations behind make_link, and the user-stage glue they share.
#pragma once

#include <memory>
#include <mutex>
#include <vector>

#include "qamsight/sim.hpp"

namespace qamsight::detail {

/// The oversampled (or impaired symbol-rate) waveform link; sim_waveform.cpp.
std::unique_ptr<Link> make_waveform_link(const LinkConfig& link, const PointSpec& point, std::uint64_t seed);

/// Buffers and the call of a user stage; turns its output into decided labels.
class StageCaller {
 public:
  StageCaller(const UserStage& stage, std::mutex& mutex, const Constellation& constellation, std::size_t symbols);
  /// Calls the stage; afterwards labels hold its decisions. `decision_symbols()` is the stage's
  /// symbol output (for EVM) when it returns symbols.
  void call(const StageInput& input, std::span<std::uint32_t> labels);
  bool returns_symbols() const noexcept { return stage_.output == StageOutputKind::symbols; }
  std::span<const cf32> decision_symbols() const noexcept { return symbols_; }

 private:
  const UserStage& stage_;
  std::mutex& mutex_;
  const Constellation& constellation_;
  std::vector<cf32> symbols_;
  std::vector<float> llrs_;
  std::vector<std::uint8_t> bits_;
};

/// Bit and symbol errors between label arrays, added to `out` (counts only).
void count_label_errors(std::span<const std::uint32_t> tx, std::span<const std::uint32_t> rx, unsigned bits,
                        ErrorCounts& out) noexcept;

}  // namespace qamsight::detail
