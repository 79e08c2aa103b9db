// sim: the coded frame (encode, map, LLRs, decode) that the built-in links share.
#include <algorithm>

#include "qamsight/theory.hpp"
#include "sim_links.hpp"

namespace qamsight {

namespace detail {

std::shared_ptr<const Code> link_code(const LinkConfig& link) {
  if (link.code.empty()) return nullptr;
  return make_code(link.code);
}

std::size_t coded_frame_symbols(const Code& code, const Constellation& constellation) noexcept {
  const std::size_t bits = constellation.bits_per_symbol();
  return (code.coded_bits() + bits - 1) / bits;
}

CodedFrame::CodedFrame(std::shared_ptr<const Code> code, const Constellation& constellation, LlrMethod method)
    : code_(std::move(code)),
      decoder_(code_->make_decoder()),
      demapper_(constellation, method),
      constellation_(constellation),
      bits_(constellation.bits_per_symbol()),
      info_(code_->info_bits()),
      decoded_(code_->info_bits()),
      labels_bits_(coded_frame_symbols(*code_, constellation) * bits_),
      llr_(labels_bits_.size()),
      rx_labels_(labels_bits_.size() / bits_) {}

void CodedFrame::transmit(std::uint64_t seed, std::uint64_t stream, std::span<std::uint32_t> labels) noexcept {
  QAMSIGHT_ASSERT(labels.size() == symbols(), "coded frame: label span of the wrong length");
  RandomStream payload(seed, stream, Substream::payload);
  payload.fill_bits(info_);
  const std::size_t n = code_->coded_bits();
  const std::span<std::uint8_t> all(labels_bits_);
  code_->encode(info_, all.first(n));
  if (all.size() > n) {
    RandomStream filler(seed, stream, kCodedFillerSubstream);
    filler.fill_bits(all.subspan(n));
  }
  constellation_.bits_to_labels(labels_bits_, labels);
}

void CodedFrame::receive(std::span<const cf32> decided, std::span<const std::uint32_t> sent, double n0,
                         ErrorCounts& out) noexcept {
  QAMSIGHT_ASSERT(decided.size() == symbols() && sent.size() == symbols(), "coded frame: span of the wrong length");
  // Raw (pre-decoding) symbol decisions, for the channel's symbol error rate.
  constellation_.slice(decided, rx_labels_);
  demapper_.process(decided, n0, llr_);
  decode_and_count(rx_labels_, sent, out);
}

void CodedFrame::receive(const StageCaller& stage, std::span<const std::uint32_t> decisions,
                         std::span<const std::uint32_t> sent, double n0, ErrorCounts& out) noexcept {
  QAMSIGHT_ASSERT(decisions.size() == symbols() && sent.size() == symbols(), "coded frame: span of the wrong length");
  switch (stage.kind()) {
    case StageOutputKind::symbols:
      demapper_.process(stage.decision_symbols(), n0, llr_);
      break;
    case StageOutputKind::llrs: {
      const auto l = stage.llrs();
      QAMSIGHT_ASSERT(l.size() == llr_.size(), "coded frame: stage LLRs of the wrong length");
      std::copy(l.begin(), l.end(), llr_.begin());
      break;
    }
    case StageOutputKind::bits: {
      const auto b = stage.bits();
      QAMSIGHT_ASSERT(b.size() == llr_.size(), "coded frame: stage bits of the wrong length");
      for (std::size_t i = 0; i < b.size(); ++i) llr_[i] = b[i] ? -1.0f : 1.0f;
      break;
    }
  }
  decode_and_count(decisions, sent, out);
}

void CodedFrame::decode_and_count(std::span<const std::uint32_t> decisions, std::span<const std::uint32_t> sent,
                                  ErrorCounts& out) noexcept {
  std::uint64_t symbol_errors = 0;
  for (std::size_t i = 0; i < sent.size(); ++i) symbol_errors += sent[i] != decisions[i];
  (void)decoder_->decode(std::span<const float>(llr_).first(code_->coded_bits()), decoded_);
  std::uint64_t bit_errors = 0;
  for (std::size_t i = 0; i < info_.size(); ++i) bit_errors += info_[i] != decoded_[i];
  out.bits += info_.size();
  out.bit_errors += bit_errors;
  out.symbols += sent.size();
  out.symbol_errors += symbol_errors;
  out.frames += 1;
  out.frame_errors += bit_errors != 0;
}

}  // namespace detail

double effective_code_rate(const LinkConfig& link, const Constellation& constellation) {
  const auto code = detail::link_code(link);
  if (!code) return 1.0;
  const double channel_bits =
      static_cast<double>(detail::coded_frame_symbols(*code, constellation) * constellation.bits_per_symbol());
  return static_cast<double>(code->info_bits()) / channel_bits;
}

LlrMethod coded_llr_method(const LinkConfig& link, const Constellation& constellation) {
  if (link.llr) return *link.llr;
  // Exact log-MAP where it is cheap (its cost grows with the points off the per-axis path).
  return constellation.order() <= 16 ? LlrMethod::exact : LlrMethod::max_log;
}

}  // namespace qamsight
