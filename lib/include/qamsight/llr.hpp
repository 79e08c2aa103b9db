// llr: soft bit decisions (log-likelihood ratios) for any constellation in complex AWGN.
#pragma once

#include <cstdint>
#include <span>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/modem.hpp"

namespace qamsight {

/// How bit log-likelihood ratios are computed.
enum class LlrMethod {
  /// Exact log-MAP: ln sum over the points with the bit at 0 minus ln sum over the points with
  /// the bit at 1 of exp(-|y - x|^2 / N0), each evaluated as a stable log-sum-exp.
  exact,
  /// Max-log: (min over bit-1 points of |y - x|^2 - min over bit-0 points of |y - x|^2) / N0.
  max_log,
};

/// Magnitude at which LLR outputs are clamped. At |LLR| = 1e4 the posterior probability of
/// the less likely bit value is e^-10000, far below any double, so the clamp loses nothing a
/// decoder or an information estimate could use; it only keeps outputs finite and away from
/// float overflow when N0 is tiny.
inline constexpr float llr_limit = 1.0e4f;

/// Bit LLRs of received samples for one constellation in complex AWGN of total variance N0
/// per sample (N0/2 per real dimension, as AwgnChannel produces).
///
/// Sign convention: LLR = ln P(b = 0 | y) / P(b = 1 | y) for equiprobable points, so a
/// positive LLR favours bit 0. Layout: bits_per_symbol() LLRs per sample, in the label's bit
/// order (most significant bit first, the order of Constellation::labels_to_bits), so
/// llr_out[s * k + i] belongs to bit i of sample s.
///
/// Closed forms that follow from the definition and the labelling of modem.hpp:
///   BPSK (label 0 at -1, label 1 at +1): LLR = -4 Re(y) / N0 (exact and max-log).
///   QPSK (points (+-d +- jd), d = 1/sqrt 2, bit 0 on the in-phase axis, bit value 0 at the
///   negative level): LLR_0 = -4 d Re(y) / N0, LLR_1 = -4 d Im(y) / N0 (exact and max-log).
///
/// Fast paths are chosen once, at construction:
///   square QAM (Gray per axis): the in-phase level carries the high k/2 label bits and the
///     quadrature level the low k/2 bits. The likelihood factors into the two axes and the
///     sums over the other axis cancel between numerator and denominator, so each axis is a
///     Gray PAM of sqrt(M) levels whose LLRs depend on that axis's sample only. Exact: at most
///     one exponential per level and axis, shared by the axis's bits (levels whose term would
///     underflow are skipped); max-log: O(1) per bit (nearest level plus the nearest level
///     outside its run of equal bit values).
///   Exact sums are taken relative to the largest term; a bit value whose points are all so far
///   away that their sum underflows is summed again about its own nearest point, so exact
///   LLRs stay accurate (not just finite) up to the clamp.
///   BPSK: the closed form above.
///   other constellations: exhaustive over all M points.
///
/// Immutable after construction; process() may run on many threads at once. process()
/// allocates nothing and never throws (a short output buffer or a bad n0 fails
/// QAMSIGHT_ASSERT).
class LlrDemapper {
 public:
  LlrDemapper(const Constellation& constellation, LlrMethod method);

  LlrMethod method() const noexcept { return method_; }
  unsigned bits_per_symbol() const noexcept { return bits_; }
  /// True if the per-axis square-QAM path is in use.
  bool uses_axis_path() const noexcept { return path_ == Path::square_qam; }

  /// LLRs of y.size() samples into llr_out (at least y.size() * bits_per_symbol() values).
  /// n0 is the total complex noise variance per sample and must be positive and finite.
  /// Outputs are clamped to [-llr_limit, llr_limit].
  void process(std::span<const cf32> y, double n0, std::span<float> llr_out) const noexcept;

 private:
  enum class Path { bpsk, square_qam, general };
  void process_axis(float v, double inv_n0, float* out) const noexcept;
  void process_general(cf32 y, double inv_n0, float* out) const noexcept;

  LlrMethod method_;
  Path path_ = Path::general;
  unsigned bits_ = 0;
  // Square QAM, one axis: levels (amplitudes, ascending), Gray bits of each level, the
  // number of label bits per axis and the spacing of the levels.
  unsigned axis_bits_ = 0;
  std::vector<double> levels_;
  std::vector<std::uint32_t> level_bits_;
  double half_spacing_ = 0.0;
  // General path: points in double, indexed by label.
  std::vector<cf64> points_;
};

/// Reference LLRs of one sample by exhaustive search over all points in double precision,
/// for tests of the fast paths: for each bit, a log-sum-exp (or minimum) over the points with
/// the bit at 0 and over those with the bit at 1, each with its own maximum. out must hold
/// bits_per_symbol() values. Not clamped.
void llr_exhaustive(const Constellation& constellation, cf32 y, double n0, LlrMethod method,
                    std::span<double> out);

}  // namespace qamsight
