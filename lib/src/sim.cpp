// sim: the symbol-rate AWGN link, the thread-pool executor and the sweep engine.
#include "qamsight/sim.hpp"

#include <algorithm>
#include <bit>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstring>
#include <exception>
#include <limits>
#include <mutex>
#include <optional>
#include <thread>

#include "qamsight/channel.hpp"
#include "qamsight/detail/kernels.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/theory.hpp"
#include "sim_links.hpp"

namespace qamsight {

// ---------------------------------------------------------------------------------------------
// Keys and grid.

std::uint32_t point_stream_key(const std::string& modulation, SnrKind kind, double snr_db) noexcept {
  std::uint32_t h = 2166136261u;
  auto mix = [&h](std::uint8_t byte) {
    h ^= byte;
    h *= 16777619u;
  };
  for (char c : modulation) mix(static_cast<std::uint8_t>(c));
  mix(kind == SnrKind::eb_n0 ? 'b' : 's');
  const double canonical = snr_db == 0.0 ? 0.0 : snr_db;  // -0 and +0 share a key
  const auto bits = std::bit_cast<std::uint64_t>(canonical);
  for (int i = 0; i < 8; ++i) mix(static_cast<std::uint8_t>(bits >> (8 * i)));
  return h;
}

double information_bits_per_symbol(const LinkConfig& link, const Constellation& constellation) {
  const double bits = static_cast<double>(constellation.bits_per_symbol());
  return link.code.empty() ? bits : bits * effective_code_rate(link, constellation);
}

void validate(const SweepConfig& c) {
  if (c.modulations.empty()) throw ConfigError("modulations", "(none)", "at least one modulation");
  for (const auto& m : c.modulations) (void)Constellation::from_name(m);
  if (c.snr_db.empty()) throw ConfigError(c.snr_kind == SnrKind::eb_n0 ? "eb_n0_db" : "es_n0_db", "(none)", "at least one value");
  for (double s : c.snr_db) require_range(c.snr_kind == SnrKind::eb_n0 ? "eb_n0_db" : "es_n0_db", s, -30.0, 100.0);
  if (c.stop.min_bit_errors < 1) throw ConfigError("min_errors", "0", "at least 1");
  if (c.stop.max_bits < 1) throw ConfigError("max_bits", "0", "at least 1");
  if (!(std::isfinite(c.stop.max_relative_width) && c.stop.max_relative_width >= 0.0 &&
        c.stop.max_relative_width <= 100.0)) {
    throw ConfigError("max_relative_width", format_number(c.stop.max_relative_width),
                      "0 (off) or a positive width up to 100");
  }
  if (!(c.confidence > 0.0 && c.confidence < 1.0)) {
    throw ConfigError("confidence", format_number(c.confidence), "strictly between 0 and 1");
  }
  if (c.threads > 4096) throw ConfigError("threads", std::to_string(c.threads), "0 (all cores) to 4096");
  validate(c.link);
}

std::vector<PointSpec> sweep_points(const SweepConfig& c) {
  validate(c);
  std::vector<PointSpec> out;
  for (const auto& m : c.modulations) {
    const auto constellation = Constellation::from_name(m);
    const double bps = static_cast<double>(constellation.bits_per_symbol());
    const double rate = effective_code_rate(c.link, constellation);  // 1 when uncoded
    for (double s : c.snr_db) {
      PointSpec p;
      p.modulation = constellation.name();
      if (c.snr_kind == SnrKind::eb_n0) {
        p.eb_n0_db = s;
        p.es_n0_db = theory::es_n0_db_from_eb_n0_db(s, bps, rate);
      } else {
        p.es_n0_db = s;
        p.eb_n0_db = theory::eb_n0_db_from_es_n0_db(s, bps, rate);
      }
      p.stream_key = point_stream_key(p.modulation, c.snr_kind, s);
      out.push_back(std::move(p));
    }
  }
  return out;
}

double isi_loss_db(const LinkConfig& link, double es_n0_db) {
  if (link.pulse.samples_per_symbol <= 1) return 0.0;
  PulseSpec p;
  p.roll_off = link.pulse.roll_off;
  p.span_symbols = link.pulse.span_symbols;
  p.samples_per_symbol = link.pulse.samples_per_symbol;
  return linear_to_db(1.0 + matched_cascade_isi_power(p) * db_to_linear(es_n0_db));
}

std::uint64_t batch_frames(std::uint64_t batch_index) noexcept {
  return batch_index >= 6 ? 256u : (4u << batch_index);
}

// ---------------------------------------------------------------------------------------------
// The symbol-rate link: labels -> Gray map -> AWGN -> slicer, counting bit and symbol errors.

namespace {

class SymbolRateLink final : public Link {
 public:
  SymbolRateLink(const LinkConfig& link, const PointSpec& point, std::uint64_t seed)
      : constellation_(Constellation::from_name(point.modulation)),
        awgn_(AwgnConfig{point.es_n0_db - link.impl_loss_db, 1.0}),
        code_(detail::link_code(link)),
        llr_method_(coded_llr_method(link, constellation_)),
        frame_symbols_(code_ ? detail::coded_frame_symbols(*code_, constellation_) : link.frame_symbols),
        seed_(seed),
        key_(point.stream_key),
        stage_(link.stage && link.stage->process ? link.stage : nullptr) {}

  std::uint64_t bits_per_frame() const override {
    return code_ ? code_->info_bits() : frame_symbols_ * constellation_.bits_per_symbol();
  }
  std::unique_ptr<FrameRunner> make_runner() const override;

  const Constellation constellation_;
  const AwgnChannel awgn_;
  const std::shared_ptr<const Code> code_;  // null = uncoded
  const LlrMethod llr_method_;
  const std::size_t frame_symbols_;
  const std::uint64_t seed_;
  const std::uint32_t key_;
  const std::shared_ptr<const UserStage> stage_;
  mutable std::mutex stage_mutex_;
};

class SymbolRateRunner final : public FrameRunner {
 public:
  explicit SymbolRateRunner(const SymbolRateLink& link)
      : link_(link),
        tx_labels_(link.frame_symbols_),
        rx_labels_(link.frame_symbols_),
        tx_(link.frame_symbols_),
        rx_(link.frame_symbols_) {
    if (link.stage_) stage_.emplace(*link.stage_, link.stage_mutex_, link.constellation_, link.frame_symbols_);
    if (link.code_) coded_.emplace(link.code_, link.constellation_, link.llr_method_);
  }

  void run(std::uint64_t frame, FrameResult& out) override {
    const auto& c = link_.constellation_;
    simulate(frame);
    const double n0 = link_.awgn_.noise_variance();
    std::span<const cf32> evm_symbols = rx_;
    if (stage_) {
      StageInput in;
      in.frame = frame;
      in.samples = rx_;
      in.symbols = rx_;
      in.samples_per_symbol = 1;
      in.noise_variance = n0;
      in.constellation = &c;
      stage_->call(in, rx_labels_);
      if (stage_->returns_symbols()) evm_symbols = stage_->decision_symbols();
    }
    if (coded_) {
      out = FrameResult{};
      if (stage_) {
        coded_->receive(*stage_, rx_labels_, tx_labels_, n0, out.counts);
      } else {
        coded_->receive(rx_, tx_labels_, n0, out.counts);
      }
      out.evm.add(evm_symbols, tx_);
      return;
    }
    if (!stage_) c.slice(rx_, rx_labels_);
    out = FrameResult{};
    detail::count_label_errors(tx_labels_, rx_labels_, c.bits_per_symbol(), out.counts);
    out.counts.frames = 1;
    out.counts.frame_errors = out.counts.bit_errors != 0;
    out.evm.add(evm_symbols, tx_);
  }

  void capture(std::uint64_t frame, std::vector<cf32>& transmitted, std::vector<cf32>& received) override {
    simulate(frame);
    transmitted.insert(transmitted.end(), tx_.begin(), tx_.end());
    received.insert(received.end(), rx_.begin(), rx_.end());
  }

  double decision_noise_variance() const override { return link_.awgn_.noise_variance(); }

 private:
  void simulate(std::uint64_t frame) {
    const auto& c = link_.constellation_;
    const std::uint64_t stream = frame_stream(link_.key_, frame);
    if (coded_) {
      coded_->transmit(link_.seed_, stream, tx_labels_);
    } else {
      RandomStream payload(link_.seed_, stream, Substream::payload);
      payload.fill_packed_labels(tx_labels_, c.bits_per_symbol());
    }
    c.map_labels(tx_labels_, tx_);
    RandomStream noise(link_.seed_, stream, Substream::awgn);
    link_.awgn_.process(noise, tx_, rx_);
  }

  const SymbolRateLink& link_;
  std::vector<std::uint32_t> tx_labels_, rx_labels_;
  std::vector<cf32> tx_, rx_;
  std::optional<detail::StageCaller> stage_;
  std::optional<detail::CodedFrame> coded_;
};

std::unique_ptr<FrameRunner> SymbolRateLink::make_runner() const {
  return std::make_unique<SymbolRateRunner>(*this);
}

}  // namespace

namespace {
std::atomic<std::uint64_t> g_next_link_id{1};
}  // namespace

Link::Link() noexcept : instance_id_(g_next_link_id.fetch_add(1)) {}

std::unique_ptr<Link> make_link(const LinkConfig& link, const PointSpec& point, std::uint64_t seed) {
  if (link.waveform()) return detail::make_waveform_link(link, point, seed);
  return std::make_unique<SymbolRateLink>(link, point, seed);
}

void FrameRunner::capture(std::uint64_t, std::vector<cf32>&, std::vector<cf32>&) {
  throw ConfigError("link", "a link without symbol capture", "the built-in links");
}

namespace detail {

StageCaller::StageCaller(const UserStage& stage, std::mutex& mutex, const Constellation& constellation,
                         std::size_t symbols)
    : stage_(stage), mutex_(mutex), constellation_(constellation) {
  const std::size_t bits = symbols * constellation.bits_per_symbol();
  switch (stage.output) {
    case StageOutputKind::symbols: symbols_.resize(symbols); break;
    case StageOutputKind::llrs: llrs_.resize(bits), bits_.resize(bits); break;
    case StageOutputKind::bits: bits_.resize(bits); break;
  }
}

void StageCaller::call(const StageInput& input, std::span<std::uint32_t> labels) {
  StageOutput out;
  out.symbols = symbols_;
  out.llrs = llrs_;
  out.bits = bits_;
  if (stage_.serialise) {
    std::lock_guard lock(mutex_);
    stage_.process(input, out);
  } else {
    stage_.process(input, out);
  }
  switch (stage_.output) {
    case StageOutputKind::symbols:
      constellation_.slice(symbols_, labels);
      break;
    case StageOutputKind::llrs:
      for (std::size_t i = 0; i < bits_.size(); ++i) bits_[i] = llrs_[i] < 0.0f ? 1 : 0;
      constellation_.bits_to_labels(bits_, labels);
      break;
    case StageOutputKind::bits:
      for (auto& b : bits_) b &= 1u;
      constellation_.bits_to_labels(bits_, labels);
      break;
  }
}

void count_label_errors(std::span<const std::uint32_t> tx, std::span<const std::uint32_t> rx, unsigned bits,
                        ErrorCounts& out) noexcept {
  QAMSIGHT_ASSERT(tx.size() == rx.size(), "label spans differ in length");
  std::uint64_t bit_errors = 0, symbol_errors = 0;  // popcount of tx ^ rx, vectorised (kernels.hpp)
  kernels().count_label_errors(tx.data(), rx.data(), tx.size(), &bit_errors, &symbol_errors);
  out.bits += tx.size() * bits;
  out.bit_errors += bit_errors;
  out.symbols += tx.size();
  out.symbol_errors += symbol_errors;
}

}  // namespace detail

// ---------------------------------------------------------------------------------------------
// Thread pool executor. The caller's thread takes part; workers pick frames from an atomic
// index, and each worker owns the runner it made for the current link.

namespace {

class ThreadExecutor final : public FrameExecutor {
 public:
  explicit ThreadExecutor(unsigned threads) : threads_(std::max(1u, threads)), runners_(threads_) {
    for (unsigned w = 1; w < threads_; ++w) workers_.emplace_back([this, w] { worker_loop(w); });
  }
  ~ThreadExecutor() override {
    {
      std::lock_guard lock(mutex_);
      quit_ = true;
      ++generation_;
    }
    wake_.notify_all();
    for (auto& t : workers_) t.join();
  }

  void run(const Link& link, std::size_t /*point*/, std::uint64_t first,
           std::span<FrameResult> out) override {
    if (link.instance_id() != current_link_id_) {
      // Runners are bound to their link (and copy its settings): make new ones.
      for (auto& r : runners_) r.reset();
      current_link_id_ = link.instance_id();
    }
    current_link_ = &link;
    {
      std::lock_guard lock(mutex_);
      job_first_ = first;
      job_out_ = out;
      next_.store(0, std::memory_order_relaxed);
      busy_ = threads_ - 1;
      ++generation_;
    }
    wake_.notify_all();
    work(0);
    std::exception_ptr error;
    {
      std::unique_lock lock(mutex_);
      done_.wait(lock, [this] { return busy_ == 0; });
      error = std::move(error_);
      error_ = nullptr;
      error_frame_ = kNoFrame;
    }
    if (error) {
      // The failing runner may be half-way through a frame: start the next batch afresh.
      for (auto& r : runners_) r.reset();
      current_link_id_ = 0;
      std::rethrow_exception(error);
    }
  }

 private:
  static constexpr std::size_t kNoFrame = std::numeric_limits<std::size_t>::max();

  // An exception from a frame (a user stage that throws, an allocation failure) is kept, the
  // remaining frames of the batch still run, and run() rethrows the exception of the lowest
  // frame, so what the caller sees does not depend on how the threads interleaved.
  void work(unsigned w) noexcept {
    for (;;) {
      const std::size_t i = next_.fetch_add(1, std::memory_order_relaxed);
      if (i >= job_out_.size()) break;
      try {
        if (!runners_[w]) runners_[w] = current_link_->make_runner();
        runners_[w]->run(job_first_ + i, job_out_[i]);
      } catch (...) {
        std::exception_ptr dropped = std::current_exception();
        std::lock_guard lock(mutex_);
        if (i < error_frame_) {
          std::swap(dropped, error_);
          error_frame_ = i;
        }
      }
    }
  }

  void worker_loop(unsigned w) {
    std::uint64_t seen = 0;
    for (;;) {
      {
        std::unique_lock lock(mutex_);
        wake_.wait(lock, [&] { return generation_ != seen; });
        seen = generation_;
        if (quit_) return;
      }
      work(w);
      {
        std::lock_guard lock(mutex_);
        --busy_;
      }
      done_.notify_one();
    }
  }

  const unsigned threads_;
  std::vector<std::unique_ptr<FrameRunner>> runners_;
  std::vector<std::thread> workers_;
  const Link* current_link_ = nullptr;
  std::uint64_t current_link_id_ = 0;
  std::mutex mutex_;
  std::condition_variable wake_, done_;
  std::uint64_t generation_ = 0;
  unsigned busy_ = 0;
  bool quit_ = false;
  std::uint64_t job_first_ = 0;
  std::span<FrameResult> job_out_;
  std::atomic<std::size_t> next_{0};
  std::exception_ptr error_;             // guarded by mutex_
  std::size_t error_frame_ = kNoFrame;   // guarded by mutex_
};

}  // namespace

std::unique_ptr<FrameExecutor> make_thread_executor(unsigned threads) {
  if (threads == 0) threads = std::max(1u, std::thread::hardware_concurrency());
  return std::make_unique<ThreadExecutor>(threads);
}

// ---------------------------------------------------------------------------------------------
// Sweep engine.

PointResult make_point_result(const PointSpec& spec, const PointState& state, double confidence) {
  PointResult r;
  r.spec = spec;
  r.counts = state.totals.counts;
  r.evm = state.totals.evm;
  r.stop_reason = state.stop_reason;
  const auto& c = r.counts;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  auto rate = [&](std::uint64_t k, std::uint64_t n, double& v, double& lo, double& hi) {
    if (n == 0) {
      v = lo = hi = nan;
      return;
    }
    v = static_cast<double>(k) / static_cast<double>(n);
    const Interval iv = clopper_pearson(k, n, confidence);
    lo = iv.low;
    hi = iv.high;
  };
  rate(c.bit_errors, c.bits, r.ber, r.ber_low, r.ber_high);
  rate(c.symbol_errors, c.symbols, r.ser, r.ser_low, r.ser_high);
  rate(c.frame_errors, c.frames, r.fer, r.fer_low, r.fer_high);
  if (theory::has_reference(spec.modulation)) {
    r.ber_theory = theory::ber_for(spec.modulation, spec.eb_n0_db);
    r.ser_theory = theory::ser_for(spec.modulation, spec.eb_n0_db);
  } else {
    r.ber_theory = r.ser_theory = nan;
  }
  return r;
}

namespace {

// Returns the reason to stop, or an empty string to go on.
std::string stop_reason(const StopRule& rule, const ErrorCounts& c, double confidence) {
  if (c.bit_errors >= rule.min_bit_errors) return "min_errors";
  if (rule.min_frame_errors > 0 && c.frame_errors >= rule.min_frame_errors) return "min_frame_errors";
  if (c.bits >= rule.max_bits) return "max_bits";
  if (rule.max_relative_width > 0.0 && c.bit_errors > 0) {
    const Interval iv = clopper_pearson(c.bit_errors, c.bits, confidence);
    const double ber = static_cast<double>(c.bit_errors) / static_cast<double>(c.bits);
    if ((iv.high - iv.low) / ber <= rule.max_relative_width) return "relative_width";
  }
  return {};
}

}  // namespace

SweepResult run_sweep(const SweepConfig& config, const SweepHooks& hooks) {
  const std::vector<PointSpec> points = sweep_points(config);
  if (!hooks.resume.empty() && hooks.resume.size() != points.size()) {
    throw ConfigError("resume", std::to_string(hooks.resume.size()) + " point states",
                      "one per point of the sweep (" + std::to_string(points.size()) + ")");
  }
  std::unique_ptr<FrameExecutor> own_executor;
  FrameExecutor* executor = hooks.executor;
  if (!executor) {
    own_executor = make_thread_executor(config.threads);
    executor = own_executor.get();
  }

  SweepResult result;
  result.config = config;
  std::vector<FrameResult> batch;
  const auto code = detail::link_code(config.link);
  const double code_rate = code ? code->rate() : 1.0;
  for (std::size_t p = 0; p < points.size(); ++p) {
    const PointSpec& spec = points[p];
    PointState state = hooks.resume.empty() ? PointState{} : hooks.resume[p];
    const auto start = std::chrono::steady_clock::now();
    const auto link = make_link(config.link, spec, config.seed);
    const std::uint64_t frame_bits = link->bits_per_frame();
    QAMSIGHT_ASSERT(frame_bits > 0, "link carries no bits");
    while (!state.done) {
      if (hooks.cancel && hooks.cancel->load()) break;
      // Batch index from the frames done so far, so a resumed point continues the schedule.
      std::uint64_t done_frames = state.next_frame, b = 0, edge = 0;
      while (edge + batch_frames(b) <= done_frames) edge += batch_frames(b++);
      std::uint64_t n = edge + batch_frames(b) - done_frames;
      const std::uint64_t bits_left =
          config.stop.max_bits > state.totals.counts.bits ? config.stop.max_bits - state.totals.counts.bits : 0;
      n = std::max<std::uint64_t>(1, std::min(n, (bits_left + frame_bits - 1) / frame_bits));
      batch.assign(n, FrameResult{});
      executor->run(*link, p, state.next_frame, batch);
      for (const auto& f : batch) {
        state.totals.counts += f.counts;
        state.totals.evm += f.evm;
      }
      state.next_frame += n;
      state.stop_reason = stop_reason(config.stop, state.totals.counts, config.confidence);
      state.done = !state.stop_reason.empty();
      if (hooks.on_batch) hooks.on_batch(p, spec, state);
      if (hooks.progress) {
        SweepProgress pr;
        pr.point = p;
        pr.points = points.size();
        pr.spec = &spec;
        pr.state = &state;
        pr.point_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
        const auto& c = state.totals.counts;
        double f = std::max(static_cast<double>(c.bit_errors) / static_cast<double>(config.stop.min_bit_errors),
                            static_cast<double>(c.bits) / static_cast<double>(config.stop.max_bits));
        if (config.stop.min_frame_errors > 0) {
          f = std::max(f, static_cast<double>(c.frame_errors) / static_cast<double>(config.stop.min_frame_errors));
        }
        pr.point_eta_seconds = f > 0 ? pr.point_seconds * (1.0 - std::min(f, 1.0)) / std::min(f, 1.0)
                                     : std::numeric_limits<double>::quiet_NaN();
        hooks.progress(pr);
      }
    }
    PointResult r = make_point_result(spec, state, config.confidence);
    r.isi_loss_db = isi_loss_db(config.link, spec.es_n0_db);
    if (!config.link.code.empty()) {
      // The AWGN references are those of the uncoded modulation: not a reference here.
      r.code = config.link.code;
      r.code_rate = code_rate;
      r.ber_theory = r.ser_theory = std::numeric_limits<double>::quiet_NaN();
    }
    r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    if (!state.done) {
      result.complete = false;
      if (state.next_frame == 0) break;  // nothing measured for this point
      r.stop_reason = "cancelled";
      result.points.push_back(std::move(r));
      break;
    }
    result.points.push_back(std::move(r));
  }
  return result;
}

}  // namespace qamsight
