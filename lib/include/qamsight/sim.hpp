// sim: links as frame runners, and the reproducible multi-threaded sweep engine.
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/llr.hpp"
#include "qamsight/measure.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/sync.hpp"

namespace qamsight {

/// Which SNR the user gave; the other one is derived with theory::es_n0_db_from_eb_n0_db.
enum class SnrKind { eb_n0, es_n0 };

/// When a point has seen enough. Checked only at batch boundaries (never on timing), so the
/// frames a point uses, and therefore its counts, do not depend on the number of threads.
struct StopRule {
  std::uint64_t min_bit_errors = 100;     ///< stop once this many bit errors are counted; >= 1
  std::uint64_t max_bits = 100'000'000;   ///< stop after this many information bits; >= 1
  double max_relative_width = 0.0;        ///< stop when (ber_high - ber_low) / ber <= this; 0 = off
  /// Also stop once this many frame (codeword) errors are counted; 0 = off. Either error rule
  /// stops the point, so for FER accuracy raise min_bit_errors as well.
  std::uint64_t min_frame_errors = 0;
};

/// What one frame produced. Integer counts plus double EVM sums; the engine merges frames in
/// frame order, so even the sums are bit-identical for any thread count.
struct FrameResult {
  ErrorCounts counts;
  EvmAccumulator evm;
};

/// Simulates frames of one link at one operating point. An instance belongs to one thread;
/// run() must depend only on the frame index (its randomness comes from streams keyed by the
/// frame), never on what ran before, so frames may run in any order on any thread.
class FrameRunner {
 public:
  virtual ~FrameRunner() = default;
  virtual void run(std::uint64_t frame, FrameResult& out) = 0;
  /// Appends the frame's transmitted and decision-point symbols (the ones run() counts), for
  /// EVM analysis. The built-in links implement it; the default throws ConfigError.
  virtual void capture(std::uint64_t frame, std::vector<cf32>& transmitted, std::vector<cf32>& received);
  /// Noise variance at the decision point of the last frame run or captured (N0 scaled by the
  /// receiver's gain control).
  virtual double decision_noise_variance() const { return 0.0; }
};

/// A link at one operating point: immutable, shared by threads, makes per-thread runners.
class Link {
 public:
  Link() noexcept;
  virtual ~Link() = default;
  /// Unique for every Link object ever made in the process, so executors can tell a new link
  /// from an old one at the same address.
  std::uint64_t instance_id() const noexcept { return instance_id_; }
  virtual std::unique_ptr<FrameRunner> make_runner() const = 0;
  /// Information bits per frame (what ErrorCounts::bits grows by).
  virtual std::uint64_t bits_per_frame() const = 0;

 private:
  std::uint64_t instance_id_;
};

/// What a user receiver stage gets for one frame. Spans stay valid for the call only.
struct StageInput {
  std::uint64_t frame = 0;                  ///< frame index (for frame-keyed randomness)
  std::span<const cf32> samples;            ///< channel output at the sample rate
  std::span<const cf32> symbols;            ///< the built-in receiver's symbol-rate output
  unsigned samples_per_symbol = 1;
  double noise_variance = 0.0;              ///< N0 per symbol at the matched-filter output
  const Constellation* constellation = nullptr;
};

/// What a user stage returns: a kind and a buffer of the right length that the stage fills.
enum class StageOutputKind {
  symbols,  ///< one complex symbol per transmitted symbol; the built-in slicer decides
  llrs,     ///< one LLR per bit, ln P(b=0)/P(b=1): positive means bit 0
  bits,     ///< one hard bit (0/1) per bit
};

struct StageOutput {
  std::span<cf32> symbols;         ///< sized frame_symbols when kind == symbols
  std::span<float> llrs;           ///< sized frame bits when kind == llrs
  std::span<std::uint8_t> bits;    ///< sized frame bits when kind == bits
};

/// A receiver stage written by the user (an equaliser, demapper or synchroniser) that
/// replaces the built-in decisions. Called once per frame, possibly from several threads at
/// once unless `serialise` is set (then calls take a lock; a Python stage sets it). Results stay
/// reproducible because the inputs depend only on the frame index. `process` may throw: the
/// rest of the batch still runs, then run_sweep throws the exception of the lowest failing
/// frame (the same one for any number of threads) and the sweep's results are discarded.
struct UserStage {
  StageOutputKind output = StageOutputKind::symbols;
  std::function<void(const StageInput&, StageOutput&)> process;
  bool serialise = false;
  std::string name = "user stage";
};

/// Pulse shaping of the waveform link: root-raised-cosine transmit filter and its matched
/// filter. samples_per_symbol = 1 selects the symbol-rate link (no filters) unless impairments
/// are set, in which case the impairments act on the symbols themselves.
struct PulseShapingConfig {
  int samples_per_symbol = 1;  ///< 1 to 64
  double roll_off = 0.25;      ///< 0 < beta <= 1
  int span_symbols = 12;       ///< even, 4 to 256, span * roll-off >= 1 (see PulseSpec)
};

enum class AmplifierKind { none, saleh, rapp };
enum class TrackerMode { automatic, off, on };

/// RF impairments of the waveform link. They act in this order:
///   transmitter: IQ imbalance and DC offset (the modulator), then the amplifier;
///   propagation: static multipath, carrier frequency offset and static rotation, phase noise;
///   receiver: AWGN, quantiser (ADC), matched filter, automatic gain control, phase tracker.
/// Hz values are meaningful through symbol_rate_hz (sample rate = symbol rate x sps).
struct ImpairmentConfig {
  double symbol_rate_hz = 1.0e6;  ///< > 0, at most 1e12
  double iq_gain_db = 0.0;        ///< Q/I amplitude ratio (modulator)
  double iq_phase_deg = 0.0;      ///< quadrature error (modulator)
  cf64 dc_offset{0.0, 0.0};       ///< carrier leakage, relative to the RMS signal amplitude
  AmplifierKind amplifier = AmplifierKind::none;
  double input_backoff_db = 6.0;  ///< amplifier input back-off from saturation
  double rapp_smoothness = 2.0;   ///< p of the Rapp model
  std::vector<MultipathTap> multipath;  ///< sample-spaced taps; empty = none
  double cfo_hz = 0.0;            ///< carrier frequency offset
  double phase_deg = 0.0;         ///< static carrier phase rotation
  double phase_noise_linewidth_hz = 0.0;  ///< Wiener phase noise (3-dB linewidth); 0 = none
  std::shared_ptr<const PhaseNoiseMask> phase_noise_mask;  ///< stationary phase noise; null = none
  unsigned adc_bits = 0;          ///< 0 = ideal receiver front end; else 1 to 24
  double adc_loading_db = 12.0;   ///< ADC full scale over the per-rail RMS of signal plus noise
  TrackerMode tracker = TrackerMode::automatic;  ///< automatic: on with CFO, rotation or phase noise
  double tracker_bandwidth = 0.01;  ///< phase tracker loop bandwidth B_L T (symbol rate)
  std::size_t pilot_period = 0;     ///< known pilot every P symbols for the tracker; 0 = decisions only
  /// Phase detector of the tracker: arg (the default; what the EVM budget models) or soft (the
  /// soft-decision-directed detector for low Es/N0, given the receiver's noise variance).
  PhaseDetector tracker_detector = PhaseDetector::arg;

  /// True if any impairment is set (then the waveform link is used).
  bool any() const noexcept;
  /// True if the receiver runs its phase tracker.
  bool tracking() const noexcept;
};

/// The chain a sweep simulates. Symbol-rate Gray-mapped AWGN unless options say otherwise.
struct LinkConfig {
  /// Symbols per frame; 16 to 2^22. The default sits on the measured plateau of the vectorised
  /// symbol-rate chain (bench_kernels BM_SymbolRateFrame, 64-QAM, one core of the 2-core build
  /// machine, CPU time: 1024: 175, 4096: 179, 16384: 182, 65536: 182 Msymbols/s, one run): frames
  /// stay in L1/L2 and the per-frame set-up is amortised. Under MPI with many ranks choose larger
  /// frames (e.g. 65536) so that a batch's gather costs little against a frame's work.
  std::size_t frame_symbols = 4096;
  /// Extra noise in dB on top of the configured Es/N0 (the receiver behaves as if the SNR were
  /// this much lower); models an implementation loss and lets tests inject a known degradation.
  double impl_loss_db = 0.0;
  PulseShapingConfig pulse;
  ImpairmentConfig impairments;
  /// Optional user receiver stage (empty `process` = built-in receiver).
  std::shared_ptr<const UserStage> stage;
  /// Forward error correction: a name of fec.hpp's code_names() (make_code), empty = uncoded.
  /// A coded frame is one codeword: k random information bits are encoded, the n coded bits
  /// (padded with random filler bits to whole symbols) are mapped, sent through the channel
  /// (symbol-rate AWGN or the waveform link), turned into LLRs with the decision-point noise
  /// variance and decoded; errors are counted on the information bits, a frame error is a
  /// codeword with any information-bit error. frame_symbols is then ceil(n / bits per symbol)
  /// and the configured value is ignored. Symbol errors count the raw (pre-decoding) slicer
  /// decisions. With a user receiver stage the stage's output feeds the decoder: its symbols
  /// through the built-in demapper, its LLRs directly, its hard bits as LLRs of +1 / -1
  /// (hard-decision decoding); its raw decisions give the symbol errors.
  std::string code;
  /// LLR method of the coded receiver; empty = exact log-MAP up to 16 points, max-log above.
  std::optional<LlrMethod> llr;

  /// True if the oversampled waveform link is used (sps > 1 or any impairment).
  bool waveform() const noexcept { return pulse.samples_per_symbol > 1 || impairments.any(); }
};

/// Throws ConfigError for an invalid link (each block's validation, plus their combination).
void validate(const LinkConfig& link);

/// One operating point of a sweep.
struct PointSpec {
  std::string modulation;
  double eb_n0_db = 0.0;
  double es_n0_db = 0.0;
  /// Random-stream key of the point: a hash of modulation and SNR, so a point's counts do not
  /// depend on which other points share the sweep.
  std::uint32_t stream_key = 0;
};

/// Information bits carried per symbol: bits per symbol times the code rate. For a coded link
/// that is k / frame symbols = bits_per_symbol * (k / (frame symbols * bits_per_symbol)), so
/// filler bits that pad the codeword to whole symbols count as overhead like the parity bits.
double information_bits_per_symbol(const LinkConfig& link, const Constellation& constellation);

/// SNR loss in dB that the finite RRC span costs at es_n0_db: 10 log10(1 + P_isi Es/N0), with
/// P_isi the ISI power of the transmit filter followed by its matched filter (pulse module).
/// Zero for the symbol-rate link.
double isi_loss_db(const LinkConfig& link, double es_n0_db);

/// Code rate that Eb/N0 <-> Es/N0 uses for `link` with `constellation`: 1 when uncoded, else
/// k / (frame symbols * bits per symbol) (the code's k / n, less any symbol padding).
double effective_code_rate(const LinkConfig& link, const Constellation& constellation);
/// The LLR method a coded link uses for a constellation (LinkConfig::llr, or its default).
LlrMethod coded_llr_method(const LinkConfig& link, const Constellation& constellation);

/// Builds the link for a point. Throws ConfigError for inconsistent settings.
std::unique_ptr<Link> make_link(const LinkConfig& link, const PointSpec& point, std::uint64_t seed);

/// The transmitted symbols and the receiver's decision-point symbols of some frames of a link
/// (after matched filtering, gain control and phase tracking), for EVM analysis.
struct SymbolCapture {
  std::vector<cf32> transmitted;
  std::vector<cf32> received;
  double noise_variance = 0.0;  ///< N0 at the decision point (nominal, from Es/N0)
};
/// Runs frames 0 .. frames-1 of the link at `point` (one thread) and keeps their symbols.
SymbolCapture capture_symbols(const LinkConfig& link, const PointSpec& point, std::uint64_t seed,
                              std::uint64_t frames);

/// Stream number of frame `frame` of the point with `stream_key` (the Philox counter's words 2-3).
constexpr std::uint64_t frame_stream(std::uint32_t stream_key, std::uint64_t frame) noexcept {
  return (std::uint64_t{stream_key} << 32) | (frame & 0xffffffffu);
}
/// Stable 32-bit key of a point (FNV-1a over the modulation name and the SNR's bit pattern).
std::uint32_t point_stream_key(const std::string& modulation, SnrKind kind, double snr_db) noexcept;

/// A sweep: modulations x SNR values.
struct SweepConfig {
  std::vector<std::string> modulations = {"qpsk"};
  std::vector<double> snr_db = {6.0};
  SnrKind snr_kind = SnrKind::eb_n0;
  StopRule stop;
  double confidence = 0.95;  ///< of the reported intervals; (0, 1)
  std::uint64_t seed = 1;
  unsigned threads = 0;      ///< 0 = all hardware threads
  LinkConfig link;
};

/// Progress of a point inside the sweep: counts so far after a batch.
struct PointState {
  FrameResult totals;
  std::uint64_t next_frame = 0;  ///< frames 0 .. next_frame-1 are counted
  bool done = false;
  std::string stop_reason;  ///< "min_errors", "min_frame_errors", "max_bits", "relative_width"
};

/// One row of a sweep's output.
struct PointResult {
  PointSpec spec;
  ErrorCounts counts;
  EvmAccumulator evm;
  double ber = 0, ber_low = 0, ber_high = 1;
  double ser = 0, ser_low = 0, ser_high = 1;
  double fer = 0, fer_low = 0, fer_high = 1;
  double ber_theory = 0, ser_theory = 0;  ///< AWGN reference; NaN where none exists
  /// SNR loss from the finite RRC span at this point, 10 log10(1 + P_isi Es/N0), with P_isi the
  /// matched-cascade ISI power; 0 for the symbol-rate link.
  double isi_loss_db = 0;
  /// The code of a coded sweep (LinkConfig::code; empty = uncoded) and its rate k / n. Coded
  /// points have no AWGN theory reference (ber_theory, ser_theory NaN); ser is the raw
  /// (pre-decoding) symbol error rate and fer the codeword error rate.
  std::string code;
  double code_rate = 1.0;
  std::string stop_reason;
  double seconds = 0;  ///< wall time, for information only (never affects counts)
};

/// Rates and intervals of a point from its counts.
PointResult make_point_result(const PointSpec& spec, const PointState& state, double confidence);

struct SweepResult {
  SweepConfig config;
  std::vector<PointResult> points;
  bool complete = true;  ///< false if cancelled before every point finished
};

struct SweepProgress {
  std::size_t point = 0, points = 0;
  const PointSpec* spec = nullptr;
  const PointState* state = nullptr;
  double point_seconds = 0.0;
  double point_eta_seconds = 0.0;  ///< estimate for the current point; NaN if unknown
};

/// Where frames of a batch run. The default uses a thread pool on this machine; another
/// executor (MPI) may spread the frames over processes. Results must come back in frame order.
class FrameExecutor {
 public:
  virtual ~FrameExecutor() = default;
  /// Runs frames first .. first+out.size()-1 of `link` (the link of point `point`).
  virtual void run(const Link& link, std::size_t point, std::uint64_t first,
                   std::span<FrameResult> out) = 0;
};

/// Thread-pool executor: frames of a batch are shared among the threads.
std::unique_ptr<FrameExecutor> make_thread_executor(unsigned threads);

/// Hooks for front ends: progress display, cancellation, checkpoints and resumption.
struct SweepHooks {
  std::function<void(const SweepProgress&)> progress;  ///< after each batch
  const std::atomic<bool>* cancel = nullptr;            ///< checked at batch boundaries
  /// After each batch, with the point's index and state (for checkpoint records).
  std::function<void(std::size_t, const PointSpec&, const PointState&)> on_batch;
  /// States to resume from, indexed by point (empty = start fresh).
  std::vector<PointState> resume;
  FrameExecutor* executor = nullptr;  ///< nullptr = thread pool with config.threads
};

/// The grid of points of a sweep, in output order (modulation-major). Validates the config.
std::vector<PointSpec> sweep_points(const SweepConfig& config);
/// Throws ConfigError for an invalid configuration (unknown modulation, bad counts, ...).
void validate(const SweepConfig& config);

/// Frames in batch number b (0, 1, ...): 4, 8, 16, 32, 64, 128, 256, 256, ... A fixed schedule,
/// so the stopping rule sees the same frame boundaries on any machine. At the default frame size
/// a 256-frame batch is about 6.3 Mbit of 64-QAM, 5.6 ms of one core's work on the build machine:
/// with 64-frame batches the hand-off between threads at each boundary cost about 5% on two
/// threads (scaling 1.73 to 1.83), with 256 it costs about 1%. Small points still stop early (the
/// batches double from 4), and a point overshoots its error target by at most one batch.
std::uint64_t batch_frames(std::uint64_t batch_index) noexcept;

/// Runs the sweep. Points run one after another; the frames of a batch run in parallel.
SweepResult run_sweep(const SweepConfig& config, const SweepHooks& hooks = {});

}  // namespace qamsight
