// pulse: raised-cosine pulse design, polyphase interpolation, matched decimation and FIR filters.
#pragma once

#include <complex>
#include <cstddef>
#include <optional>
#include <span>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/fft.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// Closed forms (symbol period T = 1, tau = t / T)
// ---------------------------------------------------------------------------------------------

/// Root-raised-cosine pulse g(tau) with roll-off beta in (0, 1]: the inverse Fourier transform
/// of sqrt(X(f)), X the raised-cosine spectrum with X(0) = 1 (raised_cosine_spectrum), so
/// the integral of g^2 over tau is 1 (unit energy) and g(0) = 1 - beta + 4 beta / pi.
///   g(tau) = [sin(pi tau (1-beta)) + 4 beta tau cos(pi tau (1+beta))]
///            / [pi tau (1 - (4 beta tau)^2)]
/// Both removable singularities are handled exactly, without a tolerance window: near
/// tau = 0 the numerator is divided by pi tau analytically (a sinc form), and elsewhere the
/// numerator is rewritten (sum-to-product) so that the factor (1 - 4 beta |tau|) of the
/// denominator cancels analytically. So tau = 0 gives 1 - beta + 4 beta/pi, |tau| = 1/(4 beta)
/// gives the limit
///   g(+-1/(4 beta)) = (beta / sqrt 2) [(1 + 2/pi) sin(pi/(4 beta)) + (1 - 2/pi) cos(pi/(4 beta))],
/// and points next to either (1e-9 away, where the formula as written loses about 1e-7 to
/// cancellation) keep full double accuracy: within 1e-15 of a 40-digit quadrature of the
/// inverse transform everywhere tested (tests/reference/make_pulse_table.py). Sines and
/// cosines of pi x use exact argument reduction.
/// The continuous unit-energy pulse of symbol period T is h(t) = g(t/T) / sqrt(T).
/// Outside (0, 1] for beta the result is NaN.
double root_raised_cosine_pulse(double tau, double roll_off) noexcept;

/// Raised-cosine (Nyquist) pulse p(tau) = sinc(tau) cos(pi beta tau) / (1 - (2 beta tau)^2),
/// p(0) = 1 and p(k) = 0 exactly for integers k != 0 (sin(pi k) is evaluated with exact
/// argument reduction). The point |tau| = 1/(2 beta) is handled like the RRC's, with limit
/// (pi/4) sinc(1/(2 beta)). p = g * g (convolution over tau) and its transform is X.
double raised_cosine_pulse(double tau, double roll_off) noexcept;

/// Raised-cosine spectrum X(f), f in cycles per symbol (f T): 1 for |f| <= (1-beta)/2,
/// (1 + cos(pi/beta (|f| - (1-beta)/2))) / 2 up to (1+beta)/2, 0 beyond (Proakis,
/// Digital Communications, eq. 9-2-26, with T = 1 and the factor T dropped).
double raised_cosine_spectrum(double f, double roll_off) noexcept;

// ---------------------------------------------------------------------------------------------
// Tap design
// ---------------------------------------------------------------------------------------------

enum class PulseFamily { root_raised_cosine, raised_cosine };

/// A sampled raised-cosine-family pulse. Validated by pulse_taps() and by every block built
/// from it; the ConfigError names the field.
///
/// Allowed values:
///  * roll_off: 0 < beta <= 1.
///  * samples_per_symbol: 1 to 64. At 1 the excess band (1+beta)/2 > 1/2 aliases, so the
///    RRC->RRC cascade is not Nyquist (matched_cascade_isi_power says by how much); use >= 2
///    for a faithful pulse.
///  * span_symbols: even (so the span*sps+1 taps have a centre tap), 4 to 256, and
///    span_symbols * roll_off >= 1. Why: truncating the pulse to S symbols convolves its
///    spectrum with a Dirichlet kernel whose main lobe is 2/S wide (cycles per symbol); the
///    cosine transition band to be reproduced is beta wide. With S beta < 1 the window
///    smears the whole transition band, and the RRC tails, which decay only like
///    1/(4 pi beta tau^2), are cut while still large. At the smallest allowed span the
///    RRC->RRC truncation ISI is at most -18 dB (worst case found by a scan over beta in
///    [0.01, 1] at 2, 4 and 8 samples per symbol: beta = 0.25, span 4, -18.2 dB); with
///    S = 4 the pulse's main lobe and first side lobes are always kept. Longer spans buy
///    lower ISI (matched_cascade_isi_power gives the number; e.g. beta = 0.35, sps 4: span 4 about
///    -25 dB, span 10 about -43 dB, span 16 about -53 dB).
struct PulseSpec {
  PulseFamily family = PulseFamily::root_raised_cosine;
  double roll_off = 0.35;      ///< beta, 0 < beta <= 1
  int span_symbols = 10;       ///< even, 4 to 256, span_symbols * roll_off >= 1
  int samples_per_symbol = 4;  ///< 1 to 64
};

/// Throws ConfigError (naming roll_off, span_symbols or samples_per_symbol) unless valid.
void check_pulse_spec(const PulseSpec& spec);

/// span_symbols * samples_per_symbol + 1 (always odd).
std::size_t pulse_tap_count(const PulseSpec& spec);

/// The taps, centred: tap n is the closed form at tau = (n - c)/sps, c = span*sps/2, scaled to
/// unit energy (sum of squared taps = 1, in double).
///
/// Relation to the continuous unit-energy pulse h(t) = g(t/T)/sqrt(T): tap n equals
/// h((n - c) Ts) sqrt(Ts) (Ts = T/sps) times 1/sqrt(1 - e), where e is the energy fraction of the
/// sampled pulse outside the span. For sps >= 2 and an untruncated pulse, sum_m g(m/sps)^2 =
/// sps exactly (Poisson summation; g^2 is band-limited to (1+beta)/T <= sps/T), so e -> 0 as
/// the span grows (e is about 1/(48 pi^2 beta^2 (S/2)^3) for the RRC). Consequences: a
/// transmit filter with these taps keeps the symbol energy (sum over the samples of one
/// symbol = Es), the matched RRC->RRC cascade has peak exactly 1 (symbols come out at unit
/// gain), and white noise of variance N0 per sample leaves the matched filter with variance
/// N0 (the convention of AwgnChannel). The unit-energy raised cosine has centre tap
/// 1/sqrt(sps (1 - beta/4)) for long spans (the energy of X is 1 - beta/4); divide by the
/// centre tap for the unit-peak Nyquist form.
std::vector<double> pulse_taps(const PulseSpec& spec);

/// ISI power of the pulse followed by its matched filter (the same taps: the designs are
/// real and even): sum over k != 0 of c(kT)^2 divided by c(0)^2, c = taps * taps sampled at
/// the symbol instants. For an RRC it measures what the finite span (and sps = 1 aliasing)
/// costs: -10 log10 of it is the signal-to-ISI ratio with unit-energy symbols. Linear ratio.
double matched_cascade_isi_power(const PulseSpec& spec);

// ---------------------------------------------------------------------------------------------
// Filters. All blocks: built once (taps laid out, buffers and FFT plans made in the
// constructor, which throws ConfigError), then process() many times; process() never
// allocates or throws (wrong buffer lengths trip QAMSIGHT_ASSERT). The filter state (delay
// line, decimation phase, partial FFT block) carries across calls, so processing a signal in
// frames of any sizes, including 0, gives the same output as processing it in one call;
// reset() returns to the just-built state (zero history). A block belongs to one thread at a
// time. Instantiated for cf32 and cf64; taps are given in double and stored in the sample's
// precision.
// ---------------------------------------------------------------------------------------------

/// Transmit side: symbols at 1 sample/symbol in, sps samples/symbol out, filtered by the taps
/// (the zero-stuffed symbol stream convolved with the taps, computed without the zeros: output
/// sample q*sps + p uses only the taps of phase p, h[j*sps + p]). Output q*sps + p is final
/// when symbol q arrives; the taps' group delay, (taps - 1)/2 samples for a symmetric design
/// (span/2 symbols), is not removed.
template <class Sample>
class PolyphaseInterpolator {
 public:
  using Real = typename Sample::value_type;

  /// taps: 1 to 65536 of them; samples_per_symbol: 1 to 64.
  PolyphaseInterpolator(std::span<const double> taps, int samples_per_symbol);
  /// The pulse of `spec` (usually the RRC) at spec.samples_per_symbol.
  explicit PolyphaseInterpolator(const PulseSpec& spec);

  int samples_per_symbol() const noexcept { return sps_; }
  std::size_t tap_count() const noexcept { return tap_count_; }
  /// Group delay of a symmetric tap set, in output samples.
  std::size_t delay_samples() const noexcept { return (tap_count_ - 1) / 2; }
  /// Output length for `symbols` input symbols: symbols * samples_per_symbol.
  std::size_t output_length(std::size_t symbols) const noexcept { return symbols * sps_; }

  /// samples.size() must equal output_length(symbols.size()); the spans must not overlap.
  void process(std::span<const Sample> symbols, std::span<Sample> samples) noexcept;
  void reset() noexcept;

 private:
  int sps_;
  std::size_t tap_count_;
  std::size_t phase_len_;         // K: taps per phase (zero-padded to the longest phase)
  std::vector<Real> phase_taps_;  // sps rows of K, each reversed (oldest symbol first)
  std::vector<Sample> line_;      // K-1 past symbols, then a chunk of new ones
};

/// Receive side: filter at sps samples/symbol and keep every (sps / outputs_per_symbol)-th
/// output, computing only those. Kept outputs are at input indices
///   n = m * (sps / outputs_per_symbol) + phase,  m = 0, 1, 2, ...
/// counted from construction or reset(), i.e. output m = sum_i h[i] x[n - i]. With the
/// PolyphaseInterpolator's symmetric taps in front, phase 0 and one output per symbol land on
/// the symbol instants (the cascade delay, span*sps samples, is a whole number of symbols):
/// output m is symbol m - span_symbols.
template <class Sample>
class MatchedDecimator {
 public:
  using Real = typename Sample::value_type;

  /// taps: 1 to 65536; samples_per_symbol: 1 to 64; outputs_per_symbol: divides
  /// samples_per_symbol (1 = symbol rate, 2 = two samples per symbol for a timing loop);
  /// phase: 0 to sps/outputs_per_symbol - 1.
  MatchedDecimator(std::span<const double> taps, int samples_per_symbol, int outputs_per_symbol = 1,
                   int phase = 0);
  /// The matched filter of `spec`'s pulse (the same taps: they are real and even).
  explicit MatchedDecimator(const PulseSpec& spec, int outputs_per_symbol = 1, int phase = 0);

  int samples_per_symbol() const noexcept { return sps_; }
  int outputs_per_symbol() const noexcept { return sps_ / step_; }
  std::size_t tap_count() const noexcept { return tap_count_; }
  /// Number of outputs the next process() call produces for `input_length` samples (depends
  /// on the current decimation phase).
  std::size_t output_length(std::size_t input_length) const noexcept;

  /// out.size() must equal output_length(in.size()); the spans must not overlap.
  void process(std::span<const Sample> in, std::span<Sample> out) noexcept;
  void reset() noexcept;

 private:
  int sps_;
  int step_;  // input samples per output
  int phase_;
  std::size_t tap_count_;
  std::size_t padded_len_;    // taps rounded up to the dot kernel's width
  std::vector<Real> taps2_;   // reversed, zero-padded in front, each tap twice (re, im)
  std::vector<Sample> line_;  // padded_len-1 past samples, then a chunk of new ones
  std::size_t chunk_;
  std::size_t skip_;  // input samples to pass before the next kept output
};

/// How a FirFilter computes its convolution.
enum class FirMethod {
  automatic,     ///< direct below kOverlapSaveMinTaps (real) / ...ComplexTaps, else overlap-save
  direct,        ///< dot product per output sample
  overlap_save,  ///< FFT fast convolution (FftPlan), blocks of fft_size - taps + 1 outputs
};

/// Tap counts from which FirMethod::automatic uses overlap-save, for real and complex taps.
///
/// Measured with bench/bench_pulse.cpp (BM_FirDirect* vs BM_FirOverlapSave*; Google Benchmark,
/// Release, cf32 samples, blocks of 16384 samples, one core of this project's 2-core AMD EPYC
/// build machine, SSE2 code, FFTs by FftPlanF as fft.cpp plans them). Medians of 5 to 7
/// repetitions of CPU time while other builds shared the machine (spread about +-10%), one
/// session; throughput in M samples/s, direct vs overlap-save:
///   real taps:    48 taps 60.5 vs 45.4 (direct 1.33x faster); 56 taps 47.6 vs 50.0 (a tie);
///                 64 taps 39.9 vs 53.7 (FFT 1.35x faster); 128 taps 23.4 vs 62.4 (FFT 2.7x);
///                 1024 taps 3.5 vs 20.2 (FFT 5.7x).
///   complex taps: 16 taps 52.4 vs 33.6 (direct 1.56x faster); 24 taps 39.8 vs 45.2 (FFT 1.14x
///                 faster); 32 taps 34.3 vs 41.6 (FFT 1.2x); 128 taps 14.0 vs 45.4 (FFT 3.2x).
/// Direct is faster below 56 real / 24 complex taps. Re-measure on other machines: the
/// crossover moves with the SIMD width the library is compiled for and with the FFT plan
/// flags.
inline constexpr std::size_t kOverlapSaveMinTaps = 56;
inline constexpr std::size_t kOverlapSaveMinComplexTaps = 24;

/// A streaming FIR filter y[n] = sum_k h[k] x[n - k], same length out as in, with real or
/// complex taps. Overlap-save keeps zero latency: a call that ends inside an FFT block
/// computes the outputs it owes from the partial block (by the direct dot product when that
/// is cheaper, else by an FFT of the partial block), and the block is completed by later
/// calls. Results then depend on the frame sizes at rounding level only (a few eps log2(fft
/// size) of the output RMS); the direct form is exactly frame-size independent.
template <class Sample>
class FirFilter {
 public:
  using Real = typename Sample::value_type;

  /// taps: 1 to 65536.
  explicit FirFilter(std::span<const double> taps, FirMethod method = FirMethod::automatic);
  explicit FirFilter(std::span<const cf64> taps, FirMethod method = FirMethod::automatic);

  std::size_t tap_count() const noexcept { return tap_count_; }
  bool uses_overlap_save() const noexcept { return overlap_save_; }
  /// FFT size of the overlap-save plan (0 for the direct form).
  std::size_t fft_size() const noexcept { return fft_size_; }
  std::size_t output_length(std::size_t input_length) const noexcept { return input_length; }

  /// out.size() must equal in.size(); in and out may be the same span (in place), otherwise
  /// they must not overlap.
  void process(std::span<const Sample> in, std::span<Sample> out) noexcept;
  void reset() noexcept;

 private:
  void build(std::span<const cf64> taps, bool real_taps, FirMethod method);
  void direct_outputs(const Sample* window_end, std::size_t count, Sample* out) const noexcept;
  void process_direct(std::span<const Sample> in, std::span<Sample> out) noexcept;
  void process_overlap_save(std::span<const Sample> in, std::span<Sample> out) noexcept;
  void fft_block() noexcept;

  std::size_t tap_count_ = 0;
  bool real_taps_ = true;
  bool overlap_save_ = false;
  std::size_t padded_len_ = 0;  // direct kernel length (taps rounded up to its width)
  std::vector<Real> taps2_re_;  // reversed, zero-padded in front, each tap twice
  std::vector<Real> taps2_im_;  // imaginary parts, same layout (complex taps only)
  std::vector<Sample> line_;    // direct: padded_len-1 past samples, then a chunk
  std::size_t chunk_ = 0;
  // Overlap-save state.
  std::size_t fft_size_ = 0;
  std::size_t block_ = 0;         // new samples per FFT block: fft_size - taps + 1
  std::size_t fill_ = 0;          // new samples in the current block so far
  std::size_t lead_ = 0;          // padded_len - taps: zero lead-in before the FFT window
  std::vector<Sample> spectrum_;  // FFT of the zero-padded taps, divided by fft_size
  std::vector<Sample> stage_;     // lead_ zeros, taps-1 history, then the block being filled
  std::vector<Sample> work_;      // frequency-domain / result buffer
  std::optional<FftPlan<Sample>> forward_, inverse_;  // empty for the direct form
};

}  // namespace qamsight
