// information: coded-modulation and BICM capacities in AWGN, their SNR thresholds, and GMI
// estimates from receiver LLRs.
#pragma once

#include <cstdint>
#include <span>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/llr.hpp"
#include "qamsight/modem.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// Capacities by Gauss-Hermite quadrature.
//
// Channel: y = x + n, x uniform over the constellation, n circular complex Gaussian of total
// variance N0 = Es / (Es/N0), Es the constellation's average energy (1 unless built with
// normalise = false). With rates in bit/symbol,
//   CM   = I(X; Y) = log2 M - (1/M) sum_j E_n[ log2 sum_l exp(-(|x_j - x_l + n|^2 - |n|^2) / N0) ]
//   BICM = sum_i I(B_i; Y) = sum_i (1 - (1/M) sum_j E_n[ log2 (sum_l p(y|x_l) /
//                                          sum_{l: b_i(l) = b_i(j)} p(y|x_l)) ]),  y = x_j + n,
// the second because P(b | y) is the share of the likelihood held by the points with bit b.
// Every log2 term is >= 0, so the results lie in [0, log2 M] and reach log2 M exactly when the
// other points' terms underflow.
//
// With n = sqrt(N0) t, E_n[f] = pi^-1/2 int e^(-t^2) f(sqrt(N0) t) dt per real dimension, which
// is what a Gauss-Hermite rule integrates (nodes and weights by the Golub-Welsch eigenvalue
// method, Eigen's SelfAdjointEigenSolver on the Jacobi matrix).
//
// Evaluation paths:
//   square QAM (Gray per axis): X = (X_I, X_Q) with independent uniform components, and
//     Y_I = X_I + N_I, Y_Q = X_Q + N_Q with independent noise of variance N0/2 each. Hence
//     I(X; Y) = I(X_I; Y_I) + I(X_Q; Y_Q) = 2 I_PAM. Each label bit depends on one axis
//     only, say b_i on X_I; then (X_Q, Y_Q) is independent of (b_i, Y_I), so
//     I(b_i; Y) = I(b_i; Y_I) and BICM = 2 x the BICM rate of the Gray sqrt(M)-PAM. Both
//     reduce to one-dimensional quadrature (gauss_hermite_nodes_1d nodes).
//   constellations on the real axis (BPSK, custom PAM): the imaginary part of y is noise
//     only and independent of x, so the same one-dimensional rule applies.
//   others: the two-dimensional product rule (gauss_hermite_nodes_2d nodes per axis).
// Both paths skip nodes whose weight is below 1e-22 of the total and, for each transmitted
// point, the points whose term is below e^-50 of its own at every kept node, which changes
// the result by less than 1e-15 bit.
//
// Accuracy, against direct numerical integration of the definitions with SciPy
// (tests/reference/make_capacity_table.py): one-dimensional paths within 2e-11 bit (BPSK,
// 4-PAM, QPSK, 16-QAM, and 64-/1024-QAM through 8-/32-PAM), the two-dimensional rule within
// 1e-7 bit (8-PSK, rotated 4-PAM, custom copies of QPSK and 16-QAM). Square QAM costs a few
// milliseconds per SNR up to 1024-QAM; the other paths cost O(M^2 * nodes) (8-PSK about 15 ms,
// a 64-point constellation about 0.3 s) and accept up to 4096 points. Small Golub-Welsch
// weights are accurate in absolute terms only (about 1e-16 of the total), enough here because
// the integrands are bounded.
// ---------------------------------------------------------------------------------------------

/// Gauss-Hermite rule for int e^(-t^2) f(t) dt ~ sum_i weights[i] f(nodes[i]) (nodes
/// ascending). Exact for polynomials f of degree < 2 * nodes.
struct GaussHermiteRule {
  std::vector<double> nodes;
  std::vector<double> weights;
};

/// The n-node rule by Golub-Welsch (eigenvalues of the symmetric tridiagonal Jacobi matrix
/// with off-diagonal sqrt(k/2); weights sqrt(pi) times the squared first eigenvector
/// components). Throws ConfigError unless 1 <= n <= 1000.
GaussHermiteRule gauss_hermite_rule(unsigned n);

/// Node counts of the capacity quadrature (per axis for the two-dimensional product rule).
/// Chosen by convergence: doubling the one-dimensional count changes no rate by more than 4e-11
/// bit up to 1024-QAM over -10..60 dB; doubling the two-dimensional one changes them by at most
/// 1e-7 bit for 8-PSK, 16- and 64-point constellations over -10..40 dB.
inline constexpr unsigned gauss_hermite_nodes_1d = 400;
inline constexpr unsigned gauss_hermite_nodes_2d = 128;

/// Both rates of one constellation at one Es/N0, from one pass of the quadrature.
struct InformationRates {
  double cm = 0.0;    ///< coded-modulation (uniform-input mutual information), bit/symbol
  double bicm = 0.0;  ///< BICM (sum over label bits of I(b_i; y)), bit/symbol
};

/// CM and BICM rates in AWGN at es_n0_db (dB, -100 to 400; Es is the constellation's average
/// energy, 1 unless it was built with normalise = false). Throws ConfigError for an SNR
/// outside that range or a constellation other than square QAM with more than 4096 points.
InformationRates information_rates(const Constellation& c, double es_n0_db);
/// Coded-modulation capacity in bit/symbol (information_rates(c, es_n0_db).cm).
double cm_capacity(const Constellation& c, double es_n0_db);
/// BICM capacity in bit/symbol (information_rates(c, es_n0_db).bicm). Depends on the labels.
double bicm_capacity(const Constellation& c, double es_n0_db);

/// Es/N0 in dB at which bicm_capacity equals rate_bits_per_symbol (Boost TOMS 748 root
/// finding, bracketed from the Shannon bound 10 log10(2^R - 1) upward; the SNR is resolved
/// to 1e-10 dB, which puts the capacity at the result within about 1e-10 bit of the rate).
/// Throws ConfigError unless 0 < rate < bits_per_symbol(). Capacities are log2 M minus a
/// loss, with an absolute rounding of about 1e-15 bit, so thresholds of rates below about
/// 1e-12 bit/symbol are imprecise. Returns +infinity in the degenerate case that no Es/N0 up
/// to 400 dB reaches the rate (a rate within rounding of bits_per_symbol).
double bicm_threshold_es_n0_db(const Constellation& c, double rate_bits_per_symbol);
/// As bicm_threshold_es_n0_db, for the coded-modulation capacity.
double cm_threshold_es_n0_db(const Constellation& c, double rate_bits_per_symbol);

// ---------------------------------------------------------------------------------------------
// Generalised mutual information from LLRs.
//
// For transmitted bits b and receiver LLRs L (positive favours 0, as in llr.hpp), the
// per-symbol quantity
//   g = sum_i [ 1 - log2(1 + exp(-(1 - 2 b_i) L_i)) ]
// has, per bit, the mean 1 - (cross-entropy of the posterior the LLR implies). With exact
// LLRs of the true channel that posterior is P(b | y), the mean is 1 - H(b | y) = I(b; y) and
// g averages to the BICM capacity; any other LLRs (max-log, mismatched N0, a real receiver)
// give a mean no larger (cross-entropy >= entropy), a rate still achievable. The g of
// different symbols are i.i.d. when the symbols are, so the estimate is their sample mean
// and the interval the normal (central-limit) interval mean +- z s / sqrt(n) with the sample
// standard deviation s and z the two-sided normal quantile of the confidence.
// ---------------------------------------------------------------------------------------------

/// A GMI estimate in bit/symbol with its two-sided confidence interval.
struct GmiEstimate {
  double value = 0.0;           ///< sample mean of g; NaN with no symbols
  double low = 0.0;             ///< value - z * standard_error; NaN with fewer than 2 symbols
  double high = 0.0;            ///< value + z * standard_error
  double standard_error = 0.0;  ///< s / sqrt(n)
  std::uint64_t symbols = 0;
  double confidence = 0.0;
};

/// Running GMI statistics over symbols (Welford mean and sum of squared deviations, merged
/// by Chan's pairwise formula, so partial accumulators of a parallel sweep add up; merge in
/// a fixed order for bit-identical results).
class GmiAccumulator {
 public:
  /// Throws ConfigError unless 1 <= bits_per_symbol <= 32.
  explicit GmiAccumulator(unsigned bits_per_symbol);

  /// Adds symbols: llr and bits (one per byte, 0 or 1) have the same length, a multiple of
  /// bits_per_symbol(), in the same bit order. Allocates nothing.
  void add(std::span<const float> llr, std::span<const std::uint8_t> bits) noexcept;
  /// Merges another accumulator of the same bits_per_symbol.
  GmiAccumulator& operator+=(const GmiAccumulator& other) noexcept;

  unsigned bits_per_symbol() const noexcept { return bits_; }
  std::uint64_t symbols() const noexcept { return count_; }
  /// Estimate and interval; throws ConfigError unless 0 < confidence < 1.
  GmiEstimate estimate(double confidence) const;

 private:
  unsigned bits_;
  std::uint64_t count_ = 0;
  double mean_ = 0.0;
  double m2_ = 0.0;
};

/// Random-number stream numbers used by gmi_monte_carlo: symbols [s 2^24, (s + 1) 2^24) draw
/// their labels from RandomStream(seed, gmi_stream_base + s, Substream::payload) and their
/// noise from RandomStream(seed, gmi_stream_base + s, Substream::awgn).
inline constexpr std::uint64_t gmi_stream_base = 0x474D490000000000ull;  // "GMI" in the top bytes

/// Monte Carlo GMI of a constellation in AWGN with the library's LLR demapper: uniformly
/// random labels, AwgnChannel noise at es_n0_db, LlrDemapper(c, method) with the true N0.
/// With LlrMethod::exact the estimate is unbiased for bicm_capacity. Throws ConfigError for
/// symbols < 2, a confidence outside (0, 1) or an Es/N0 AwgnChannel rejects.
GmiEstimate gmi_monte_carlo(const Constellation& c, double es_n0_db, std::uint64_t symbols,
                            std::uint64_t seed, LlrMethod method, double confidence);

namespace detail {
/// information_rates with explicit node counts, for convergence studies.
InformationRates information_rates_with_nodes(const Constellation& c, double es_n0_db,
                                              unsigned nodes_1d, unsigned nodes_2d);
}  // namespace detail

}  // namespace qamsight
