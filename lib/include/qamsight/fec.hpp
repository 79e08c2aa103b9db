// fec: forward error correction: K = 7 convolutional code with soft Viterbi decoding, LDPC codes.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// Conventions of the whole module
//
// * Bits are one per byte, values 0 or 1 (encoders read only the lowest bit of each byte).
// * Soft input is a log-likelihood ratio per coded bit,
//       L = ln( P(bit = 0 | y) / P(bit = 1 | y) ),
//   so a POSITIVE LLR FAVOURS BIT 0. For BPSK that sends bit b as x = 1 - 2b (+1 for bit 0)
//   through real AWGN of variance sigma^2, L = 2 y / sigma^2. This is the convention of the
//   LlrDemapper in llr.hpp, whose output feeds the decoders directly (the modem's BPSK maps
//   bit 0 to -1, which the demapper accounts for). An LLR of 0 is an erasure; punctured bits
//   are re-inserted as 0.
// * Threading: a Code is immutable after construction, so encode() may run on many threads.
//   Decoding state lives in a Decoder made by Code::make_decoder(); use one per thread. A
//   Decoder does not refer back to its Code, so either may be destroyed first.
// * encode()/decode() allocate nothing. They check the span lengths against k and n (one
//   compare per frame) and throw ConfigError on a mismatch; nothing else in them throws.
// ---------------------------------------------------------------------------------------------

/// What a decoder says about one codeword.
struct DecodeReport {
  /// Decoding iterations used: LDPC message-passing iterations (0 if the channel hard
  /// decisions already satisfied every check); 1 for the Viterbi decoder.
  int iterations = 0;
  /// LDPC: the hard decisions satisfy every parity check (an undetected error is still
  /// possible). Viterbi: always true, since its output is a codeword by construction and it
  /// has no way to detect errors.
  bool codeword_valid = false;
};

/// Per-thread decoding workspace of one code; buffers are sized when it is made.
class Decoder {
 public:
  virtual ~Decoder() = default;
  /// Decodes one codeword: llr has coded_bits() values, info receives info_bits() bits.
  virtual DecodeReport decode(std::span<const float> llr, std::span<std::uint8_t> info) = 0;
};

/// A block code as the sweep engine sees it: k information bits in, n coded bits out.
class Code {
 public:
  virtual ~Code() = default;
  /// Factory name ("conv-k7-r1/2", "ldpc-1944-r1/2", "ldpc-alist:PATH").
  virtual const std::string& name() const noexcept = 0;
  /// One line for listings.
  virtual std::string description() const = 0;
  /// Information bits per codeword (k).
  virtual std::size_t info_bits() const noexcept = 0;
  /// Coded bits per codeword (n), after puncturing.
  virtual std::size_t coded_bits() const noexcept = 0;
  /// k / n (for the convolutional code this includes the rate loss of the zero tail).
  double rate() const noexcept {
    return static_cast<double>(info_bits()) / static_cast<double>(coded_bits());
  }
  /// info (k bits) -> coded (n bits).
  virtual void encode(std::span<const std::uint8_t> info, std::span<std::uint8_t> coded) const = 0;
  /// A new decoding workspace (allocates; call once per thread, not per frame).
  virtual std::unique_ptr<Decoder> make_decoder() const = 0;
};

// ---------------------------------------------------------------------------------------------
// Convolutional code K = 7, generators 171 and 133 (octal), zero-tail frames, puncturing.
//
// Each trellis step takes one input bit u_t and emits two bits, first A (generator 171) then
// B (generator 133). A generator's most significant of its 7 bits multiplies the current input
// and its least significant bit the input 6 steps back, so the response to a single 1 is
// A: 1 1 1 1 0 0 1 and B: 1 0 1 1 0 1 1. A frame of k info bits is followed by 6 zero tail
// bits, so it starts and ends in state 0 and carries 2 (k + 6) mother-code bits.
//
// Puncturing keeps A and B bits by a periodic pattern over the steps (period 1, 2, 3, 5);
// the kept bits of a step are sent A first, then B. The patterns (A over B):
//   rate 2/3:  A 1 0        rate 3/4:  A 1 0 1        rate 5/6:  A 1 0 1 0 1
//              B 1 1                   B 1 1 0                   B 1 1 0 1 0
// From memory: the common patterns of open WLAN/DVB standards for this code. They are DVB-S's
// (EN 300 421: X = 171, Y = 133; rate 3/4 sends X1 Y1 Y2 X3), and IEEE 802.11a keeps the same
// positions of each generator's output (its first output A is the 133 one, so it sends that
// bit first within a step). The assignment gives the punctured codes free distances 6, 5 and 4,
// which the tests check by a trellis search; the swapped assignment would give 5, 4 and 3.
// The pattern restarts at every frame and runs through the tail.
// ---------------------------------------------------------------------------------------------

/// Code rates of the punctured convolutional code.
enum class ConvRate { r1_2, r2_3, r3_4, r5_6 };

struct ConvolutionalCodeConfig {
  /// Information bits per frame, 1 to 1 000 000 (6 zero tail bits are added).
  std::size_t info_bits = 1024;
  ConvRate rate = ConvRate::r1_2;
};

class ConvolutionalCode final : public Code {
 public:
  static constexpr unsigned kConstraintLength = 7;
  static constexpr unsigned kTailBits = 6;
  static constexpr unsigned kStates = 64;
  static constexpr std::uint32_t kGeneratorA = 0171;
  static constexpr std::uint32_t kGeneratorB = 0133;

  /// Throws ConfigError for info_bits outside 1..1e6.
  explicit ConvolutionalCode(ConvolutionalCodeConfig config = {});

  const std::string& name() const noexcept override { return name_; }
  std::string description() const override;
  std::size_t info_bits() const noexcept override { return info_bits_; }
  std::size_t coded_bits() const noexcept override { return coded_bits_; }
  void encode(std::span<const std::uint8_t> info, std::span<std::uint8_t> coded) const override;
  std::unique_ptr<Decoder> make_decoder() const override;

  ConvRate puncture_rate() const noexcept { return rate_; }
  /// Trellis steps per frame: k + 6.
  std::size_t steps() const noexcept { return info_bits_ + kTailBits; }
  /// Keep flags (0/1) of the A and B outputs over one puncturing period.
  std::span<const std::uint8_t> keep_a() const noexcept { return keep_a_; }
  std::span<const std::uint8_t> keep_b() const noexcept { return keep_b_; }

  /// Unpunctured encoding of one frame: info (k bits) -> 2 (k + 6) mother-code bits
  /// A0 B0 A1 B1 ...
  void encode_mother(std::span<const std::uint8_t> info, std::span<std::uint8_t> mother) const;
  /// Puncturing-aware reinsertion: coded LLRs (n) -> mother LLRs (2 (k + 6)), 0 where removed.
  void depuncture(std::span<const float> llr, std::span<float> mother) const;

 private:
  std::string name_;
  std::size_t info_bits_;
  std::size_t coded_bits_;
  ConvRate rate_;
  std::vector<std::uint8_t> keep_a_, keep_b_;
};

/// Soft-decision Viterbi decoder of one ConvolutionalCode: add-compare-select on 64 states with
/// float correlation metrics and full traceback from state 0 at the end of the frame, i.e.
/// maximum-likelihood sequence decoding of the zero-tail frame. Buffers (depunctured LLRs,
/// one 64-bit decision word per step) are sized at construction.
class ViterbiDecoder final : public Decoder {
 public:
  explicit ViterbiDecoder(const ConvolutionalCode& code);
  DecodeReport decode(std::span<const float> llr, std::span<std::uint8_t> info) override;
  /// Decodes mother-code LLRs (2 (k + 6), no puncturing applied).
  void decode_mother(std::span<const float> mother_llr, std::span<std::uint8_t> info);

 private:
  std::size_t info_bits_, coded_bits_;
  std::vector<std::uint8_t> keep_a_, keep_b_;
  std::vector<float> llr_a_, llr_b_;      // per step, depunctured
  std::vector<std::uint64_t> decisions_;  // bit s of word t: survivor into state s came from odd
  void run(std::span<std::uint8_t> info);
};

// ---------------------------------------------------------------------------------------------
// LDPC codes
// ---------------------------------------------------------------------------------------------

/// A sparse binary parity-check matrix H (rows = checks, columns = codeword bits), kept both
/// row-wise and column-wise with sorted indices. Immutable.
class ParityCheckMatrix {
 public:
  /// From per-row lists of column indices (0-based, any order). Throws ConfigError for an empty
  /// matrix, an index out of range or a repeated index within a row.
  ParityCheckMatrix(std::size_t rows, std::size_t cols, std::vector<std::vector<std::uint32_t>> row_columns);

  /// Reads D. MacKay's "alist" sparse format:
  ///   line 1: n m                    (columns, rows)
  ///   line 2: max column weight, max row weight
  ///   line 3: the n column weights
  ///   line 4: the m row weights
  ///   then n lines, one per column: its row indices (1-based), optionally padded with zeros
  ///   then m lines, one per row: its column indices (1-based), optionally padded with zeros.
  /// Blank lines are skipped. Validation is strict: counts, weights, the declared maxima,
  /// index ranges, repeats, and agreement of the column and row lists. Errors throw InputError
  /// "alist '<source>' line <L>: <problem>".
  static ParityCheckMatrix parse_alist(std::string_view text, const std::string& source);
  /// parse_alist of a file; InputError if it cannot be read.
  static ParityCheckMatrix read_alist(const std::string& path);
  /// The matrix in alist format, lists padded with zeros to the maximum weights.
  std::string to_alist() const;
  /// Writes to_alist() to a file (through a temporary name that is then renamed); InputError
  /// if that fails.
  void write_alist(const std::string& path) const;

  std::size_t rows() const noexcept { return row_ptr_.size() - 1; }
  std::size_t cols() const noexcept { return col_ptr_.size() - 1; }
  std::size_t edges() const noexcept { return row_idx_.size(); }
  /// Column indices of row r, ascending.
  std::span<const std::uint32_t> row(std::size_t r) const noexcept {
    return {row_idx_.data() + row_ptr_[r], row_idx_.data() + row_ptr_[r + 1]};
  }
  /// Row indices of column c, ascending.
  std::span<const std::uint32_t> column(std::size_t c) const noexcept {
    return {col_idx_.data() + col_ptr_[c], col_idx_.data() + col_ptr_[c + 1]};
  }
  std::size_t max_row_weight() const noexcept;
  std::size_t max_column_weight() const noexcept;
  /// Number of unsatisfied checks of a word of cols() bits.
  std::size_t syndrome_weight(std::span<const std::uint8_t> word) const;
  /// Rank over GF(2) (dense elimination; for tests and construction).
  std::size_t rank() const;

  friend bool operator==(const ParityCheckMatrix& a, const ParityCheckMatrix& b) noexcept {
    return a.row_ptr_ == b.row_ptr_ && a.row_idx_ == b.row_idx_;
  }

 private:
  std::vector<std::uint32_t> row_ptr_, row_idx_, col_ptr_, col_idx_;
};

/// A quasi-cyclic prototype (base) matrix: block_rows x block_cols shifts, -1 for a zero block.
/// Shift s >= 0 stands for the Z x Z identity cyclically shifted so that row r of the block has
/// its 1 in column (r + s) mod Z.
struct LdpcPrototype {
  std::size_t codeword_bits = 0;  ///< n = block_cols * lifting
  unsigned lifting = 0;           ///< Z
  unsigned block_rows = 0;
  unsigned block_cols = 0;
  std::string rate_text;    ///< "1/2", "2/3", "3/4", "5/6"
  std::vector<int> shifts;  ///< row-major, block_rows * block_cols

  int shift(unsigned block_row, unsigned block_col) const noexcept {
    return shifts[static_cast<std::size_t>(block_row) * block_cols + block_col];
  }
  /// The expanded parity-check matrix.
  ParityCheckMatrix expand() const;
};

/// The IEEE 802.11n/ac LDPC prototype matrices, 24 block columns, codeword lengths 648, 1296 and
/// 1944 (Z = 27, 54, 81), rates 1/2, 2/3, 3/4, 5/6 (rate_num / rate_den).
/// All twelve tables are from memory (IEEE Std 802.11-2012 Annex F / 802.11n-2009 Annex R,
/// prototype matrices), not transcribed from the document. The tests check their structure
/// (dimensions, the dual-diagonal parity part, full GF(2) rank) and the decoding performance.
/// Three of them (648 r3/4, 1296 r2/3, 1944 r2/3) contain one or two base-matrix 4-cycles,
/// which may point to misremembered shifts (listed beside the tables in src/fec_ldpc.cpp).
/// Throws ConfigError for other n or rates.
LdpcPrototype ieee80211_ldpc_prototype(std::size_t codeword_bits, int rate_num, int rate_den);

/// Check-node rule of the min-sum decoder.
enum class MinSumRule { normalised, offset };

struct LdpcDecoderConfig {
  /// Maximum layered iterations, 1 to 10000. Decoding stops early when all checks hold.
  int max_iterations = 50;
  MinSumRule rule = MinSumRule::normalised;
  /// Scale of the check-node magnitudes (normalised rule), in (0, 1]. 0.75 is common practice
  /// for layered min-sum.
  float normalisation = 0.75f;
  /// Subtracted from the check-node magnitudes (offset rule), in [0, 10].
  float offset = 0.5f;
};

/// How an LdpcCode computes its parity bits.
enum class LdpcEncoderKind {
  /// IEEE 802.11-style prototype: parity from the dual-diagonal structure in linear time;
  /// info bits are codeword positions 0..k-1.
  dual_diagonal,
  /// Any matrix: Gaussian elimination over GF(2) at construction, then one dense bit-packed
  /// row product per parity bit. Pivots are sought from the last column backwards, so the
  /// parity bits sit at the pivot columns (the last m columns whenever that part of H is
  /// invertible) and the info bits at the remaining positions, in ascending order
  /// (info_positions()). A rank-deficient H gives k = n - rank.
  dense,
};

class LdpcDecoder;

/// An LDPC code: a parity-check matrix, its encoder and the decoder settings. Immutable.
class LdpcCode final : public Code {
 public:
  /// Largest codeword length the dense encoder accepts (its construction costs
  /// O(m^2 n / 64) word operations and it keeps a dense (n - k) x k bit matrix).
  static constexpr std::size_t kMaxDenseCodewordBits = 32768;
  /// Largest lifting size of a prototype code.
  static constexpr unsigned kMaxLifting = 512;

  /// A code from a general matrix (dense encoder). Throws ConfigError if H has full rank n
  /// (no information bits) or more than kMaxDenseCodewordBits columns.
  LdpcCode(std::string name, ParityCheckMatrix h, LdpcDecoderConfig decoder = {});
  /// A code from a quasi-cyclic prototype with a dual-diagonal parity part (dual_diagonal
  /// encoder). Throws ConfigError if the prototype lacks that structure (see the kinds below).
  LdpcCode(std::string name, const LdpcPrototype& prototype, LdpcDecoderConfig decoder = {});

  const std::string& name() const noexcept override { return name_; }
  std::string description() const override { return description_; }
  std::size_t info_bits() const noexcept override { return info_positions_->size(); }
  std::size_t coded_bits() const noexcept override { return h_->cols(); }
  void encode(std::span<const std::uint8_t> info, std::span<std::uint8_t> coded) const override;
  std::unique_ptr<Decoder> make_decoder() const override;
  std::unique_ptr<LdpcDecoder> make_ldpc_decoder() const;

  const ParityCheckMatrix& parity_check() const noexcept { return *h_; }
  /// Codeword position of each info bit, in info-bit order.
  std::span<const std::uint32_t> info_positions() const noexcept { return *info_positions_; }
  LdpcEncoderKind encoder_kind() const noexcept { return kind_; }
  const LdpcDecoderConfig& decoder_config() const noexcept { return config_; }

 private:
  friend class LdpcDecoder;
  void check_config() const;
  std::string name_, description_;
  std::shared_ptr<const ParityCheckMatrix> h_;
  std::shared_ptr<const std::vector<std::uint32_t>> info_positions_;
  LdpcDecoderConfig config_;
  LdpcEncoderKind kind_;
  // dual_diagonal encoder
  LdpcPrototype prototype_;
  unsigned hb_top_shift_ = 0, hb_mid_row_ = 0, hb_mid_shift_ = 0;
  // dense encoder: parity position of each pivot row and its packed coefficients over the info
  std::vector<std::uint32_t> parity_positions_;
  std::vector<std::uint64_t> dense_rows_;
  std::size_t dense_words_ = 0;
};

/// Layered (row by row) min-sum decoder with float messages, normalised or offset check-node
/// rule, early stop when the syndrome is zero. Deterministic: the same LLRs give the same
/// output on any machine with IEEE float arithmetic.
class LdpcDecoder final : public Decoder {
 public:
  explicit LdpcDecoder(const LdpcCode& code);
  DecodeReport decode(std::span<const float> llr, std::span<std::uint8_t> info) override;
  /// Decodes and returns the hard decisions of the whole codeword (n bits).
  DecodeReport decode_codeword(std::span<const float> llr, std::span<std::uint8_t> codeword);
  /// Posterior LLRs of the last decode (n values, same sign convention as the input).
  std::span<const float> posterior() const noexcept { return posterior_; }

 private:
  DecodeReport run(std::span<const float> llr);
  std::shared_ptr<const ParityCheckMatrix> h_;
  std::shared_ptr<const std::vector<std::uint32_t>> info_positions_;
  LdpcDecoderConfig config_;
  std::vector<float> posterior_;  // n
  std::vector<float> check_msg_;  // one per edge, row-major order
  std::vector<float> scratch_;    // max row weight
};

// ---------------------------------------------------------------------------------------------
// Factory
// ---------------------------------------------------------------------------------------------

/// Settings that the names leave open.
struct CodeOptions {
  /// Information bits per frame of the convolutional codes.
  std::size_t conv_info_bits = 1024;
  LdpcDecoderConfig ldpc;
};

struct CodeNameInfo {
  std::string name;
  std::string description;
};

/// The built-in code names with a one-line description each, in listing order:
/// conv-k7-r1/2, conv-k7-r2/3, conv-k7-r3/4, conv-k7-r5/6, ldpc-648-r1/2 ... ldpc-1944-r5/6,
/// and the pattern ldpc-alist:PATH.
const std::vector<CodeNameInfo>& code_names();

/// Makes a code by name (see code_names()); "ldpc-alist:PATH" reads a parity-check matrix
/// from PATH. Throws ConfigError for unknown names (listing the allowed ones) and InputError
/// for unreadable alist files.
std::shared_ptr<const Code> make_code(std::string_view name, const CodeOptions& options = {});

}  // namespace qamsight
