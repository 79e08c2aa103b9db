// capture_rx: receiver for recordings: preamble search, timing, carrier, equaliser, PRBS BER; blind mode.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/prbs.hpp"
#include "qamsight/waveform.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// Matched filter evaluated at any instant.
// ---------------------------------------------------------------------------------------------

/// The root-raised-cosine matched filter of a signal sampled at any rate, evaluated at any
/// instant t (in input samples, 0 = the first sample):
///   y(t) = sum_n x[n] h(t - n),   h(d) = g(d / r) / sqrt(r),  |d| <= span r / 2,
/// with g the unit-energy RRC (pulse.hpp, root_raised_cosine_pulse) and r = samples per symbol,
/// which need not be an integer. The 1/sqrt(r) makes sum h^2 = 1 (for r >= 1 + roll-off), the
/// pulse module's convention: white noise of variance N0 per sample leaves with variance N0,
/// and an RRC-shaped unit-energy symbol peaks at 1.
///
/// How: a polyphase bank of `phases` branches (h sampled every 1/phases of a sample, P + 1
/// branches including the fractional delay 1), and between two neighbouring branches a
/// first-order Farrow interpolation (the tap vector is (1 - f) h_j + f h_(j+1)), the structure
/// of f. harris and M. Rice, "Multirate digital filters for symbol timing synchronization in
/// software defined radios", IEEE J. Sel. Areas Commun. 19(12), 2001. So the matched filter
/// and the fractional-delay interpolation are one band-limited filter: no extra interpolation
/// error on top of the pulse (a cubic Lagrange interpolator after the matched filter would add
/// a floor of about -20 dB at 2 samples per symbol and -40 dB at 4). The linear blend between
/// branches deviates from h by at most |h''| / (8 P^2) (P = 128: about -90 dB of the peak),
/// except at the two ends of the span, where the truncated pulse steps from |g(span/2)| to zero
/// and the blend spreads that step over 1/P of a sample (span 12, roll-off 0.25: |g(6)| = 1e-3).
/// Immutable after construction; at() is thread-safe, allocates nothing.
class InterpolatingMatchedFilter {
 public:
  /// samples_per_symbol: 1 to 256 (real); roll_off in (0, 1]; span_symbols even, 4 to 256;
  /// phases 16 to 4096. Throws ConfigError.
  InterpolatingMatchedFilter(double samples_per_symbol, double roll_off, int span_symbols, int phases = 128);

  double samples_per_symbol() const noexcept { return r_; }
  /// Half the support in samples (span r / 2): y(t) uses x[n] for |t - n| <= half_length().
  double half_length() const noexcept { return half_; }
  /// y(t); input samples outside x count as zero.
  cf32 at(std::span<const cf32> x, double t) const noexcept;
  /// out[k] = y(t0 + k step).
  void sample(std::span<const cf32> x, double t0, double step, std::span<cf32> out) const noexcept;

 private:
  double r_, half_;
  int phases_;
  std::size_t taps_;   // per branch
  std::ptrdiff_t m_;   // branch tap k multiplies x[i - m_ + k], i = floor(t)
  std::vector<float> bank_;  // (phases + 1) branches of taps_
};

// ---------------------------------------------------------------------------------------------
// The receiver.
// ---------------------------------------------------------------------------------------------

/// What the receiver knows about the transmitter, and its own settings.
struct CaptureRxConfig {
  std::string modulation = "qpsk";
  double symbol_rate_hz = 1.0e6;  ///< > 0; sample_rate / symbol_rate >= 1 + roll_off
  double roll_off = 0.25;         ///< of the transmitter's RRC; (0, 1]
  int span_symbols = 12;          ///< of the receiver's matched filter; even, 4 to 256
  /// Frame format (data-aided mode): payload length and PRBS. The preamble is the library's
  /// (waveform.hpp).
  FrameFormat frame;
  /// false: the payload is not a PRBS; references are decisions and no BER is counted.
  bool prbs_payload = true;
  /// Per tested timing position, the probability that white Gaussian noise alone crosses the
  /// detection threshold; 1e-15 to 1e-2. See analyse_capture.
  double false_alarm_probability = 1e-10;
  /// Linear equaliser taps, 0 = none; else odd, 3 to 63, spaced T/2.
  std::size_t equaliser_taps = 0;
  /// Tikhonov term of the equaliser's least-squares fit, relative to the mean diagonal of the
  /// normal matrix (regularisation x mean |input|^2 x training symbols); 0 to 1.
  double equaliser_regularisation = 1e-3;
  /// Decision-directed phase tracker after the preamble (sync.hpp PhaseTracker): B_L T; (0, 0.1].
  double tracker_bandwidth = 0.005;
  /// Blind mode: Gardner timing loop bandwidth B_L T; (0, 0.05].
  double timing_bandwidth = 0.005;
  /// Blind mode: symbols dropped at the start while the loops settle; 0 to 2^20.
  std::size_t blind_settle_symbols = 64;
};

/// Throws ConfigError naming the field (and, with a sample rate, checks the rate ratio).
void validate(const CaptureRxConfig& config, double sample_rate_hz);

enum class CaptureStatus {
  measured,     ///< symbols were recovered
  no_preamble,  ///< data-aided: no position crossed the detection threshold
  too_short,    ///< the recording is shorter than one preamble (or than the loops need)
};
std::string_view capture_status_name(CaptureStatus s) noexcept;

/// One detected frame (data-aided mode).
struct CaptureFrame {
  double symbol0_sample = 0.0;  ///< instant of the frame's first preamble symbol, in samples
  double metric = 0.0;          ///< detection metric at the peak (0 to 1)
  std::size_t symbols = 0;      ///< symbols measured (preamble included)
  double cfo_coarse_hz = 0.0;   ///< from preamble segment phase differences
  double cfo_hz = 0.0;          ///< coarse + preamble residual + payload (tracker) refinement
  double gain = 0.0;            ///< |LS gain| of the preamble (matched-filter units)
  double phase_rad = 0.0;       ///< its phase
  double preamble_snr_db = 0.0; ///< Es/N0 from the preamble fit residual
};

struct CaptureMeasurement {
  CaptureStatus status = CaptureStatus::too_short;
  bool blind = false;
  std::string message;  ///< one line: what was found, or why nothing was
  double sample_rate_hz = 0.0, symbol_rate_hz = 0.0, samples_per_symbol = 0.0;

  // Data-aided search.
  double detection_threshold = 0.0;  ///< metric threshold (0 to 1)
  double best_metric = 0.0;          ///< largest metric seen anywhere
  std::vector<CaptureFrame> frames;

  // Estimates (NaN where not made).
  double cfo_hz = std::nan("");          ///< final carrier offset (mean over frames)
  double cfo_coarse_hz = std::nan("");   ///< first stage (preamble segments, or 4th-power line)
  double timing_sample = std::nan("");   ///< instant of the first measured symbol, in samples
  double symbol_clock_ppm = std::nan(""); ///< blind: (nominal / recovered symbol period - 1) 1e6
  /// Es/N0 from the preamble fit (data-aided) or, blind, from the M2M4 moments for
  /// constant-modulus constellations (NaN for QAM, where the estimate is unreliable).
  double snr_estimate_db = std::nan("");

  /// Payload symbols after all corrections (unit-energy constellation scale), in order of time,
  /// frames one after another, and their references: the PRBS checker's copy of the
  /// transmitted payload where it was locked (reference_known = 1), else the decisions (0).
  std::vector<cf32> received;
  std::vector<cf32> reference;
  std::vector<std::uint8_t> reference_known;
  /// Frame of each received symbol (index into frames; 0 in blind mode).
  std::vector<std::uint32_t> frame_index;

  bool prbs_checked = false;
  bool prbs_locked = false;  ///< locked at the end of the payload
  PrbsCounts prbs;
  std::vector<std::string> notes;
};

/// The receiver. Built once for a configuration and sample rate (filter bank, preamble, loop
/// gains, detection threshold); analyse() and analyse_blind() may be called for many recordings.
/// They are measurements of whole recordings, not streaming hot paths: they allocate working
/// buffers and their result. Outcomes (no preamble found, too short) are returned, never thrown.
///
/// Data-aided analyse(), for recordings in the library's frame format (waveform.hpp):
///  1. Matched filter (InterpolatingMatchedFilter) on a grid of 2 samples per symbol.
///  2. Preamble search: at each grid position the metric
///       m = sum_s |C_s|^2 / (L sum_k |y_k|^2),   C_s = sum_{k in segment s} y_k conj(p_k),
///     over S = 16 segments of L = 16 symbols (non-coherent across segments, so a carrier offset
///     of up to about 0.03 of the symbol rate costs at most 3 dB; the segment phases carry the
///     offset). 0 <= m <= 1 (Cauchy-Schwarz) and m = 1 for a clean preamble. For white
///     Gaussian noise the symbol-spaced matched-filter outputs are independent, the S segment
///     correlations are orthogonal projections, and m follows a Beta(S, N - S) law exactly
///     (N = 256; the ratio of a chi-square with 2S degrees of freedom to the sum with an
///     independent one with 2(N - S)). The threshold is its upper quantile at the configured
///     false-alarm probability (Boost.Math ibetac_inv): 0.2018 at 1e-10. Neighbouring grid
///     positions are correlated, so the probability of any false alarm in a recording is at
///     most positions x that (1e-10 x 2 positions per symbol: about 2e-5 per 100k symbols).
///     Local maxima above the threshold, one per preamble length, are frames.
///  3. Timing: parabolic interpolation of the metric around the peak, then twice more at
///     spacings of T/8 and T/32 evaluated directly: the fractional instant of symbol 0.
///  4. Coarse carrier offset: arg sum_s C_s conj(C_{s-1}) / L per symbol (unambiguous for
///     |offset| < symbol rate / 32); the raw samples are de-rotated and matched-filtered again
///     at the symbol instants.
///  5. Preamble least squares: residual offset (slope of the segment phases), complex gain
///     (phase and amplitude) and the noise power of the fit (preamble SNR).
///  6. A frame cut short (end of recording, a gap before the next preamble) is trimmed where
///     the symbol power steps down to the noise (CUSUM change point at the midpoint level).
///  7. Optional linear equaliser, spaced T/2, trained by regularised least squares on the
///     preamble (Eigen), then once more on the whole frame with the decisions.
///  8. Decision-directed phase tracking (PhaseTracker, the preamble as its known start); the
///     slope of the tracked phase refines the offset ("fine" frequency from the payload).
///  9. Decisions -> Gray bits -> PRBS checker over all frames in order (BER without the
///     transmitted file); its locked copy of the sequence gives the data-aided references.
///
/// Blind analyse_blind(), for recordings of unknown frame format (modulation, symbol rate and
/// roll-off known; any sample-rate ratio r = fs / Rs >= 1 + roll-off):
///  1. Matched filter at the sample rate; carrier offset from the spectral line of y^P
///     (P = 4 for square QAM, M for M-PSK, 2 for BPSK: the smallest power with E[a^P] != 0):
///     averaged periodograms of y^P (segments of up to 65536 samples), parabolic peak
///     interpolation, offset = line / P. Unambiguous for |offset| < fs / (2P) (fs/8 for QAM);
///     resolution fs / (P x segment) before interpolation.
///  2. Gardner's timing-error detector (F. M. Gardner, "A BPSK/QPSK timing-error detector for
///     sampled receivers", IEEE Trans. Commun. 34(5), 1986), e = Re{y*(t - T/2) (y(t - T) -
///     y(t))}, in a second-order loop (phase_loop_gains; detector gain from the raised-cosine
///     S-curve) that moves the instants of the interpolating matched filter. A first pass over
///     the recording converges; the second pass starts from its final state, back-extrapolated.
///  3. Gain from the second and fourth moments (M2M4: D. R. Pauluzzi, N. C. Beaulieu, "A
///     comparison of SNR estimation techniques for the AWGN channel", IEEE Trans. Commun. 48(10),
///     2000); phase and residual offset from the P-th power of blocks of 256 symbols; then the
///     decision-directed PhaseTracker and a decision-directed least-squares gain.
///  4. References are decisions: the EVM is decision-directed, biased low when symbol errors
///     are not rare (see evm.hpp), and the constellation's rotational ambiguity remains.
class CaptureReceiver {
 public:
  CaptureReceiver(const CaptureRxConfig& config, double sample_rate_hz);
  ~CaptureReceiver();
  CaptureReceiver(CaptureReceiver&&) noexcept;
  CaptureReceiver& operator=(CaptureReceiver&&) noexcept;

  const CaptureRxConfig& config() const noexcept;
  const Constellation& constellation() const noexcept;
  double detection_threshold() const noexcept;
  /// The matched filter used.
  const InterpolatingMatchedFilter& matched_filter() const noexcept;

  CaptureMeasurement analyse(std::span<const cf32> samples) const;
  CaptureMeasurement analyse_blind(std::span<const cf32> samples) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// The threshold of the preamble metric for a false-alarm probability per position (the
/// Beta(S, N - S) upper quantile above).
double preamble_detection_threshold(double false_alarm_probability);
/// Segments and their length used by the preamble metric (S = 16, L = 16).
inline constexpr std::size_t kPreambleSegments = 16;
inline constexpr std::size_t kPreambleSegmentSymbols = kPreambleSymbols / kPreambleSegments;

}  // namespace qamsight
