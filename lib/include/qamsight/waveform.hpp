// waveform: test recordings: framed, pulse-shaped, impaired waveforms with a known preamble and a PRBS payload.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/prbs.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/sigmf.hpp"
#include "qamsight/sim.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// Frame format of a qamsight test recording.
//
//   | preamble: 256 QPSK symbols | payload: payload_symbols symbols | preamble | payload | ...
//
// Preamble: the first 512 bits of PRBS-9 (x^9 + x^5 + 1, ITU-T O.150, all-ones seed, not
// inverted; prbs.hpp), taken two per symbol most significant bit first and mapped onto the
// library's Gray QPSK (unit energy). The same 256 symbols open every frame.
// Why this sequence: its symbols are constellation points of the energy of the payload (so the
// preamble also trains the equaliser and sets the gain with the payload's statistics); a
// binary-phase sequence keeps its correlation peak in place under a carrier offset (a
// Zadoff-Chu sequence, whose periodic autocorrelation is ideal, moves its peak by about
// (offset x length / root) symbols, a timing error that the receiver would have to undo); and
// its aperiodic autocorrelation is low: largest sidelobe 0.0672 of the peak (-23.5 dB), RMS
// sidelobe -30.2 dB (computed for this very sequence with NumPy, tests/cpp/test_capture_rx.cpp
// checks it). A longer preamble lowers both; 256 keeps the overhead at 6 % of a default frame.
//
// Payload: one continuous PRBS bit stream (polynomial and polarity per FrameFormat, all-ones
// seed at the first payload bit of frame 0), running on from frame to frame across the
// preambles, taken bits_per_symbol bits per symbol, most significant bit first, as Gray labels.
// The last frame stops where the requested number of symbols ends.
// ---------------------------------------------------------------------------------------------

inline constexpr std::size_t kPreambleSymbols = 256;

/// The 256 preamble symbols (computed once; safe to share).
std::span<const cf32> preamble_symbols();

struct FrameFormat {
  std::size_t payload_symbols = 3840;  ///< payload symbols per frame; 16 to 2^20
  PrbsPolynomial payload_prbs = PrbsPolynomial::prbs15;
  PrbsPolarity payload_polarity = PrbsPolarity::o150;
  std::size_t frame_symbols() const noexcept { return kPreambleSymbols + payload_symbols; }
};

// ---------------------------------------------------------------------------------------------
// The impairment chain.
// ---------------------------------------------------------------------------------------------

/// The transmitter and propagation impairments of ImpairmentConfig as one streaming block, in the
/// order that the sweep's waveform link applies them (sim.hpp, ImpairmentConfig; sim_waveform.cpp):
///   IQ imbalance, DC offset, amplifier (Saleh or Rapp), static multipath, carrier frequency
///   offset, static rotation, Wiener phase noise, mask phase noise.
/// Each block is the channel module's; this class only wires them. The waveform link of the
/// sweep builds the same blocks and resets them every frame; here they run on continuously over
/// a whole recording (phase walks and delay lines carry across calls). Receiver-side settings
/// (AWGN, ADC, tracker, pilots) are not part of it.
class ImpairmentChain {
 public:
  /// sample_rate_hz: of the samples processed; mean_power: mean |x|^2 per sample expected at the
  /// input (1 / samples_per_symbol for a unit-energy pulse-shaped signal). Throws ConfigError.
  ImpairmentChain(const ImpairmentConfig& impairments, double sample_rate_hz, double mean_power);
  ImpairmentChain(ImpairmentChain&&) noexcept;
  ImpairmentChain& operator=(ImpairmentChain&&) noexcept;
  ~ImpairmentChain();
  /// In place. Draws phase noise from `phase_noise_rng` (purpose Substream::phase_noise).
  void process(RandomStream& phase_noise_rng, std::span<cf32> samples) noexcept;
  void reset() noexcept;
  /// True if no block is configured (process() is the identity).
  bool empty() const noexcept;
 private:
  struct Blocks;
  std::unique_ptr<Blocks> blocks_;
};

// ---------------------------------------------------------------------------------------------
// The generator.
// ---------------------------------------------------------------------------------------------

/// A test recording's settings.
struct WaveformSpec {
  std::string modulation = "qpsk";  ///< a built-in constellation name (Constellation::from_name)
  double es_n0_db = 30.0;           ///< at the matched-filter output (AwgnChannel convention); -50 to 150
  std::size_t symbols = 16384;      ///< all symbols, preambles included; 272 to 2^26
  FrameFormat frame;
  /// RRC shaping; samples_per_symbol 2 to 64 (a recording is always pulse shaped). The default
  /// span of 24 symbols keeps the transmit-plus-matched-filter ISI at -64 dB (roll-off 0.25;
  /// span 12 would leave -38 dB, an EVM floor of 1.2 %).
  PulseShapingConfig pulse{4, 0.25, 24};
  /// symbol_rate_hz sets the sample rate (symbol rate x samples per symbol) and gives the Hz
  /// settings their meaning; tracker_* and pilot_period belong to a simulated receiver and
  /// must keep their defaults (ConfigError otherwise).
  ImpairmentConfig impairments;
  /// Samples before the first symbol (noise only there): a timing offset. The whole part
  /// delays the waveform by samples, the fractional part by a fractional-delay transmit
  /// filter (the RRC taps sampled at a shifted grid, an exact band-limited delay). 0 to 1e7.
  double lead_samples = 0.0;
  std::uint64_t seed = 1;  ///< noise and phase-noise streams
};

/// Throws ConfigError naming the field.
void validate(const WaveformSpec& spec);

/// Produces a recording block by block: the lead, then each frame (its samples are final when
/// returned), then the transmit filter's tail. Deterministic: the same spec and seed give the
/// same samples. Noise is added everywhere (also in the lead and the tail), then the ADC of the
/// impairments quantises, if set. One thread per instance.
class WaveformGenerator {
 public:
  explicit WaveformGenerator(const WaveformSpec& spec);
  ~WaveformGenerator();
  WaveformGenerator(const WaveformGenerator&) = delete;
  WaveformGenerator& operator=(const WaveformGenerator&) = delete;

  const WaveformSpec& spec() const noexcept { return spec_; }
  const Constellation& constellation() const noexcept { return constellation_; }
  double sample_rate_hz() const noexcept;
  std::size_t frames() const noexcept;
  /// Total samples: floor(lead) + (symbols + span) x sps.
  std::uint64_t total_samples() const noexcept;
  /// Sample position of the centre of symbol k (its matched-filter peak before multipath):
  /// lead_samples + (span / 2 + k) x sps.
  double symbol_sample(std::uint64_t symbol) const noexcept;
  /// Mean power per sample predicted at the ADC / recording: the signal through the linear part
  /// of the chain (IQ imbalance factor (1 + g^2)/2, DC leak, multipath with the shaped signal's
  /// autocorrelation, sum_k sum_l g_k g_l* p((d_k - d_l) / sps) with p the raised-cosine
  /// cascade; amplifier compression left out) plus the noise N0.
  double predicted_power() const noexcept;

  /// The next block of samples (a view into the generator's buffer, valid until the next call);
  /// empty when the recording is complete.
  std::span<const cf32> next_block();
  void reset();

  /// All transmitted symbols (preambles and payload), regenerated (for tests and reports).
  std::vector<cf32> transmitted_symbols() const;
  /// The qamsight:* keys describing the recording (a JSON object as text): modulation, sps,
  /// roll-off, span, symbol rate, Es/N0, frame format, preamble definition, PRBS, seed, lead,
  /// every impairment setting.
  std::string metadata_json() const;
  /// One annotation per frame: from half a symbol before its first symbol centre to half a
  /// symbol after its last one, labelled "frame K".
  std::vector<SigmfAnnotation> annotations() const;
  /// Components clipped by the ADC impairment (0 without one).
  std::uint64_t adc_clipped_rails() const noexcept;

 private:
  struct State;
  WaveformSpec spec_;
  Constellation constellation_;
  std::unique_ptr<State> state_;
};

/// How a recording is stored.
struct RecordingFileSpec {
  std::string datatype = "cf32_le";  ///< cf32_le, cf64_le or an integer type (ci16_le, ci8, ...)
  double center_frequency_hz = 0.0;  ///< core:frequency
  /// Integer types: the full scale is set so that the predicted per-rail RMS of the recording
  /// (signal plus noise) sits this many dB below it: 12 dB leaves a 4x peak-to-RMS margin per
  /// rail (a complex Gaussian rail exceeds it with probability 6e-5; pulse-shaped QAM peaks
  /// stay below about 3x). For ci16 the quantisation noise is then about 89 dB below the
  /// signal. 0 to 40.
  double integer_headroom_db = 12.0;
  std::string description;
  std::string author;
};

struct RecordingWriteReport {
  std::string meta_path, data_path;
  std::uint64_t samples = 0;
  std::uint64_t clipped_components = 0;  ///< by the integer conversion
  double full_scale = 1.0;
};

/// Generates the recording and writes NAME.sigmf-data + NAME.sigmf-meta (SigmfWriter).
RecordingWriteReport write_waveform_recording(const WaveformSpec& spec, const std::string& name,
                                              const RecordingFileSpec& file = {});

/// What a recording's qamsight:* metadata says about its waveform (see metadata_json()).
struct WaveformDescription {
  std::string modulation;
  double symbol_rate_hz = 0.0;
  int samples_per_symbol = 0;
  double roll_off = 0.0;
  int span_symbols = 0;
  double es_n0_db = 0.0;
  FrameFormat frame;
  std::size_t symbols = 0;
  double symbol0_sample = 0.0;  ///< qamsight:symbol0_sample
};
/// Reads the description from a recording's global object; empty if it has no
/// qamsight:modulation key. Throws InputError naming the file and key for malformed values.
std::optional<WaveformDescription> waveform_description(const Recording& recording);

}  // namespace qamsight
