// Private: the link implementations behind make_link, and the user-stage glue they share.
#pragma once

#include <memory>
#include <mutex>
#include <vector>

#include "qamsight/fec.hpp"
#include "qamsight/llr.hpp"
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
  StageOutputKind kind() const noexcept { return stage_.output; }
  std::span<const cf32> decision_symbols() const noexcept { return symbols_; }
  /// The stage's LLRs (kind llrs) or hard bits (kind bits, reduced to 0/1) of the last call.
  std::span<const float> llrs() const noexcept { return llrs_; }
  std::span<const std::uint8_t> bits() const noexcept { return bits_; }

 private:
  const UserStage& stage_;
  std::mutex& mutex_;
  const Constellation& constellation_;
  std::vector<cf32> symbols_;
  std::vector<float> llrs_;
  std::vector<std::uint8_t> bits_;
};

/// The coded part of a frame, shared by the symbol-rate and the waveform link: information
/// bits from the frame's payload stream, encoding and mapping to labels on the transmit side;
/// LLRs, decoding and information-bit error counts on the receive side. One per runner
/// (it owns the decoder workspace); allocates only at construction.
class CodedFrame {
 public:
  CodedFrame(std::shared_ptr<const Code> code, const Constellation& constellation, LlrMethod method);
  /// Symbols per frame: ceil(n / bits per symbol).
  std::size_t symbols() const noexcept { return labels_bits_.size() / bits_; }
  /// Fills `labels` (symbols() values) with the frame's codeword plus random filler bits.
  void transmit(std::uint64_t seed, std::uint64_t stream, std::span<std::uint32_t> labels) noexcept;
  /// Decodes the decision-point symbols (symbols() values, noise variance n0 > 0) of the frame
  /// last transmitted (whose labels were `sent`) and adds information bits and their errors,
  /// raw symbol decisions and their errors, and one frame to `out`.
  void receive(std::span<const cf32> decided, std::span<const std::uint32_t> sent, double n0,
               ErrorCounts& out) noexcept;
  /// The same with a user stage in front of the decoder, after its call (`decisions` = the
  /// labels StageCaller::call produced, the raw decisions): symbols go through the built-in
  /// demapper with noise variance n0, LLRs straight to the decoder, hard bits as LLRs of +1
  /// (bit 0) and -1 (bit 1), i.e. hard-decision decoding.
  void receive(const StageCaller& stage, std::span<const std::uint32_t> decisions,
               std::span<const std::uint32_t> sent, double n0, ErrorCounts& out) noexcept;

 private:
  /// Decodes llr_ and adds the counts; `decisions` are the raw symbol decisions.
  void decode_and_count(std::span<const std::uint32_t> decisions, std::span<const std::uint32_t> sent,
                        ErrorCounts& out) noexcept;

  std::shared_ptr<const Code> code_;
  std::unique_ptr<Decoder> decoder_;
  LlrDemapper demapper_;
  const Constellation& constellation_;
  unsigned bits_;
  std::vector<std::uint8_t> info_, decoded_, labels_bits_;
  std::vector<float> llr_;
  std::vector<std::uint32_t> rx_labels_;
};

/// The code of a coded link (validated name); null when uncoded.
std::shared_ptr<const Code> link_code(const LinkConfig& link);
/// Symbols per frame of a coded link: ceil(n / bits per symbol).
std::size_t coded_frame_symbols(const Code& code, const Constellation& constellation) noexcept;
/// Substream of the coded link's filler symbols (waveform warm-up and guard labels, padding
/// bits), kept apart from the payload stream that carries the information bits; outside the
/// values of core.hpp's Substream.
inline constexpr std::uint32_t kCodedFillerSubstream = 9;

/// Bit and symbol errors between label arrays, added to `out` (counts only).
void count_label_errors(std::span<const std::uint32_t> tx, std::span<const std::uint32_t> rx, unsigned bits,
                        ErrorCounts& out) noexcept;

}  // namespace qamsight::detail
