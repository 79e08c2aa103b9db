// spectrum: Welch power spectral density of complex baseband samples and band measurements on it.
#pragma once

#include <cstddef>
#include <span>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/fft.hpp"

// Conventions of this module
// - "Power" is the mean of |x|^2 in the units of the samples (no impedance); 0 dB is a power of
//   one. A density is power per Hz and integrates over frequency to power.
// - Spectra of complex baseband signals are two-sided: bins run from -fs/2 to fs/2 - fs/N in
//   ascending order (the FFT output rotated by N/2, with N/2 rounded down, so bin N/2 is 0 Hz).
//   Bin k stands for the band [f_k - fs/(2N), f_k + fs/(2N)]; band integrals treat the spectrum
//   as periodic in fs, as the DFT does.
// - Windows are periodic ("DFT-even": the symmetric window of length N + 1 without its last
//   sample), the form whose bins are exactly spaced for harmonic analysis (F. J. Harris, "On the
//   use of windows for harmonic analysis with the discrete Fourier transform", Proc. IEEE 66(1),
//   1978). Segments are not detrended.
namespace qamsight {

/// Data windows applied to each segment before its FFT. Each is a sum of cosines
///   w[n] = a0 - a1 cos(2 pi n / N) + a2 cos(4 pi n / N) - a3 cos(6 pi n / N) + ...
/// - rectangular: w = 1. Finest resolution, 3.9 dB scalloping, -13 dB sidelobes.
/// - hann: a = {0.5, 0.5} (Harris 1978, the cos^2 window).
/// - blackman_harris4: the 4-term minimum-sidelobe (-92 dB) Blackman-Harris window,
///   a = {0.35875, 0.48829, 0.14128, 0.01168} (Harris 1978, the "4-term (-92 dB)" set).
///   For noise-like signals with a wide dynamic range.
///   (Attributions to Harris from memory; the Hann and Blackman-Harris values equal SciPy's
///   "hann" and "blackmanharris" windows, checked through tests/reference/welch_table.csv.)
/// - flat_top: 5-term flat-top window for tone amplitude measurement,
///   a = {0.21557895, 0.41663158, 0.277263158, 0.083578947, 0.006947368}
///   (G. D'Antona, A. Ferrero, "Digital Signal Processing for Measurement Systems", Springer,
///   2006, p. 70, as cited by SciPy's scipy.signal.windows.flattop, whose values
///   tests/reference/welch_table.csv checks). Amplitude error below 0.01 dB anywhere
///   between bins, at an equivalent noise bandwidth of 3.77 bins.
enum class WindowKind { rectangular, hann, blackman_harris4, flat_top };

/// Lower-case name for files and command lines: "rectangular", "hann", "blackman-harris4",
/// "flat-top".
std::string_view window_name(WindowKind kind) noexcept;
/// Name for figure annotations: "rectangular", "Hann", "Blackman-Harris 4-term", "flat-top".
std::string_view window_display_name(WindowKind kind) noexcept;
/// Parses a window_name(); throws ConfigError("window", name, list of names) otherwise.
WindowKind window_from_name(std::string_view name);

/// The periodic window of length `size` (see WindowKind). Throws ConfigError if size < 1.
std::vector<double> window_coefficients(WindowKind kind, std::size_t size);

/// Figures of merit of a window of length N (defined as in Harris 1978, Table I).
struct WindowProperties {
  /// sum(w) / N: amplitude gain of the window for a tone centred on a bin.
  double coherent_gain = 1.0;
  /// N sum(w^2) / sum(w)^2: equivalent noise bandwidth in bins (1 for rectangular).
  double enbw_bins = 1.0;
  /// Loss of a tone half way between two bins against one on a bin, in dB (positive).
  double scalloping_loss_db = 0.0;
};

/// Properties of the window of length `size`; throws ConfigError if size < 1.
WindowProperties window_properties(WindowKind kind, std::size_t size);

/// What the values of a Spectrum mean.
enum class SpectrumScaling {
  /// Power per Hz: mean |X_k|^2 / (fs sum w^2). Integrates to the signal's mean power, so a
  /// white noise of variance s^2 reads s^2 / fs in every bin.
  density,
  /// Power per bin: mean |X_k|^2 / (sum w)^2. A tone of power P on a bin reads P (and within
  /// the window's scalloping loss of P anywhere between bins): the scaling for tones.
  power_per_bin,
};

/// An averaged spectrum on the two-sided grid described at the top of this header.
struct Spectrum {
  std::vector<double> frequency_hz{};  ///< bin centres, ascending
  std::vector<double> values{};        ///< per bin, in the units of `scaling`
  SpectrumScaling scaling = SpectrumScaling::density;
  double sample_rate_hz = 1.0;
  double bin_spacing_hz = 1.0;           ///< fs / N
  double resolution_bandwidth_hz = 1.0;  ///< enbw_bins fs / N (the "RBW")
  WindowKind window = WindowKind::hann;
  WindowProperties window_properties{};
  std::size_t segments = 0;     ///< periodograms averaged (0: values are NaN)
  double overlap = 0.0;         ///< fraction of a segment shared with the next
  double equivalent_dof = 0.0;  ///< see WelchEstimator::equivalent_dof()

  std::size_t size() const noexcept { return values.size(); }
  /// Value of bin k as a density (power per Hz), whatever the scaling.
  double density(std::size_t k) const noexcept;
};

/// Configuration of a WelchEstimator.
struct WelchConfig {
  std::size_t fft_size = 1024;  ///< segment length N, 2 to 2^22 (any size; 2^a 3^b 5^c 7^d fast)
  double overlap = 0.5;         ///< 0 <= overlap < 1; hop = N - round(overlap N) >= 1
  WindowKind window = WindowKind::hann;
  double sample_rate_hz = 1.0;  ///< > 0
};

/// Welch's averaged modified periodogram (P. D. Welch, "The use of fast Fourier transform for
/// the estimation of power spectra: a method based on time averaging over short, modified
/// periodograms", IEEE Trans. Audio Electroacoust. AU-15(2), 1967): the stream is cut into
/// segments of N samples starting every hop samples, each segment is windowed and transformed,
/// and |X_k|^2 is averaged over the segments.
///
/// Streaming: add() may be called with any lengths; samples of an unfinished segment are kept
/// for the next call, so the result depends only on the concatenated stream (the segments are
/// those of one call with all samples; a tail shorter than a segment is not used).
/// Segments are transformed in double precision (the float input is converted exactly), so the
/// estimate resolves levels far below the windows' sidelobes and agrees with a double-precision
/// reference to ~1e-12. add() allocates nothing and does not throw. One thread per instance.
class WelchEstimator {
 public:
  /// Throws ConfigError for sizes, overlaps or sample rates outside the ranges of WelchConfig.
  explicit WelchEstimator(const WelchConfig& config);

  /// Appends samples to the stream.
  void add(std::span<const cf32> samples) noexcept;
  /// Adds the periodograms of another estimator with the same configuration (for example one
  /// per thread over separate captures); its unfinished segment is not carried over. Throws
  /// ConfigError if the configurations differ.
  void merge(const WelchEstimator& other);
  /// Forgets all samples and periodograms.
  void reset() noexcept;

  /// The density estimate (SpectrumScaling::density).
  Spectrum psd() const;
  /// The power-per-bin estimate (SpectrumScaling::power_per_bin).
  Spectrum power_per_bin() const;
  Spectrum spectrum(SpectrumScaling scaling) const;

  const WelchConfig& config() const noexcept { return config_; }
  std::size_t hop() const noexcept { return hop_; }
  std::size_t segments() const noexcept { return segments_; }
  const WindowProperties& properties() const noexcept { return properties_; }
  /// enbw_bins fs / N.
  double resolution_bandwidth_hz() const noexcept;
  /// Equivalent degrees of freedom of each bin's estimate for Gaussian noise with a spectrum
  /// flat across the window's mainlobe: nu = 2K / (1 + 2 sum_{m=1}^{K-1} (1 - m/K) rho(m)^2),
  /// rho(m) = sum_n w[n] w[n + m hop] / sum_n w[n]^2, for K segments (D. B. Percival,
  /// A. T. Walden, "Spectral Analysis for Physical Applications", Cambridge 1993, eq. 292b;
  /// from memory). Without overlap it is exactly 2K, and the estimate is s^2/fs times a
  /// chi-square variable with 2K degrees of freedom divided by 2K.
  double equivalent_dof() const noexcept;

 private:
  void transform_segment() noexcept;

  WelchConfig config_;
  std::size_t hop_ = 0;
  std::vector<double> window_;
  double window_sum_ = 0.0;
  double window_energy_ = 0.0;
  WindowProperties properties_{};
  std::vector<double> overlap_rho2_;  // rho(m)^2 for m = 1, 2, ... while segments overlap
  FftPlanD plan_;
  std::vector<cf32> pending_;  // samples of the segment being filled
  std::size_t filled_ = 0;
  std::vector<cf64> work_;
  std::vector<double> accumulated_;  // sum over segments of |X_k|^2, FFT order
  std::size_t segments_ = 0;
};

/// The band [low_hz, high_hz] of a spectrum, integrated as power with fractional bins at the
/// edges (each bin's power spread evenly over its width). Any band of width <= fs is allowed;
/// the spectrum repeats with period fs. Throws ConfigError if high < low or high - low > fs.
double band_power(const Spectrum& spectrum, double low_hz, double high_hz);
/// Total power (sum of the densities times the bin spacing).
double total_power(const Spectrum& spectrum) noexcept;

/// The largest bin of a spectrum (within [low_hz, high_hz] if given; whole spectrum by default).
struct SpectralPeak {
  std::size_t bin = 0;
  double frequency_hz = 0.0;
  double value = 0.0;  ///< in the spectrum's scaling
};
SpectralPeak spectral_peak(const Spectrum& spectrum);
SpectralPeak spectral_peak(const Spectrum& spectrum, double low_hz, double high_hz);

/// Occupied bandwidth by the symmetric-tail definition: the band whose lower and upper limits
/// each leave (1 - fraction)/2 of the total power outside (0.5% below and 0.5% above for the
/// default 99%); ITU Radio Regulations, Article 1, No. 1.153, "occupied bandwidth" with
/// beta/2 = 0.5% (from memory). The limits are found on the cumulative power, linear within a
/// bin, from the lowest edge of the grid (-fs/2 - fs/(2N)).
struct OccupiedBandwidth {
  double bandwidth_hz = 0.0;  ///< upper_hz - lower_hz
  double lower_hz = 0.0;
  double upper_hz = 0.0;
  double total_power = 0.0;
};
/// Throws ConfigError unless 0 < fraction < 1. All values are NaN for a spectrum of zero or
/// non-finite total power.
OccupiedBandwidth occupied_bandwidth(const Spectrum& spectrum, double fraction = 0.99);

/// Channels for an adjacent-channel power ratio: the main channel of width bandwidth centred
/// at center_hz and one channel of the same width on each side at +- spacing_hz.
struct AdjacentChannels {
  double bandwidth_hz = 1.0;
  double spacing_hz = 1.0;
  double center_hz = 0.0;
};
/// Powers of the three channels (band_power()) and the ratios of each adjacent channel to the
/// main channel, 10 log10(P_adjacent / P_main) (negative for a clean signal).
struct AdjacentChannelPower {
  double main_power = 0.0;
  double lower_power = 0.0;
  double upper_power = 0.0;
  double lower_db = 0.0;  ///< ACPR of the lower adjacent channel
  double upper_db = 0.0;  ///< ACPR of the upper adjacent channel
};
/// Throws ConfigError unless bandwidth > 0, spacing > 0 and all three channels lie within
/// [-fs/2, fs/2].
AdjacentChannelPower adjacent_channel_power(const Spectrum& spectrum, const AdjacentChannels& channels);

/// What the limits of a spectral mask are relative to.
enum class MaskReference {
  /// dB of the spectrum's own values: dB/Hz for a density, dB for power per bin.
  absolute,
  /// dB relative to the spectrum's largest value ("dBc" against the in-band peak measured at
  /// the same resolution bandwidth; common practice).
  relative_to_peak,
};

/// One corner of a mask's limit line.
struct MaskPoint {
  double offset_hz = 0.0;  ///< from SpectralMask::center_hz
  double limit_db = 0.0;
};

/// A limit line on a spectrum: straight in dB between consecutive points, so a step is two
/// points at the same offset. Offsets are non-decreasing. Outside the first and last offsets
/// there is no limit. With `mirror` the points are given for offsets >= 0 and the same line
/// applies at -offset (the usual symmetric mask).
struct SpectralMask {
  std::vector<MaskPoint> points{};
  MaskReference reference = MaskReference::relative_to_peak;
  double center_hz = 0.0;
  bool mirror = true;
};

/// The limit in dB (relative to the mask's reference) at an offset from the mask centre; NaN
/// where the mask sets no limit. At a step the lower limit applies.
double mask_limit_db(const SpectralMask& mask, double offset_hz) noexcept;

/// The outcome of comparing a spectrum with a mask at every bin centre the mask covers.
struct MaskVerdict {
  bool pass = true;                 ///< no bin above the limit
  double worst_margin_db = 0.0;     ///< min over bins of (limit - value) in dB; < 0: violation
  double worst_frequency_hz = 0.0;  ///< bin of the worst margin (NaN if no bin was checked)
  double reference_db = 0.0;        ///< dB added to the mask's limits (0 or the peak)
  std::size_t bins_checked = 0;     ///< 0: +inf margin, the mask covers no bin
};
/// Throws ConfigError for a mask with fewer than 2 points, non-finite or decreasing offsets,
/// or (with mirror) a negative offset.
MaskVerdict mask_check(const Spectrum& spectrum, const SpectralMask& mask);

}  // namespace qamsight
