// sim: links as frame runners, and the reproducible multi-threaded sweep engine.
#pragma once

#include <atomic>
#include <cstdint>
#include <functional>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "qamsight/measure.hpp"
#include "qamsight/modem.hpp"

namespace qamsight {

/// Which SNR the user gave; the other one is derived with theory::es_n0_db_from_eb_n0_db.
enum class SnrKind { eb_n0, es_n0 };

/// When a point has seen enough. Checked only at batch boundaries (never on timing), so the
/// frames a point uses, and therefore its counts, do not depend on the number of threads.
struct StopRule {
  std::uint64_t min_bit_errors = 100;     ///< stop once this many bit errors are counted; >= 1
  std::uint64_t max_bits = 100'000'000;   ///< stop after this many information bits; >= 1
  double max_relative_width = 0.0;        ///< stop when (ber_high - ber_low) / ber <= this; 0 = off
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
};

/// A link at one operating point: immutable, shared by threads, makes per-thread runners.
class Link {
 public:
  virtual ~Link() = default;
  virtual std::unique_ptr<FrameRunner> make_runner() const = 0;
  /// Information bits per frame (what ErrorCounts::bits grows by).
  virtual std::uint64_t bits_per_frame() const = 0;
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
/// reproducible because the inputs depend only on the frame index.
struct UserStage {
  StageOutputKind output = StageOutputKind::symbols;
  std::function<void(const StageInput&, StageOutput&)> process;
  bool serialise = false;
  std::string name = "user stage";
};

/// The chain a sweep simulates. Symbol-rate Gray-mapped AWGN unless options say otherwise.
struct LinkConfig {
  std::size_t frame_symbols = 4096;  ///< symbols per frame; 16 to 2^22
  /// Extra noise in dB on top of the configured Es/N0 (the receiver behaves as if the SNR were
  /// this much lower); models an implementation loss and lets tests inject a known degradation.
  double impl_loss_db = 0.0;
  /// Optional user receiver stage (empty `process` = built-in receiver).
  std::shared_ptr<const UserStage> stage;
};

/// One operating point of a sweep.
struct PointSpec {
  std::string modulation;
  double eb_n0_db = 0.0;
  double es_n0_db = 0.0;
  /// Random-stream key of the point: a hash of modulation and SNR, so a point's counts do not
  /// depend on which other points share the sweep.
  std::uint32_t stream_key = 0;
};

/// Information bits carried per symbol: bits per symbol times the code rate.
double information_bits_per_symbol(const LinkConfig& link, const Constellation& constellation);

/// Builds the link for a point. Throws ConfigError for inconsistent settings.
std::unique_ptr<Link> make_link(const LinkConfig& link, const PointSpec& point, std::uint64_t seed);

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
  std::string stop_reason;       ///< "min_errors", "max_bits", "relative_width" once done
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

/// Frames in batch number b (0, 1, ...): 4, 8, 16, 32, 64, 64, ... A fixed schedule, so the
/// stopping rule sees the same frame boundaries on any machine.
std::uint64_t batch_frames(std::uint64_t batch_index) noexcept;

/// Runs the sweep. Points run one after another; the frames of a batch run in parallel.
SweepResult run_sweep(const SweepConfig& config, const SweepHooks& hooks = {});

}  // namespace qamsight
