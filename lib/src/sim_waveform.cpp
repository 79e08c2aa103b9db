// sim: the waveform link: RRC pulse shaping, RF impairments, matched filter, AGC and tracker.
#include <algorithm>
#include <cmath>
#include <numbers>
#include <optional>

#include "qamsight/channel.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/sync.hpp"
#include "sim_links.hpp"

namespace qamsight {

bool ImpairmentConfig::any() const noexcept {
  return iq_gain_db != 0.0 || iq_phase_deg != 0.0 || dc_offset != cf64{} || amplifier != AmplifierKind::none ||
         !multipath.empty() || cfo_hz != 0.0 || phase_deg != 0.0 || phase_noise_linewidth_hz != 0.0 ||
         phase_noise_mask != nullptr || adc_bits != 0 || tracker == TrackerMode::on;
}

bool ImpairmentConfig::tracking() const noexcept {
  if (tracker == TrackerMode::on) return true;
  if (tracker == TrackerMode::off) return false;
  return cfo_hz != 0.0 || phase_deg != 0.0 || phase_noise_linewidth_hz != 0.0 || phase_noise_mask != nullptr;
}

namespace detail {
namespace {

// Known symbols at the start of each frame: they flush the filters and let the phase tracker
// acquire (pilot-aided start) before the counted symbols. About 4 loop time constants.
std::size_t warmup_symbols(const LinkConfig& link) {
  const std::size_t guard = link.pulse.samples_per_symbol > 1 ? static_cast<std::size_t>(link.pulse.span_symbols) : 0;
  if (!link.impairments.tracking()) return guard;
  return std::max(guard, static_cast<std::size_t>(std::ceil(4.0 / link.impairments.tracker_bandwidth)));
}

PulseSpec pulse_spec(const LinkConfig& link) {
  PulseSpec p;
  p.family = PulseFamily::root_raised_cosine;
  p.roll_off = link.pulse.roll_off;
  p.span_symbols = link.pulse.span_symbols;
  p.samples_per_symbol = link.pulse.samples_per_symbol;
  return p;
}

class WaveformLink final : public Link {
 public:
  WaveformLink(const LinkConfig& link, const PointSpec& point, std::uint64_t seed)
      : config_(link),
        constellation_(Constellation::from_name(point.modulation)),
        sps_(link.pulse.samples_per_symbol),
        code_(link_code(link)),
        llr_method_(coded_llr_method(link, constellation_)),
        n_(code_ ? coded_frame_symbols(*code_, constellation_) : link.frame_symbols),
        warmup_(warmup_symbols(link)),
        guard_(sps_ > 1 ? static_cast<std::size_t>(link.pulse.span_symbols) : 0),
        n0_(db_to_linear(-(point.es_n0_db - link.impl_loss_db))),
        seed_(seed),
        key_(point.stream_key) {
    validate(link);
    const auto& im = link.impairments;
    gain_changes_ = im.amplifier != AmplifierKind::none || im.iq_gain_db != 0.0 || im.iq_phase_deg != 0.0 ||
                    im.dc_offset != cf64{} || !im.multipath.empty();
    if (link.stage && link.stage->process) stage_ = link.stage;
  }

  std::uint64_t bits_per_frame() const override {
    return code_ ? code_->info_bits() : n_ * constellation_.bits_per_symbol();
  }
  std::unique_ptr<FrameRunner> make_runner() const override;

  const LinkConfig config_;
  const Constellation constellation_;
  const int sps_;
  const std::shared_ptr<const Code> code_;  // null = uncoded
  const LlrMethod llr_method_;
  const std::size_t n_, warmup_, guard_;
  const double n0_;  // per sample = per matched-filter output (unit-energy taps)
  const std::uint64_t seed_;
  const std::uint32_t key_;
  bool gain_changes_ = false;
  std::shared_ptr<const UserStage> stage_;
  mutable std::mutex stage_mutex_;
};

class WaveformRunner final : public FrameRunner {
 public:
  explicit WaveformRunner(const WaveformLink& link) : link_(link) {
    const auto& im = link.config_.impairments;
    const std::size_t total = link.warmup_ + link.n_ + link.guard_;
    const double fs = im.symbol_rate_hz * link.sps_;
    const double mean_power = 1.0 / link.sps_;  // per sample: unit symbol energy spread over sps
    if (link.sps_ > 1) {
      const PulseSpec spec = pulse_spec(link.config_);
      interpolator_.emplace(spec);
      decimator_.emplace(spec);
    }
    if (im.iq_gain_db != 0.0 || im.iq_phase_deg != 0.0) iq_.emplace(IqImbalanceConfig{im.iq_gain_db, im.iq_phase_deg});
    if (im.dc_offset != cf64{}) dc_.emplace(DcOffsetConfig{im.dc_offset, std::sqrt(mean_power)});
    if (im.amplifier == AmplifierKind::saleh) {
      SalehConfig s;
      s.input_backoff_db = im.input_backoff_db;
      s.mean_input_power = mean_power;
      saleh_.emplace(s);
    } else if (im.amplifier == AmplifierKind::rapp) {
      RappConfig r;
      r.smoothness = im.rapp_smoothness;
      r.input_backoff_db = im.input_backoff_db;
      r.mean_input_power = mean_power;
      rapp_.emplace(r);
    }
    if (!im.multipath.empty()) {
      MultipathConfig m;
      m.taps = im.multipath;
      multipath_.emplace(m);
    }
    if (im.cfo_hz != 0.0) cfo_.emplace(FrequencyOffsetConfig{im.cfo_hz, fs, 0.0});
    if (im.phase_deg != 0.0) rotation_.emplace(PhaseRotationConfig{im.phase_deg});
    if (im.phase_noise_linewidth_hz != 0.0) {
      wiener_.emplace(WienerPhaseNoiseConfig{im.phase_noise_linewidth_hz, fs, 0.0});
    }
    if (im.phase_noise_mask) {
      MaskPhaseNoiseConfig m;
      m.sample_rate_hz = fs;
      mask_.emplace(*im.phase_noise_mask, m);
    }
    awgn_.emplace(AwgnConfig{-linear_to_db(link.n0_), 1.0});
    if (im.adc_bits != 0) {
      QuantiserConfig q;
      q.bits = im.adc_bits;
      q.clip_mode = ClipMode::loading;
      q.loading_db = im.adc_loading_db;
      q.signal_power = mean_power + link.n0_;
      adc_.emplace(q);
    }
    if (im.tracking()) {
      PhaseTrackerConfig t;
      t.loop_bandwidth = im.tracker_bandwidth;
      t.pilot_period = im.pilot_period;
      t.preamble_symbols = link.warmup_;
      t.detector = im.tracker_detector;
      t.noise_variance = std::clamp(link.n0_, 1e-12, 1e9);  // updated per frame after the gain control
      tracker_.emplace(t, link.constellation_);
    }
    tx_labels_.resize(total);
    rx_labels_.resize(link.n_);
    tx_.resize(total);
    samples_.resize(total * static_cast<std::size_t>(link.sps_));
    mf_.resize(total);
    z_.resize(link.warmup_ + link.n_);
    if (link.stage_) stage_.emplace(*link.stage_, link.stage_mutex_, link.constellation_, link.n_);
    if (link.code_) coded_.emplace(link.code_, link.constellation_, link.llr_method_);
  }

  void run(std::uint64_t frame, FrameResult& out) override {
    simulate(frame);
    const auto& c = link_.constellation_;
    const std::span<const cf32> decided(z_.data() + link_.warmup_, link_.n_);
    const std::span<const std::uint32_t> sent(tx_labels_.data() + link_.warmup_, link_.n_);
    std::span<const cf32> evm_symbols = decided;
    if (stage_) {
      StageInput in;
      in.frame = frame;
      in.samples = samples_;
      in.symbols = decided;
      in.samples_per_symbol = static_cast<unsigned>(link_.sps_);
      in.noise_variance = noise_at_decision_;
      in.constellation = &c;
      stage_->call(in, rx_labels_);
      if (stage_->returns_symbols()) evm_symbols = stage_->decision_symbols();
    }
    if (coded_) {
      // LLRs with the decision point's noise variance (the receiver's AWGN model; impairments
      // beyond it make the LLRs mismatched, as in a real receiver).
      out = FrameResult{};
      if (stage_) {
        coded_->receive(*stage_, rx_labels_, sent, noise_at_decision_, out.counts);
      } else {
        coded_->receive(decided, sent, noise_at_decision_, out.counts);
      }
      out.evm.add(evm_symbols, std::span<const cf32>(tx_.data() + link_.warmup_, link_.n_));
      return;
    }
    if (!stage_) c.slice(decided, rx_labels_);
    out = FrameResult{};
    count_label_errors(sent, rx_labels_, c.bits_per_symbol(), out.counts);
    out.counts.frames = 1;
    out.counts.frame_errors = out.counts.bit_errors != 0;
    out.evm.add(evm_symbols, std::span<const cf32>(tx_.data() + link_.warmup_, link_.n_));
  }

  void capture(std::uint64_t frame, std::vector<cf32>& transmitted, std::vector<cf32>& received) override {
    simulate(frame);
    transmitted.insert(transmitted.end(), tx_.begin() + static_cast<std::ptrdiff_t>(link_.warmup_),
                       tx_.begin() + static_cast<std::ptrdiff_t>(link_.warmup_ + link_.n_));
    received.insert(received.end(), z_.begin() + static_cast<std::ptrdiff_t>(link_.warmup_), z_.end());
  }

  double decision_noise_variance() const override { return noise_at_decision_; }

 private:
  // Transmit, channel and receive front end for one frame: fills tx_, samples_ and z_.
  void simulate(std::uint64_t frame) {
    const auto& c = link_.constellation_;
    const std::uint64_t stream = frame_stream(link_.key_, frame);
    if (coded_) {
      // Warm-up and guard symbols from the filler stream, the codeword in between.
      RandomStream filler(link_.seed_, stream, kCodedFillerSubstream);
      filler.fill_packed_labels(tx_labels_, c.bits_per_symbol());
      coded_->transmit(link_.seed_, stream, std::span<std::uint32_t>(tx_labels_).subspan(link_.warmup_, link_.n_));
    } else {
      RandomStream payload(link_.seed_, stream, Substream::payload);
      payload.fill_packed_labels(tx_labels_, c.bits_per_symbol());
    }
    c.map_labels(tx_labels_, tx_);

    // Transmit filter (or symbols straight through at one sample per symbol).
    const std::span<cf32> x(samples_);
    if (interpolator_) {
      interpolator_->reset();
      interpolator_->process(tx_, x);
    } else {
      std::copy(tx_.begin(), tx_.end(), x.begin());
    }
    // Transmitter, propagation.
    if (iq_) iq_->process(x, x);
    if (dc_) dc_->process(x, x);
    if (saleh_) saleh_->process(x, x);
    if (rapp_) rapp_->process(x, x);
    if (multipath_) {
      multipath_->reset();
      multipath_->process(x, x);
    }
    if (cfo_) {
      cfo_->reset();
      cfo_->process(x, x);
    }
    if (rotation_) rotation_->process(x, x);
    if (wiener_ || mask_) {
      RandomStream pn(link_.seed_, stream, Substream::phase_noise);
      if (wiener_) {
        wiener_->reset();
        wiener_->process(pn, x, x);
      }
      if (mask_) {
        mask_->reset();
        mask_->process(pn, x, x);
      }
    }
    // Receiver: noise at the sample rate (N0 per sample gives Es/N0 after the unit-energy
    // matched filter), ADC, matched filter.
    RandomStream noise(link_.seed_, stream, Substream::awgn);
    awgn_->process(noise, x, x);
    if (adc_) adc_->process(x, x);
    const std::size_t keep = link_.warmup_ + link_.n_;
    if (decimator_) {
      decimator_->reset();
      decimator_->process(x, mf_);
      // Output m of the matched filter is symbol m - span (the cascade delay).
      std::copy(mf_.begin() + static_cast<std::ptrdiff_t>(link_.guard_),
                mf_.begin() + static_cast<std::ptrdiff_t>(link_.guard_ + keep), z_.begin());
    } else {
      std::copy(x.begin(), x.begin() + static_cast<std::ptrdiff_t>(keep), z_.begin());
    }
    // Automatic gain control (non-data-aided): scale the frame to unit mean symbol energy,
    // using the receiver's knowledge of its noise power. Only when a block changes the gain.
    double gain = 1.0;
    if (link_.gain_changes_) {
      double p = 0.0;
      for (const auto& v : z_) p += std::norm(cf64(v));
      p /= static_cast<double>(z_.size());
      gain = std::sqrt(std::max(p - link_.n0_, 1e-3 * p));
      const auto inv = static_cast<float>(1.0 / gain);
      for (auto& v : z_) v *= inv;
    }
    noise_at_decision_ = link_.n0_ / (gain * gain);
    if (tracker_) {
      tracker_->reset();
      if (link_.config_.impairments.tracker_detector == PhaseDetector::soft) {
        tracker_->set_noise_variance(std::clamp(noise_at_decision_, 1e-12, 1e9));
      }
      tracker_->process(z_, z_, std::span<const cf32>(tx_.data(), keep));
    }
  }

  const WaveformLink& link_;
  std::optional<PolyphaseInterpolator<cf32>> interpolator_;
  std::optional<MatchedDecimator<cf32>> decimator_;
  std::optional<IqImbalance> iq_;
  std::optional<DcOffset> dc_;
  std::optional<SalehAmplifier> saleh_;
  std::optional<RappAmplifier> rapp_;
  std::optional<MultipathChannel> multipath_;
  std::optional<FrequencyOffset> cfo_;
  std::optional<PhaseRotation> rotation_;
  std::optional<WienerPhaseNoise> wiener_;
  std::optional<MaskPhaseNoise> mask_;
  std::optional<Quantiser> adc_;
  std::optional<PhaseTracker> tracker_;
  std::optional<StageCaller> stage_;
  std::optional<CodedFrame> coded_;
  std::optional<AwgnChannel> awgn_;
  double noise_at_decision_ = 0.0;
  std::vector<std::uint32_t> tx_labels_, rx_labels_;
  std::vector<cf32> tx_, samples_, mf_, z_;
};

std::unique_ptr<FrameRunner> WaveformLink::make_runner() const { return std::make_unique<WaveformRunner>(*this); }

}  // namespace

std::unique_ptr<Link> make_waveform_link(const LinkConfig& link, const PointSpec& point, std::uint64_t seed) {
  return std::make_unique<WaveformLink>(link, point, seed);
}

}  // namespace detail

void validate(const LinkConfig& link) {
  if (link.frame_symbols < 16 || link.frame_symbols > (std::size_t{1} << 22)) {
    throw ConfigError("frame_symbols", std::to_string(link.frame_symbols), "16 to 4194304");
  }
  require_range("impl_loss_db", link.impl_loss_db, 0.0, 60.0);
  const auto& p = link.pulse;
  if (p.samples_per_symbol < 1 || p.samples_per_symbol > 64) {
    throw ConfigError("samples_per_symbol", std::to_string(p.samples_per_symbol), "1 to 64");
  }
  if (p.samples_per_symbol > 1) check_pulse_spec(detail::pulse_spec(link));
  if (!link.code.empty()) {
    (void)make_code(link.code);  // ConfigError "code" naming the allowed names
  }
  const auto& im = link.impairments;
  if (!link.waveform()) return;
  require_range_open_low("symbol_rate_hz", im.symbol_rate_hz, 0.0, 1e12);
  require_range_open_low("tracker_bandwidth", im.tracker_bandwidth, 0.0, 0.1);
  if (im.pilot_period > (std::size_t{1} << 20)) {
    throw ConfigError("pilot_period", std::to_string(im.pilot_period), "0 (none) to 1048576");
  }
  // Build each configured block once: their constructors validate and name the field.
  const double fs = im.symbol_rate_hz * p.samples_per_symbol;
  const double mean_power = 1.0 / p.samples_per_symbol;
  if (im.iq_gain_db != 0.0 || im.iq_phase_deg != 0.0) (void)IqImbalance(IqImbalanceConfig{im.iq_gain_db, im.iq_phase_deg});
  if (im.dc_offset != cf64{}) (void)DcOffset(DcOffsetConfig{im.dc_offset, std::sqrt(mean_power)});
  if (im.amplifier == AmplifierKind::saleh) {
    SalehConfig s;
    s.input_backoff_db = im.input_backoff_db;
    (void)SalehAmplifier(s);
  } else if (im.amplifier == AmplifierKind::rapp) {
    RappConfig r;
    r.smoothness = im.rapp_smoothness;
    r.input_backoff_db = im.input_backoff_db;
    (void)RappAmplifier(r);
  }
  if (!im.multipath.empty()) {
    MultipathConfig m;
    m.taps = im.multipath;
    (void)MultipathChannel(m);
  }
  if (im.cfo_hz != 0.0) (void)FrequencyOffset(FrequencyOffsetConfig{im.cfo_hz, fs, 0.0});
  if (im.phase_deg != 0.0) (void)PhaseRotation(PhaseRotationConfig{im.phase_deg});
  if (im.phase_noise_linewidth_hz != 0.0) (void)WienerPhaseNoise(WienerPhaseNoiseConfig{im.phase_noise_linewidth_hz, fs, 0.0});
  if (im.phase_noise_mask) {
    MaskPhaseNoiseConfig m;
    m.sample_rate_hz = fs;
    (void)MaskPhaseNoise(*im.phase_noise_mask, m);
  }
  if (im.adc_bits != 0) {
    QuantiserConfig q;
    q.bits = im.adc_bits;
    q.loading_db = im.adc_loading_db;
    (void)Quantiser(q);
  }
}

SymbolCapture capture_symbols(const LinkConfig& link, const PointSpec& point, std::uint64_t seed, std::uint64_t frames) {
  LinkConfig plain = link;
  plain.stage.reset();  // the built-in receiver's decision point
  const auto l = make_link(plain, point, seed);
  const auto r = l->make_runner();
  SymbolCapture out;
  for (std::uint64_t f = 0; f < frames; ++f) r->capture(f, out.transmitted, out.received);
  out.noise_variance = r->decision_noise_variance();
  return out;
}

}  // namespace qamsight
