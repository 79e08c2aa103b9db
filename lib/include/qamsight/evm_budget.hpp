// evm_budget: EVM budget of a transmitter/receiver line-up from component specifications.
#pragma once

#include <cstddef>
#include <cstdint>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/evm.hpp"
#include "qamsight/evm_limits.hpp"
#include "qamsight/sim.hpp"

// The question: does this line-up meet its EVM limit, with how much margin, and which
// impairment eats the budget? Each impairment is predicted on its own (models below, long
// form in docs/evm.md), the composite is the root-sum-square of the contributions (they are
// treated as independent, uncorrelated error vectors), and each one's share is its part of
// EVM^2. simulate_evm() runs the waveform link of sim.hpp with the same settings and measures
// its data-aided EVM, so every prediction can be checked against the full simulation.
//
// Conventions (sim units: the unimpaired transmit signal has unit symbol energy, per-sample
// power 1/sps):
// - SNR: Es/N0 of the received signal at the matched-filter output: the mean received symbol
//   energy (everything the transmit side and the channel produce, in band) over N0. From a
//   receiver's noise figure: SNR_B = P_sig - (10 log10(k T0 1 mW) + NF + 10 log10 B), with
//   10 log10(k T0) = -173.975 dBm/Hz at T0 = 290 K (the "-174 dBm/Hz" of data sheets), and
//   Es/N0 = SNR_B + 10 log10(B / Rs): B is the noise bandwidth the noise power is quoted in
//   (default the symbol rate, the noise bandwidth of the unit-energy RRC matched filter).
// - Because the received signal also carries the transmitter's own error power, the noise
//   term is EVM_awgn^2 = (1 + sum of the error powers ahead of the noise) / SNR, relative to
//   the wanted (linear) part of the signal; the factor is within 1 % of 1 at EVM below 10 %.
// - The measurement is the standard one (evm.hpp): least-squares complex gain and, unless
//   switched off, frequency removed; normalised to the average constellation power.
namespace qamsight {

/// SNR from a receiver's noise figure and the signal level at its input.
struct ReceiverNoiseSpec {
  double signal_dbm = -60.0;       ///< signal power at the receiver input, dBm; -200 to 100
  double noise_figure_db = 3.0;    ///< 0 to 60 dB
  double noise_bandwidth_hz = 0.0; ///< bandwidth of the noise power; 0 = the symbol rate
};

/// A transmitter or receiver line-up, component by component. Defaults: no impairment.
struct EvmLineup {
  std::string name;
  std::string modulation = "16qam";   ///< Constellation::from_name
  double symbol_rate_hz = 1.0e6;      ///< > 0, at most 1e12
  PulseShapingConfig pulse;           ///< sps 1: symbol-rate model (no filters)
  double carrier_frequency_hz = 0.0;  ///< for the RMS jitter of the phase noise; 0 = not given

  /// Thermal noise: the SNR (Es/N0 of the received signal, dB; -20 to 150) or a noise figure
  /// with a signal level (not both); neither: no noise.
  std::optional<double> snr_db;
  std::optional<ReceiverNoiseSpec> noise;

  /// Phase noise: Wiener linewidth (Hz, full 3-dB width) and/or a single-sideband mask whose
  /// levels are shifted by mask_offset_db (for allowance searches). The mask is held flat
  /// below its first and above its last offset up to fs/2, as MaskPhaseNoise synthesises it.
  double phase_noise_linewidth_hz = 0.0;
  std::shared_ptr<const PhaseNoiseMask> phase_noise_mask;
  double phase_noise_mask_offset_db = 0.0;  ///< -150 to 100
  /// The receiver's phase tracker (sync.hpp, second order, damping 0.7071), as in the
  /// waveform link: automatic = on with a frequency offset, rotation or phase noise.
  TrackerMode tracker = TrackerMode::automatic;
  double tracker_bandwidth = 0.01;  ///< B_L T; (0, 0.1]
  std::size_t pilot_period = 0;     ///< known symbol every P (the loop response is unchanged)

  /// Modulator (transmit) or demodulator IQ imbalance: Q/I gain ratio and quadrature error.
  double iq_gain_db = 0.0;    ///< -10 to 10
  double iq_phase_deg = 0.0;  ///< -45 to 45
  cf64 dc_offset{0.0, 0.0};   ///< carrier leak relative to the RMS signal amplitude; |.| <= 10

  AmplifierKind amplifier = AmplifierKind::none;  ///< Saleh's TWT fit or Rapp (sim.hpp defaults)
  double input_backoff_db = 6.0;                  ///< from input saturation; -20 to 40
  double rapp_smoothness = 2.0;                   ///< 0.1 to 100

  unsigned adc_bits = 0;         ///< 0 = ideal (no ADC); else 1 to 24
  /// ADC full scale per rail over the per-rail RMS of the received signal plus noise at the ADC
  /// input, dB; -20 to 40.
  double adc_loading_db = 12.0;
  /// Model the ADC input as Gaussian (OFDM-like signals) instead of the line-up's shaped
  /// single-carrier signal plus noise. Much more pessimistic for single-carrier QAM, whose
  /// per-rail peaks are far lower than a Gaussian's.
  bool adc_gaussian_input = false;

  double cfo_hz = 0.0;     ///< residual carrier frequency offset, Hz; |.| <= fs/2
  double phase_deg = 0.0;  ///< static carrier rotation (removed by the tracker or the fit)

  bool measurement_removes_frequency = true;  ///< the EVM measurement fits a frequency offset
  std::size_t measurement_symbols = 4096;     ///< symbols per measured block; 16 to 2^22

  /// Part names shown beside contributions, by contribution key (see EvmContribution::key).
  std::map<std::string, std::string> parts;
};

/// Throws ConfigError naming the field for a line-up outside the ranges above (or one the
/// waveform link cannot simulate).
void validate(const EvmLineup& lineup);

/// Es/N0 in dB used for the line-up: snr_db, the value from the noise figure, or +inf.
double lineup_es_n0_db(const EvmLineup& lineup);

/// The line-up of a waveform link's settings (the impairment command-line options) at an SNR
/// (Es/N0 of the received signal, dB; +inf for none). Throws ConfigError for settings an EVM
/// budget does not model (multipath: the budget has no equaliser).
EvmLineup lineup_from_link(const LinkConfig& link, std::string modulation, double es_n0_db);

/// One impairment's predicted share.
struct EvmContribution {
  std::string key;    ///< awgn, phase_noise, tracker_jitter, iq_imbalance, dc_offset, amplifier,
                      ///< adc_quantisation, adc_clipping, frequency_offset, pulse_isi
  std::string name;   ///< readable, with the setting ("thermal noise, Es/N0 25.0 dB")
  std::string part;   ///< part name from the line-up, or empty
  double evm_pct = 0.0;
  double evm_db = 0.0;  ///< 20 log10 (-inf for 0)
  double share = 0.0;   ///< fraction of the composite EVM^2
  std::string note;     ///< method or caveat, one line
};

struct EvmPrediction {
  std::vector<EvmContribution> contributions;
  double total_pct = 0.0;
  double total_db = 0.0;
  std::size_t dominant = 0;  ///< index into contributions (the largest share)
  double es_n0_db = 0.0;     ///< SNR used (inf without noise)
  // Signal levels in sim units, as used for the simulation mapping.
  cf64 linear_gain{1.0, 0.0};     ///< wanted-signal gain at the matched-filter output
  double received_power = 1.0;    ///< mean received symbol energy at the matched-filter output
  double sample_power = 1.0;      ///< mean per-sample power of the received signal at the ADC
  double noise_variance = 0.0;    ///< N0 per sample (= at the matched-filter output)
  bool tracking = false;          ///< the phase tracker runs
  double rms_phase_deg = 0.0;     ///< residual RMS phase error (phase noise + tracker jitter)
  double rms_jitter_s = 0.0;      ///< rms_phase / (2 pi f_c); 0 without carrier_frequency_hz
  std::vector<std::string> notes; ///< assumptions and warnings
};

/// Predicts every contribution and the composite. Throws ConfigError for an invalid line-up.
EvmPrediction predict_evm(const EvmLineup& lineup);

/// The waveform-link settings and operating point that simulate the line-up (the noise set so
/// that the received signal has the line-up's SNR, the ADC loading mapped to the link's
/// convention). `prediction` is predict_evm(lineup).
struct EvmSimulationSetup {
  LinkConfig link;
  PointSpec point;
};
EvmSimulationSetup evm_simulation_setup(const EvmLineup& lineup, const EvmPrediction& prediction);

struct EvmSimulation {
  double rms_pct = 0.0;
  double rms_db = 0.0;
  std::uint64_t frames = 0;
  std::uint64_t symbols = 0;
  std::vector<double> frame_rms_pct;  ///< per measured block
  EvmSimulationSetup setup;
};

/// Runs frames 0 .. frames-1 of the waveform link (capture_symbols) and measures the
/// data-aided EVM of each block of measurement_symbols symbols (one frame each), pooled as
/// sqrt(sum of error powers / sum of reference powers): the 3GPP way of averaging power before
/// the root. frames: 1 to 100000.
EvmSimulation simulate_evm(const EvmLineup& lineup, std::uint64_t seed = 1, std::uint64_t frames = 8);

/// What solve_evm_allowance searches for.
enum class EvmAllowanceKind {
  phase_noise,  ///< largest mask level (offset in dB) or, without a mask, largest Wiener linewidth
  iq_imbalance, ///< smallest image-rejection ratio (the line-up's gain/phase direction scaled)
  backoff,      ///< smallest amplifier input back-off
};

struct EvmAllowance {
  EvmAllowanceKind kind = EvmAllowanceKind::phase_noise;
  bool found = false;
  double value = 0.0;       ///< in `unit`
  std::string quantity;     ///< "phase-noise mask offset", "Wiener linewidth", ...
  std::string unit;         ///< "dB", "Hz"
  std::string detail;       ///< the solution in other terms (RMS phase, gain/phase, OBO, ...)
  double target_pct = 0.0;  ///< limit reduced by the margin
  EvmLineup lineup;         ///< the line-up at the solution
  EvmPrediction prediction; ///< predicted at the solution
  std::string reason;       ///< why none was found, or that the search range edge was hit
};

/// Bracketed root finding (bisection on the monotone predicted composite EVM) for the
/// allowance that just meets limit_pct with margin_db to spare. Throws ConfigError for a
/// backoff search without an amplifier or for a limit/margin out of range.
EvmAllowance solve_evm_allowance(const EvmLineup& lineup, EvmAllowanceKind kind, double limit_pct,
                                 double margin_db = 0.0);

/// A requirement written in a line-up file ([requirement] table).
struct EvmRequirement {
  std::string limit;  ///< "8%" or "-22dB"; empty when a table is named
  std::string table;  ///< evm_limits table name
  std::string rate;   ///< code rate for tables with rates
  double margin_db = 0.0;
  bool given() const noexcept { return !limit.empty() || !table.empty(); }
};

struct EvmLineupFile {
  EvmLineup lineup;
  EvmRequirement requirement;
  std::string source;  ///< file name as given
};

/// Reads a line-up from TOML (schema in docs/evm-lineup.md and lib/src/evm_lineup.cpp).
/// Throws InputError naming the file, the line and the key for syntax errors, unknown keys,
/// missing keys, wrong types and out-of-range values.
EvmLineupFile load_evm_lineup(const std::string& path);
/// The same from text; `source` names it in messages; relative mask files are read relative
/// to `base_dir`.
EvmLineupFile parse_evm_lineup(std::string_view toml_text, const std::string& source,
                               const std::string& base_dir = ".");

/// Everything one budget run produced, for the JSON and SVG writers.
struct EvmBudgetReport {
  EvmLineup lineup;
  EvmPrediction prediction;
  std::optional<EvmLimit> limit;
  std::optional<EvmVerdict> verdict;            ///< of the prediction
  std::optional<EvmSimulation> simulation;
  std::optional<EvmVerdict> simulated_verdict;  ///< of the simulation
  std::optional<EvmAllowance> allowance;
};

/// JSON of a report: lineup, contributions (key, name, part, evm_pct, evm_db, share, note),
/// total, dominant, limit, verdict, simulation, allowance, notes. Non-finite numbers are null.
std::string evm_budget_json(const EvmBudgetReport& report);

/// Horizontal bars of the contributions and the composite in %, with the limit (and the limit
/// less the required margin, when positive) as reference lines and the simulated composite
/// when there is one.
std::string evm_budget_svg(const EvmBudgetReport& report);

}  // namespace qamsight
