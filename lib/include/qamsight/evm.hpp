// evm: error vector magnitude and modulation error ratio of symbol-spaced captures.
#pragma once

#include <cmath>
#include <cstddef>
#include <limits>
#include <span>
#include <string>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/modem.hpp"

// What is measured (docs/evm.md has the long form)
//
// Input: one complex sample per symbol, taken at the symbol instant. Timing recovery (choosing
// the optimum sampling instant, removing a sample-timing offset) is the receiver's or the
// caller's job: this module sees symbol-spaced values only. Then, as in the standard
// procedures (3GPP TS 36.104 Annex E / TS 38.104 Annex B: the "modified signal under test"
// after removing the frequency offset and the transmitter's phase and amplitude response), the
// capture r[n] is fitted by least squares to
//     r[n] ~ g exp(j 2 pi f n) s[n],   n = 0, 1, ..., N - 1,
// with s[n] the reference symbols, g a complex gain and f a frequency offset in cycles per
// symbol. For a given f the least-squares g is sum r conj(s) e^{-j 2 pi f n} / sum |s|^2 and the
// residual is sum |r|^2 - |sum r conj(s) e^{-j 2 pi f n}|^2 / sum |s|^2, so the joint fit
// maximises |sum r[n] conj(s[n]) e^{-j 2 pi f n}| over f: a zero-padded FFT (at least 4N
// points) finds the peak to a quarter of a bin, and a golden-section search on the exact
// objective refines it to ~1e-9 of a bin.
// The corrected symbols are z[n] = r[n] e^{-j 2 pi f n} / g and the error vectors
// e[n] = z[n] - s[n].
//
// Figures (P_ref: the normalisation power)
//   RMS EVM = sqrt( mean |e|^2 / P_ref ),  in % and in dB (20 log10)
//   peak EVM = max |e[n]| / sqrt(P_ref), with the index n of that symbol
//   MER = 10 log10( sum |s|^2 / sum |e|^2 ) dB
// P_ref is the average power of the reference constellation (equiprobable points; 1 for the
// library's constellations), as 3GPP normalises ("P0 is the average power of the ideal signal.
// For normalized modulation symbols P0 is equal to 1", TS 38.101-2 Annex F.2), or, as an
// option, the constellation's peak power (the outermost point), the normalisation recalled for
// the EVM of ETSI TR 101 290 (from memory). The two differ by the peak-to-average power
// ratio: sqrt(1.8) for 16-QAM, sqrt(7/3) for 64-QAM.
// MER follows ETSI TR 101 290 ("Measurement guidelines for DVB systems"): the ratio of the
// ideal symbols' power to the error power. The definition MER = 10 log10(P_signal / P_error)
// is partly confirmed (seen quoted from the document); the explicit sum form used here is from
// memory, and the clause number is not confirmed. TR 101 290 measures MER without correcting
// amplitude imbalance or quadrature error; this module removes only the common complex gain
// and frequency offset, never IQ imbalance, so that holds here too.
//
// Data-aided and decision-directed measurement
// - Data-aided: the transmitted symbols are known (reference has one per received symbol).
//   In AWGN alone, EVM = 1/sqrt(Es/N0) and MER = Es/N0 in dB (up to the estimation noise).
// - Decision-directed: the references are the nearest constellation points of the corrected
//   symbols. The fit starts from a blind estimate (square QAM and QPSK: the 4th power of the
//   symbols, E[s^4] != 0; M-PSK: the M-th power; BPSK: the square; other constellations: the
//   mean power, zero phase and frequency), then alternates decisions and fits until the
//   decisions stop changing. The blind frequency search covers |f| < 1/(2M) cycles per symbol
//   for an M-fold symmetric constellation (1/8 for square QAM); other constellations only
//   refine near f = 0. A rotation by a symmetry of the constellation (90 degrees for square
//   QAM) is invisible to decisions and does not change the EVM.
//   BIAS: decisions are always the nearest point, so a noise sample that crosses a decision
//   boundary is measured against the wrong (closer) point. At low SNR the decision-directed
//   EVM is therefore smaller than the true (data-aided) one, and it saturates instead of
//   growing without bound: in AWGN with unit-energy constellations and no gain fit, 16-QAM at
//   Es/N0 = 10 dB reads 26.43 % instead of 31.62 %, 64-QAM at 15 dB 13.12 % instead of 17.78 %,
//   QPSK at 0 dB 81.65 % instead of 100 % (tests/reference/evm_table.csv, integrated with
//   SciPy over the per-rail decision regions). The bias vanishes once symbol errors are rare
//   (for 16-QAM above about 20 dB). Use data-aided measurement at low SNR.
namespace qamsight {

/// Which constellation power the error is divided by.
enum class EvmNormalisation {
  average_power,  ///< mean power of the (equiprobable) constellation points: 3GPP, IEEE 802.11
  peak_power,     ///< power of the outermost point (DVB TR 101 290 style, from memory)
};

struct EvmOptions {
  /// true: `reference` holds the transmitted symbols; false: decisions (reference empty).
  bool data_aided = true;
  EvmNormalisation normalisation = EvmNormalisation::average_power;
  /// Fit and remove a frequency offset (needs remove_phase).
  bool remove_frequency = true;
  /// Remove the phase of the fitted complex gain.
  bool remove_phase = true;
  /// Remove the magnitude of the fitted complex gain (the corrected symbols are divided by |g|).
  bool remove_gain = true;
  /// Keep the per-symbol error vectors, corrected symbols and references in the result.
  bool keep_error_vectors = true;
  /// Largest |frequency offset| searched, cycles per symbol; (0, 0.5].
  double max_frequency = 0.5;
  /// Decision-directed: at most this many decision/fit rounds; 1 to 1000.
  unsigned max_iterations = 50;
};

/// A least-squares carrier fit r[n] ~ gain e^{j 2 pi frequency n} s[n].
struct CarrierFit {
  cf64 gain{1.0, 0.0};
  double frequency = 0.0;  ///< cycles per symbol
};

struct EvmMeasurement {
  std::size_t symbols = 0;
  bool data_aided = true;
  EvmNormalisation normalisation = EvmNormalisation::average_power;
  double normalisation_power = 1.0;  ///< P_ref (constellation average or peak power)
  double error_power = 0.0;          ///< mean |e|^2 (before normalisation)
  double reference_power = 0.0;      ///< mean |s|^2 of the references used
  double rms = std::numeric_limits<double>::quiet_NaN();  ///< ratio
  double rms_pct = std::numeric_limits<double>::quiet_NaN();
  double rms_db = std::numeric_limits<double>::quiet_NaN();   ///< 20 log10(rms)
  double peak_pct = std::numeric_limits<double>::quiet_NaN();
  double peak_db = std::numeric_limits<double>::quiet_NaN();
  std::size_t peak_index = 0;  ///< symbol with the largest error
  double mer_db = std::numeric_limits<double>::quiet_NaN();
  cf64 gain{1.0, 0.0};          ///< the complex gain divided out (1 when not removed)
  double frequency_offset = 0.0;  ///< cycles per symbol removed (0 when not removed)
  unsigned iterations = 1;      ///< decision/fit rounds (1 for data-aided)
  /// Per symbol (when keep_error_vectors): corrected symbols z, references s (the decisions
  /// in decision-directed mode) and error vectors z - s.
  std::vector<cf32> corrected;
  std::vector<cf32> references;
  std::vector<cf32> error_vectors;
};

/// Joint least-squares fit of gain and frequency (see the header comment); with
/// fit_frequency false only the gain is fitted (frequency 0). received and reference have the
/// same length, at least 2; max_frequency in (0, 0.5]. Throws ConfigError otherwise.
CarrierFit fit_carrier(std::span<const cf32> received, std::span<const cf32> reference, bool fit_frequency,
                       double max_frequency = 0.5);

/// Measures EVM and MER of `received` (symbol-spaced, one value per symbol at the symbol
/// instant). Data-aided: `reference` has the same length as `received`; decision-directed:
/// `reference` is empty. Throws ConfigError for fewer than 2 symbols, mismatched lengths, a
/// reference given in decision-directed mode, remove_frequency without remove_phase, or
/// options out of range. Not a hot path: it allocates its results.
EvmMeasurement measure_evm(std::span<const cf32> received, std::span<const cf32> reference,
                           const Constellation& constellation, const EvmOptions& options = {});

/// Options of the EVM figures (lib/src/evm_figures.cpp).
struct EvmFigureOptions {
  std::string title{};  ///< empty: a default title
  /// RMS EVM limit in %, drawn as a line in the per-symbol figure when finite and > 0.
  double limit_pct = std::numeric_limits<double>::quiet_NaN();
  /// Symbols drawn at most, evenly thinned (the peak-error symbol is always among them);
  /// 100 to 1000000. Keeps figures of long captures small.
  std::size_t max_points = 4000;
  /// Error vectors (reference -> corrected symbol) drawn in the constellation, evenly spread
  /// over the capture plus the peak one; 0 to 100000.
  std::size_t max_vectors = 300;
};

/// The constellation of a measurement: the corrected symbols, the ideal points of
/// `constellation`, and error vectors from reference to corrected symbol, with the peak-error
/// symbol marked. Square axes, in units of sqrt(P_ref). Needs the per-symbol vectors
/// (keep_error_vectors); throws ConfigError("error_vectors", ...) without them and for options
/// out of range.
std::string evm_constellation_svg(const EvmMeasurement& m, const Constellation& constellation,
                                  const EvmFigureOptions& options = {});
/// EVM of each symbol, 100 |e[n]| / sqrt(P_ref) %, against its index, with the RMS EVM of
/// consecutive blocks (power averaged before the root), the overall RMS EVM and the limit as
/// lines, and the peak marked. Same requirements as evm_constellation_svg().
std::string evm_symbols_svg(const EvmMeasurement& m, const EvmFigureOptions& options = {});

/// EVM ratio <-> percent and dB (20 log10).
inline double evm_pct_to_db(double pct) noexcept { return 20.0 * std::log10(pct / 100.0); }
inline double evm_db_to_pct(double db) noexcept { return 100.0 * std::pow(10.0, db / 20.0); }

}  // namespace qamsight
