// fec_conv: K = 7 (171, 133) convolutional encoder, puncturing, and the soft Viterbi decoder.
#include <algorithm>
#include <array>
#include <bit>
#include <cstring>
#include <string>

#include "qamsight/detail/fec_viterbi.hpp"
#include "qamsight/fec.hpp"

namespace qamsight {

namespace {

constexpr std::size_t kMaxInfoBits = 1000000;

unsigned parity7(std::uint32_t x) noexcept { return static_cast<unsigned>(std::popcount(x) & 1); }

const char* rate_text(ConvRate rate) {
  switch (rate) {
    case ConvRate::r1_2:
      return "1/2";
    case ConvRate::r2_3:
      return "2/3";
    case ConvRate::r3_4:
      return "3/4";
    case ConvRate::r5_6:
      return "5/6";
  }
  return "?";
}

// Keep patterns, see fec.hpp (from memory; the common WLAN/DVB patterns of this code).
void puncture_pattern(ConvRate rate, std::vector<std::uint8_t>& a, std::vector<std::uint8_t>& b) {
  switch (rate) {
    case ConvRate::r1_2:
      a = {1};
      b = {1};
      return;
    case ConvRate::r2_3:
      a = {1, 0};
      b = {1, 1};
      return;
    case ConvRate::r3_4:
      a = {1, 0, 1};
      b = {1, 1, 0};
      return;
    case ConvRate::r5_6:
      a = {1, 0, 1, 0, 1};
      b = {1, 1, 0, 1, 0};
      return;
  }
  throw ConfigError("convolutional code rate", std::to_string(static_cast<int>(rate)), "1/2, 2/3, 3/4, 5/6");
}

void require_length(const char* what, std::size_t got, std::size_t want, const std::string& code) {
  if (got != want) throw ConfigError(what, std::to_string(got), std::to_string(want) + " for code " + code);
}

// Butterfly branch signs. The branch from state 2i with input 0 emits A = parity(2i & 171),
// B = parity(2i & 133); its correlation metric is sa[i] L_A + sb[i] L_B with s = 1 - 2 bit.
// Both generators tap the current input and the oldest bit, so the three other branches of the
// butterfly (2i+1 -> i, 2i -> i+32, 2i+1 -> i+32) have metrics -m, -m, +m.
struct ButterflySigns {
  std::array<float, 32> a{}, b{};
};
constexpr ButterflySigns make_signs() {
  ButterflySigns s;
  for (unsigned i = 0; i < 32; ++i) {
    const std::uint32_t reg = 2 * i;
    s.a[i] = (std::popcount(reg & ConvolutionalCode::kGeneratorA) & 1) ? -1.0f : 1.0f;
    s.b[i] = (std::popcount(reg & ConvolutionalCode::kGeneratorB) & 1) ? -1.0f : 1.0f;
  }
  return s;
}
constexpr ButterflySigns kSigns = make_signs();
static_assert((ConvolutionalCode::kGeneratorA & 0x41) == 0x41 &&
                  (ConvolutionalCode::kGeneratorB & 0x41) == 0x41,
              "the butterfly shortcut needs both generators to tap the first and last stage");

// Clamping LLRs keeps metric sums finite and well inside float range (a certainty is
// already reached far below this magnitude).
constexpr float kLlrClamp = 1.0e6f;
constexpr float kUnreachable = -1.0e30f;

}  // namespace

ConvolutionalCode::ConvolutionalCode(ConvolutionalCodeConfig config)
    : info_bits_(config.info_bits), rate_(config.rate) {
  require_range("conv info bits per frame", static_cast<double>(config.info_bits), 1.0,
                static_cast<double>(kMaxInfoBits));
  puncture_pattern(rate_, keep_a_, keep_b_);
  name_ = std::string("conv-k7-r") + rate_text(rate_);
  const std::size_t period = keep_a_.size();
  coded_bits_ = 0;
  for (std::size_t t = 0; t < steps(); ++t) coded_bits_ += keep_a_[t % period] + keep_b_[t % period];
}

std::string ConvolutionalCode::description() const {
  return std::string("K=7 (171,133) convolutional code, rate ") + rate_text(rate_) +
         ", zero-tail frames of " + std::to_string(info_bits_) + " info bits + 6 tail bits, soft Viterbi";
}

void ConvolutionalCode::encode_mother(std::span<const std::uint8_t> info,
                                      std::span<std::uint8_t> mother) const {
  require_length("conv info length", info.size(), info_bits_, name_);
  require_length("conv mother-code length", mother.size(), 2 * steps(), name_);
  std::uint32_t reg = 0;  // bit 6: current input, bit 0: input six steps back
  for (std::size_t t = 0; t < steps(); ++t) {
    const std::uint32_t u = t < info_bits_ ? (info[t] & 1u) : 0u;
    reg = (reg >> 1) | (u << 6);
    mother[2 * t] = static_cast<std::uint8_t>(parity7(reg & kGeneratorA));
    mother[2 * t + 1] = static_cast<std::uint8_t>(parity7(reg & kGeneratorB));
  }
}

void ConvolutionalCode::encode(std::span<const std::uint8_t> info, std::span<std::uint8_t> coded) const {
  require_length("conv info length", info.size(), info_bits_, name_);
  require_length("conv coded length", coded.size(), coded_bits_, name_);
  const std::size_t period = keep_a_.size();
  std::uint32_t reg = 0;
  std::size_t out = 0, phase = 0;
  for (std::size_t t = 0; t < steps(); ++t) {
    const std::uint32_t u = t < info_bits_ ? (info[t] & 1u) : 0u;
    reg = (reg >> 1) | (u << 6);
    if (keep_a_[phase]) coded[out++] = static_cast<std::uint8_t>(parity7(reg & kGeneratorA));
    if (keep_b_[phase]) coded[out++] = static_cast<std::uint8_t>(parity7(reg & kGeneratorB));
    if (++phase == period) phase = 0;
  }
}

void ConvolutionalCode::depuncture(std::span<const float> llr, std::span<float> mother) const {
  require_length("conv coded LLR length", llr.size(), coded_bits_, name_);
  require_length("conv mother LLR length", mother.size(), 2 * steps(), name_);
  const std::size_t period = keep_a_.size();
  std::size_t in = 0, phase = 0;
  for (std::size_t t = 0; t < steps(); ++t) {
    mother[2 * t] = keep_a_[phase] ? llr[in++] : 0.0f;
    mother[2 * t + 1] = keep_b_[phase] ? llr[in++] : 0.0f;
    if (++phase == period) phase = 0;
  }
}

std::unique_ptr<Decoder> ConvolutionalCode::make_decoder() const {
  return std::make_unique<ViterbiDecoder>(*this);
}

// ---------------------------------------------------------------------------------------------

ViterbiDecoder::ViterbiDecoder(const ConvolutionalCode& code)
    : info_bits_(code.info_bits()),
      coded_bits_(code.coded_bits()),
      keep_a_(code.keep_a().begin(), code.keep_a().end()),
      keep_b_(code.keep_b().begin(), code.keep_b().end()),
      llr_a_(code.steps()),
      llr_b_(code.steps()),
      decisions_(code.steps()) {}

DecodeReport ViterbiDecoder::decode(std::span<const float> llr, std::span<std::uint8_t> info) {
  if (llr.size() != coded_bits_)
    throw ConfigError("conv coded LLR length", std::to_string(llr.size()), std::to_string(coded_bits_));
  if (info.size() != info_bits_)
    throw ConfigError("conv info length", std::to_string(info.size()), std::to_string(info_bits_));
  const std::size_t period = keep_a_.size();
  std::size_t in = 0, phase = 0;
  for (std::size_t t = 0; t < llr_a_.size(); ++t) {
    llr_a_[t] = keep_a_[phase] ? std::clamp(llr[in++], -kLlrClamp, kLlrClamp) : 0.0f;
    llr_b_[t] = keep_b_[phase] ? std::clamp(llr[in++], -kLlrClamp, kLlrClamp) : 0.0f;
    if (++phase == period) phase = 0;
  }
  run(info);
  return {1, true};
}

void ViterbiDecoder::decode_mother(std::span<const float> mother_llr, std::span<std::uint8_t> info) {
  if (mother_llr.size() != 2 * llr_a_.size())
    throw ConfigError("conv mother LLR length", std::to_string(mother_llr.size()),
                      std::to_string(2 * llr_a_.size()));
  if (info.size() != info_bits_)
    throw ConfigError("conv info length", std::to_string(info.size()), std::to_string(info_bits_));
  for (std::size_t t = 0; t < llr_a_.size(); ++t) {
    llr_a_[t] = std::clamp(mother_llr[2 * t], -kLlrClamp, kLlrClamp);
    llr_b_[t] = std::clamp(mother_llr[2 * t + 1], -kLlrClamp, kLlrClamp);
  }
  run(info);
}

void ViterbiDecoder::run(std::span<std::uint8_t> info) {
  detail::viterbi_forward_vector(llr_a_, llr_b_, decisions_);
  // The zero tail brings the transmitted path to state 0: trace back from there.
  unsigned state = 0;
  for (std::size_t t = decisions_.size(); t-- > 0;) {
    const unsigned from_odd = static_cast<unsigned>((decisions_[t] >> detail::decision_bit(state)) & 1u);
    if (t < info_bits_) info[t] = static_cast<std::uint8_t>(state >> 5);
    state = ((state << 1) & 63u) | from_odd;
  }
}

// ---------------------------------------------------------------------------------------------
// Add-compare-select kernels. State s = last six inputs, s bit 5 the newest; input u leads from
// s to (s >> 1) | (u << 5), so states 2i and 2i+1 feed states i (u = 0) and i + 32 (u = 1).
// Metrics are correlations (larger is better); the maximum-likelihood path maximises them.
// Ties keep the even predecessor in both kernels.

namespace detail {

namespace {
// Keep metrics near zero every 16 steps so float resolution does not erode their differences.
void renormalise(float* m) noexcept {
  float top = m[0];
  for (unsigned s = 1; s < 64; ++s) top = std::max(top, m[s]);
  for (unsigned s = 0; s < 64; ++s) m[s] -= top;
}
}  // namespace

void viterbi_forward_portable(std::span<const float> la, std::span<const float> lb,
                              std::span<std::uint64_t> decisions) noexcept {
  alignas(64) std::array<float, 64> metric_a, metric_b;
  metric_a.fill(kUnreachable);
  metric_a[0] = 0.0f;
  float* old_m = metric_a.data();
  float* new_m = metric_b.data();
  for (std::size_t t = 0; t < decisions.size(); ++t) {
    std::uint32_t low = 0, high = 0;
    for (unsigned i = 0; i < 32; ++i) {
      const float m = kSigns.a[i] * la[t] + kSigns.b[i] * lb[t];
      const float even = old_m[2 * i], odd = old_m[2 * i + 1];
      const float x0 = even + m, y0 = odd - m;  // into state i (input 0)
      const float x1 = even - m, y1 = odd + m;  // into state i + 32 (input 1)
      const bool c0 = y0 > x0, c1 = y1 > x1;
      new_m[i] = c0 ? y0 : x0;
      new_m[i + 32] = c1 ? y1 : x1;
      low |= static_cast<std::uint32_t>(c0) << decision_bit(i);
      high |= static_cast<std::uint32_t>(c1) << decision_bit(i);
    }
    decisions[t] = low | (static_cast<std::uint64_t>(high) << 32);
    std::swap(old_m, new_m);
    if ((t & 15) == 15) renormalise(old_m);
  }
}

namespace {
// GCC/Clang vector extensions with 4 float lanes (one SSE or NEON register). No intrinsics, so
// the kernel builds on any target these compilers support.
using v4f = float __attribute__((vector_size(16)));
using v4i = std::int32_t __attribute__((vector_size(16)));
using v4u8 = std::uint8_t __attribute__((vector_size(4)));

inline v4f load4(const float* p) noexcept {
  v4f v;
  std::memcpy(&v, p, sizeof v);
  return v;
}
inline void store4(float* p, v4f v) noexcept { std::memcpy(p, &v, sizeof v); }
// Lane j of the accumulated decisions holds the bits of states 4g + j (bit g); packing the four
// lanes as bytes gives the decision bit order documented in fec_viterbi.hpp.
inline std::uint32_t pack_lanes(v4i lanes) noexcept {
  const v4u8 bytes = __builtin_convertvector(lanes, v4u8);
  std::uint32_t word;
  std::memcpy(&word, &bytes, sizeof word);
  return word;
}
}  // namespace

void viterbi_forward_vector(std::span<const float> la, std::span<const float> lb,
                            std::span<std::uint64_t> decisions) noexcept {
  alignas(64) std::array<float, 64> metric_a, metric_b;
  metric_a.fill(kUnreachable);
  metric_a[0] = 0.0f;
  float* old_m = metric_a.data();
  float* new_m = metric_b.data();
  v4f sign_a[8], sign_b[8];
  for (unsigned g = 0; g < 8; ++g) {
    sign_a[g] = load4(kSigns.a.data() + 4 * g);
    sign_b[g] = load4(kSigns.b.data() + 4 * g);
  }
  for (std::size_t t = 0; t < decisions.size(); ++t) {
    const v4f va = {la[t], la[t], la[t], la[t]};
    const v4f vb = {lb[t], lb[t], lb[t], lb[t]};
    v4i acc0 = {0, 0, 0, 0}, acc1 = {0, 0, 0, 0};
    for (unsigned g = 0; g < 8; ++g) {
      // States 8g .. 8g+7 feed states 4g .. 4g+3 and 32 + 4g .. 32 + 4g+3.
      const v4f lo = load4(old_m + 8 * g), hi = load4(old_m + 8 * g + 4);
      const v4f even = __builtin_shufflevector(lo, hi, 0, 2, 4, 6);
      const v4f odd = __builtin_shufflevector(lo, hi, 1, 3, 5, 7);
      const v4f m = sign_a[g] * va + sign_b[g] * vb;
      const v4f x0 = even + m, y0 = odd - m;
      const v4f x1 = even - m, y1 = odd + m;
      const v4i c0 = y0 > x0, c1 = y1 > x1;
      store4(new_m + 4 * g, c0 ? y0 : x0);
      store4(new_m + 32 + 4 * g, c1 ? y1 : x1);
      const std::int32_t bit = 1 << g;
      acc0 |= c0 & bit;
      acc1 |= c1 & bit;
    }
    decisions[t] = pack_lanes(acc0) | (static_cast<std::uint64_t>(pack_lanes(acc1)) << 32);
    std::swap(old_m, new_m);
    if ((t & 15) == 15) renormalise(old_m);
  }
}

}  // namespace detail

}  // namespace qamsight
