// channel: AWGN and the SNR conventions that calibrate it, plus the RF impairment blocks.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/fft.hpp"

namespace qamsight {

/// Complex AWGN with total variance N0 per sample (N0/2 per real dimension).
///
/// Convention: the signal entering the block has mean symbol energy `symbol_energy` (1 for
/// the library's unit-energy constellations) when summed over the samples of one symbol, and
/// the receive filter, if any, has unit energy. Then N0 = symbol_energy / (Es/N0) per sample
/// gives the configured Es/N0 at the matched-filter output for any oversampling factor; the
/// per-sample SNR is Es/N0 - 10 log10(samples per symbol).
struct AwgnConfig {
  double es_n0_db = 10.0;     ///< Es/N0 at the matched-filter output, dB; -50 to 150
  double symbol_energy = 1.0; ///< mean energy per symbol of the input; > 0
};

class AwgnChannel {
 public:
  explicit AwgnChannel(const AwgnConfig& config);
  /// Total complex noise variance per sample, N0.
  double noise_variance() const noexcept { return n0_; }
  const AwgnConfig& config() const noexcept { return config_; }
  /// out = in + noise; in and out may be the same span. Draws from `rng` in whole blocks.
  void process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) const noexcept;

 private:
  AwgnConfig config_;
  double n0_;
};

// =============================================================================================
// RF impairments.
//
// Common contract of the blocks below: each is built once from a config struct whose
// constructor throws ConfigError naming the field, the value and the allowed range; process()
// takes spans, allocates nothing and never throws (wrong lengths hit QAMSIGHT_ASSERT); `in` and
// `out` may be the same span (not partially overlapping ones); out.size() >= in.size().
// Blocks that carry state (phase walks, delay lines, accumulators) expose reset(), which
// returns them to the state right after construction. A stateful block belongs to one thread.
// Blocks that draw random numbers take the RandomStream in process() (purpose
// Substream::phase_noise), and draw the same numbers however a run is cut into calls.
// =============================================================================================

// ---------------------------------------------------------------------------------------------
// Phase noise, (a): Wiener phase from a Lorentzian 3-dB linewidth.
// ---------------------------------------------------------------------------------------------

/// Wiener (random-walk) phase: phi[n] = phi[n-1] + d[n], d ~ N(0, 2 pi linewidth / fs), so
/// e^{j phi} has the Lorentzian spectrum of full 3-dB width `linewidth_hz` and autocorrelation
/// E[e^{j(phi[n+k] - phi[n])}] = exp(-pi linewidth |k| / fs).
struct WienerPhaseNoiseConfig {
  double linewidth_hz = 100.0;     ///< full 3-dB (FWHM) linewidth; 0 to 0.1 sample_rate_hz
  double sample_rate_hz = 1.0e6;   ///< sample rate the phase is sampled at; > 0, at most 1e12
  double initial_phase_rad = 0.0;  ///< phi[-1]; -2 pi to 2 pi
};

class WienerPhaseNoise {
 public:
  explicit WienerPhaseNoise(const WienerPhaseNoiseConfig& config);
  const WienerPhaseNoiseConfig& config() const noexcept { return config_; }
  /// Variance of one increment, 2 pi linewidth / fs (rad^2).
  double increment_variance() const noexcept { return sigma_ * sigma_; }
  /// Phase of the last produced sample (rad, wrapped to (-pi, pi]); the initial phase after reset().
  double phase_rad() const noexcept { return phase_; }
  /// out[n] = in[n] exp(j phi[n]); sample n carries the increment d[n] already.
  void process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) noexcept;
  /// The phase walk itself, wrapped to (-pi, pi] (for analysis; advances the state as process does).
  void generate(RandomStream& rng, std::span<double> phase_rad) noexcept;
  void reset() noexcept { phase_ = initial_; }

 private:
  WienerPhaseNoiseConfig config_;
  double sigma_;
  double initial_;
  double phase_;
};

// ---------------------------------------------------------------------------------------------
// Phase noise, (b): stationary phase noise from a single-sideband mask.
//
// Convention. The mask gives the single-sideband phase noise L(f) in dBc/Hz at offsets f > 0.
// For small phase noise L(f) equals the two-sided phase spectral density of phi, so the
// one-sided density is S_phi(f) = 2 L(f) (rad^2/Hz, f > 0) and the phase variance is
// sigma^2 = 2 * integral L(f) df. Between points L is interpolated linearly in dB against
// log f (a power law per segment).
// ---------------------------------------------------------------------------------------------

struct PhaseNoisePoint {
  double offset_hz = 0.0;  ///< offset from the carrier, Hz; > 0
  double dbc_hz = 0.0;     ///< L(offset), dBc/Hz; finite
};

/// What a mask means outside its span [first offset, last offset].
enum class MaskExtension {
  flat,  ///< hold the level of the nearest end point (a plateau close in, a floor far out)
  zero,  ///< no phase noise there
};

/// A single-sideband phase-noise mask: at least two points, offsets > 0 and strictly increasing,
/// finite levels. Immutable.
class PhaseNoiseMask {
 public:
  /// Throws ConfigError (parameter "phase noise mask ...") for an invalid point list.
  explicit PhaseNoiseMask(std::vector<PhaseNoisePoint> points);
  /// Reads `offset_hz,dbc_hz` lines; '#' starts a comment; blank lines are skipped; a first
  /// line reading exactly "offset_hz,dbc_hz" is a header. Throws InputError naming the file
  /// and the line for an unreadable file, a malformed line or an invalid mask.
  static PhaseNoiseMask from_csv(const std::string& path);

  std::span<const PhaseNoisePoint> points() const noexcept { return points_; }
  double first_offset_hz() const noexcept { return points_.front().offset_hz; }
  double last_offset_hz() const noexcept { return points_.back().offset_hz; }

  /// L(f), linear (1/Hz), log-log interpolated inside the span, extended outside as told.
  double density(double offset_hz, MaskExtension below = MaskExtension::flat,
                 MaskExtension above = MaskExtension::flat) const noexcept;
  /// L(f) in dBc/Hz inside the span (flat extension outside).
  double level_dbc_hz(double offset_hz) const noexcept;
  /// integral of L(f) df over [f_lo, f_hi] intersected with the mask span, exact for the
  /// power-law segments: int_{fa}^{fb} La (f/fa)^s df = La fa ((fb/fa)^{s+1} - 1) / (s + 1)
  /// (La fa ln(fb/fa) for s = -1).
  double integral(double f_lo_hz, double f_hi_hz) const noexcept;
  /// Integrated phase variance over the mask span, sigma^2 = 2 integral L(f) df (rad^2).
  double phase_variance() const noexcept;
  /// sqrt(phase_variance()), rad and degrees.
  double rms_phase_rad() const noexcept;
  double rms_phase_deg() const noexcept;

 private:
  std::vector<PhaseNoisePoint> points_;
};

/// Synthesis of stationary Gaussian phase noise whose spectrum follows a mask.
///
/// Method: white Gaussian noise w (unit variance) is filtered by a fixed real FIR filter h of
/// `filter_length` N taps designed by frequency sampling: H[k] = sqrt(fs L(f_k)) on the bins
/// f_k = k fs / N (two-sided, L evaluated at |f_k| <= fs/2 with the configured extensions),
/// made causal by a circular shift of N/2. The filtering is a continuous linear
/// convolution run by FFT overlap-save (size 2N, double precision), so the output is one
/// stationary process with two-sided density |H(f)|^2 / fs = L(|f|) on the bins: there are no
/// block edges in the statistics, only in the bookkeeping. Two consecutive output blocks share
/// one complex FFT pair (real part and imaginary part carry the two blocks). On the first
/// draw after construction or reset() the filter memory is filled with fresh noise, so the
/// output is stationary from its first sample.
///
/// Resolution: the bin spacing fs/N must resolve the first mask offset; the automatic length is
/// the smallest power of two >= 8 fs / first_offset (at least 256). Mask points beyond fs/2
/// cannot be represented and are ignored by the synthesis (the reported mask RMS still covers
/// the whole mask span; synthesised_variance() tells what is produced).
struct MaskPhaseNoiseConfig {
  double sample_rate_hz = 1.0e6;                    ///< > 0, at most 1e12; first offset below fs/2
  MaskExtension below_first = MaskExtension::flat;  ///< between 0 Hz and the first offset
  MaskExtension above_last = MaskExtension::flat;   ///< between the last offset and fs/2
  std::size_t filter_length = 0;                    ///< 0 = automatic; else a power of two, 64 to 2^20
};

class MaskPhaseNoise {
 public:
  MaskPhaseNoise(const PhaseNoiseMask& mask, const MaskPhaseNoiseConfig& config);
  const PhaseNoiseMask& mask() const noexcept { return mask_; }
  const MaskPhaseNoiseConfig& config() const noexcept { return config_; }
  std::size_t filter_length() const noexcept { return n_; }
  /// Variance of the synthesised phase (rad^2): sum over bins of L(|f_k|) fs/N, i.e. the
  /// integral of the designed spectrum including the extensions, up to fs/2.
  double synthesised_variance() const noexcept { return synth_var_; }
  /// out[n] = in[n] exp(j phi[n]).
  void process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) noexcept;
  /// The phase itself (rad; zero-mean Gaussian), advancing the state as process() does.
  void generate(RandomStream& rng, std::span<double> phase_rad) noexcept;
  void reset() noexcept;

 private:
  void refill(RandomStream& rng) noexcept;

  PhaseNoiseMask mask_;
  MaskPhaseNoiseConfig config_;
  std::size_t n_ = 0;
  double synth_var_ = 0.0;
  FftPlanD forward_, inverse_;
  std::vector<cf64> response_;   // FFT (size 2N) of the causal taps, scaled by 1/(2N)
  std::vector<cf64> work_;       // 2N
  std::vector<double> history_;  // last N white samples of the input stream
  std::vector<double> block_;    // 2N phase samples ready to hand out
  std::size_t used_ = 0;         // samples of block_ already handed out
  bool primed_ = false;
};

// ---------------------------------------------------------------------------------------------
// Carrier frequency offset and static phase rotation.
// ---------------------------------------------------------------------------------------------

/// out[n] = in[n] exp(j (theta0 + 2 pi f n / fs)), n counted from construction or reset() over
/// all calls (phase continuous across frames). The phase is kept in cycles in double and wrapped,
/// so it does not drift over long runs (per-sample phasors come from a short double recursion
/// re-anchored on that accumulator every 256 samples).
struct FrequencyOffsetConfig {
  double offset_hz = 0.0;          ///< carrier offset; |offset| <= sample_rate_hz / 2
  double sample_rate_hz = 1.0;     ///< > 0, at most 1e12 (1 = offset in cycles per sample)
  double initial_phase_deg = 0.0;  ///< theta0; -360 to 360
};

class FrequencyOffset {
 public:
  explicit FrequencyOffset(const FrequencyOffsetConfig& config);
  const FrequencyOffsetConfig& config() const noexcept { return config_; }
  /// Phase the next sample gets, in cycles [0, 1).
  double phase_cycles() const noexcept { return cycles_; }
  void process(std::span<const cf32> in, std::span<cf32> out) noexcept;
  void reset() noexcept { cycles_ = initial_; }

 private:
  FrequencyOffsetConfig config_;
  double step_;     // cycles per sample
  double initial_;  // cycles
  double cycles_;
};

/// out = in exp(j rotation). Stateless.
struct PhaseRotationConfig {
  double rotation_deg = 0.0;  ///< -360 to 360
};

class PhaseRotation {
 public:
  explicit PhaseRotation(const PhaseRotationConfig& config);
  const PhaseRotationConfig& config() const noexcept { return config_; }
  cf32 phasor() const noexcept { return phasor_; }
  void process(std::span<const cf32> in, std::span<cf32> out) const noexcept;

 private:
  PhaseRotationConfig config_;
  cf32 phasor_;
};

// ---------------------------------------------------------------------------------------------
// IQ imbalance and DC offset.
// ---------------------------------------------------------------------------------------------

/// Quadrature-branch imbalance: the I branch is the reference, the Q branch has amplitude gain
/// g = 10^(gain_db / 20) and a quadrature phase error phi:
///   y = Re{x} + j g (sin(phi) Re{x} + cos(phi) Im{x}),
/// equivalently y = mu x + nu x* with mu = (1 + g e^{j phi}) / 2, nu = (1 - g e^{-j phi}) / 2.
/// A complex tone at +f leaves an image at -f, and the image-rejection ratio is
///   IRR = |mu|^2 / |nu|^2 = (1 + 2 g cos(phi) + g^2) / (1 - 2 g cos(phi) + g^2).
/// No power normalisation: a circular input of power P leaves with power P (1 + g^2) / 2.
struct IqImbalanceConfig {
  double gain_db = 0.0;    ///< Q/I amplitude ratio, dB; -10 to 10
  double phase_deg = 0.0;  ///< quadrature error; -45 to 45
};

class IqImbalance {
 public:
  explicit IqImbalance(const IqImbalanceConfig& config);
  const IqImbalanceConfig& config() const noexcept { return config_; }
  cf64 mu() const noexcept { return mu_; }
  cf64 nu() const noexcept { return nu_; }
  /// 10 log10(IRR) from the closed form above; +inf without imbalance.
  double image_rejection_ratio_db() const noexcept;
  void process(std::span<const cf32> in, std::span<cf32> out) const noexcept;

 private:
  IqImbalanceConfig config_;
  cf64 mu_, nu_;
  float g_sin_, g_cos_;
};

/// out = in + offset * signal_rms: a complex DC term given relative to the RMS amplitude of
/// the signal (|offset| = 0.01 is a carrier leak 40 dB below the signal power).
struct DcOffsetConfig {
  cf64 offset{0.0, 0.0};    ///< relative to signal_rms; |offset| <= 10, finite
  double signal_rms = 1.0;  ///< RMS amplitude of the signal the offset refers to; > 0
};

class DcOffset {
 public:
  explicit DcOffset(const DcOffsetConfig& config);
  const DcOffsetConfig& config() const noexcept { return config_; }
  cf32 value() const noexcept { return value_; }
  void process(std::span<const cf32> in, std::span<cf32> out) const noexcept;

 private:
  DcOffsetConfig config_;
  cf32 value_;
};

// ---------------------------------------------------------------------------------------------
// Memoryless amplifier models.
//
// Drive: the block scales its input by s = sqrt(P_in_sat / (P_in_mean 10^(IBO / 10))), so that
// an input of mean power `mean_input_power` reaches the model at the input back-off
//   IBO = 10 log10(P_in_sat / P_in_mean),
// where P_in_sat is the model input power at output saturation (Saleh: r_sat^2 = 1 / beta_a;
// Rapp: (A_sat / G)^2). The output back-off OBO = 10 log10(P_out_sat / P_out_mean), with
// P_out_sat the peak output power of the model, is measured over the processed samples.
// Output scale: with normalise_gain the output is divided by s times the small-signal gain,
// so a small input passes unchanged and only the compression and AM/PM remain (the natural
// choice in front of an Es/N0-calibrated AWGN block); without it the output is in model units.
// ---------------------------------------------------------------------------------------------

/// Power sums of an amplifier block, in model units (input after the drive scale).
struct AmplifierMeter {
  double input_power = 0.0;   ///< sum |s x|^2
  double output_power = 0.0;  ///< sum |A(s |x|)|^2
  std::uint64_t count = 0;
};

/// Saleh's amplitude-phase TWT model (A. A. M. Saleh, IEEE Trans. Commun. COM-29(11),
/// pp. 1715-1720, 1981): A(r) = alpha_a r / (1 + beta_a r^2), Phi(r) = alpha_phi r^2 /
/// (1 + beta_phi r^2) rad. The default parameters are the widely reproduced fit of that paper
/// (from memory): output saturation A(r_sat) = alpha_a / (2 sqrt(beta_a)) at r_sat = 1/sqrt(beta_a).
struct SalehConfig {
  double alpha_a = 2.1587;        ///< > 0
  double beta_a = 1.1517;         ///< > 0
  double alpha_phi = 4.0033;      ///< rad; -100 to 100
  double beta_phi = 9.1040;       ///< >= 0
  double input_backoff_db = 6.0;  ///< -20 to 40
  double mean_input_power = 1.0;  ///< expected mean |x|^2 of the input; > 0
  bool normalise_gain = true;
};

class SalehAmplifier {
 public:
  explicit SalehAmplifier(const SalehConfig& config);
  const SalehConfig& config() const noexcept { return config_; }
  /// AM/AM and AM/PM of the model at model input amplitude r.
  double am_am(double r) const noexcept;
  double am_pm_rad(double r) const noexcept;
  double input_saturation_power() const noexcept;   ///< 1 / beta_a
  double output_saturation_power() const noexcept;  ///< alpha_a^2 / (4 beta_a)
  double drive_scale() const noexcept { return scale_; }
  void process(std::span<const cf32> in, std::span<cf32> out) noexcept;
  /// OBO and IBO measured over the samples processed since construction or reset(); NaN if none.
  double measured_output_backoff_db() const noexcept;
  double measured_input_backoff_db() const noexcept;
  const AmplifierMeter& meter() const noexcept { return meter_; }
  /// OBO predicted for equiprobable input values (for example the constellation points, at
  /// symbol rate), given in input units (before the drive scale).
  double predicted_output_backoff_db(std::span<const cf64> input_values) const;
  /// OBO predicted for a circular complex Gaussian input of power mean_input_power (OFDM-like),
  /// by numerical integration over the Rayleigh envelope.
  double predicted_output_backoff_db_gaussian() const;
  void reset() noexcept { meter_ = {}; }

 private:
  SalehConfig config_;
  double scale_;
  float out_scale_;
  AmplifierMeter meter_;
};

/// Rapp's solid-state amplifier model (C. Rapp, Proc. 2nd European Conf. on Satellite
/// Communications, ESA SP-332, 1991): A(r) = G r / (1 + (G r / A_sat)^{2p})^{1/(2p)}, no AM/PM.
/// At r = A_sat / G the gain is compressed by exactly (10 / p) log10 2 dB.
struct RappConfig {
  double smoothness = 2.0;            ///< p; 0.1 to 100
  double saturation_amplitude = 1.0;  ///< A_sat (output); > 0
  double gain = 1.0;                  ///< small-signal amplitude gain G; > 0
  double input_backoff_db = 6.0;      ///< -20 to 40
  double mean_input_power = 1.0;      ///< > 0
  bool normalise_gain = true;
};

class RappAmplifier {
 public:
  explicit RappAmplifier(const RappConfig& config);
  const RappConfig& config() const noexcept { return config_; }
  double am_am(double r) const noexcept;
  double input_saturation_power() const noexcept;   ///< (A_sat / G)^2
  double output_saturation_power() const noexcept;  ///< A_sat^2
  double drive_scale() const noexcept { return scale_; }
  void process(std::span<const cf32> in, std::span<cf32> out) noexcept;
  double measured_output_backoff_db() const noexcept;
  double measured_input_backoff_db() const noexcept;
  const AmplifierMeter& meter() const noexcept { return meter_; }
  double predicted_output_backoff_db(std::span<const cf64> input_values) const;
  double predicted_output_backoff_db_gaussian() const;
  void reset() noexcept { meter_ = {}; }

 private:
  RappConfig config_;
  double scale_;
  float out_scale_;
  AmplifierMeter meter_;
};

// ---------------------------------------------------------------------------------------------
// Quantiser (ADC).
// ---------------------------------------------------------------------------------------------

/// How the quantiser's full scale (the clipping amplitude of each rail) is set.
enum class ClipMode {
  full_scale,  ///< full_scale is given directly (amplitude per rail)
  loading,     ///< full scale = per-rail RMS x 10^(loading_db / 20), per-rail RMS = sqrt(P / 2)
};

/// Mid-rise uniform quantiser applied to I and Q separately: step D = 2 FS / 2^bits, levels
/// (k + 1/2) D for k = -2^(bits-1) .. 2^(bits-1) - 1; inputs beyond the outer levels clip to
/// them. A full-scale sine leaves an SQNR close to 6.02 bits + 1.76 dB. Stateless except for
/// the count of clipped rail samples.
struct QuantiserConfig {
  unsigned bits = 10;  ///< 1 to 24 (float samples resolve 24 bits only for FS = 2^k)
  ClipMode clip_mode = ClipMode::loading;
  double full_scale = 1.0;    ///< clip_mode full_scale: FS per rail; > 0
  double loading_db = 12.0;   ///< clip_mode loading: FS / per-rail RMS in dB; -20 to 40
  double signal_power = 1.0;  ///< clip_mode loading: expected mean |x|^2; > 0
};

class Quantiser {
 public:
  explicit Quantiser(const QuantiserConfig& config);
  const QuantiserConfig& config() const noexcept { return config_; }
  double full_scale() const noexcept { return fs_; }
  double step() const noexcept { return step_; }
  void process(std::span<const cf32> in, std::span<cf32> out) noexcept;
  /// Rail samples (I and Q counted separately) outside [-FS, FS) since reset().
  std::uint64_t clipped_rails() const noexcept { return clipped_; }
  void reset() noexcept { clipped_ = 0; }

 private:
  QuantiserConfig config_;
  double fs_, step_, inv_step_;
  double kmax_;  // 2^(bits-1) - 1
  std::uint64_t clipped_ = 0;
};

// ---------------------------------------------------------------------------------------------
// Static multipath.
// ---------------------------------------------------------------------------------------------

struct MultipathTap {
  std::size_t delay_samples = 0;  ///< 0 to 65536; distinct within a channel
  cf64 gain{1.0, 0.0};            ///< finite
};

/// y[n] = sum_k g_k x[n - d_k], streaming: the delay line carries over between calls (zero
/// before the first sample). With normalise_energy the gains are scaled to sum |g_k|^2 = 1.
struct MultipathConfig {
  std::vector<MultipathTap> taps = {MultipathTap{}};  ///< 1 to 4096 taps
  bool normalise_energy = false;
  /// Taps from a dense vector: tap k has delay k.
  static MultipathConfig from_tap_vector(std::span<const cf64> taps, bool normalise_energy = false);
};

class MultipathChannel {
 public:
  explicit MultipathChannel(const MultipathConfig& config);
  /// The taps after normalisation.
  std::span<const MultipathTap> taps() const noexcept { return taps_; }
  std::size_t max_delay() const noexcept { return max_delay_; }
  void process(std::span<const cf32> in, std::span<cf32> out) noexcept;
  void reset() noexcept;

 private:
  std::vector<MultipathTap> taps_;
  std::vector<std::size_t> delay_;
  std::vector<cf32> gain_;
  std::size_t max_delay_ = 0;
  std::vector<cf32> history_;       // last max_delay_ inputs, oldest first
  std::vector<cf32> next_history_;  // scratch of the same size
};

}  // namespace qamsight
