// waveform: the test-recording generator (preamble + PRBS frames, RRC shaping, impairments, noise).
#include "qamsight/waveform.hpp"

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <optional>

namespace qamsight {

using nlohmann::ordered_json;

std::span<const cf32> preamble_symbols() {
  static const std::vector<cf32> symbols = [] {
    PrbsGenerator g(PrbsPolynomial::prbs9, PrbsPolarity::o150);
    std::vector<std::uint8_t> bits(2 * kPreambleSymbols);
    g.fill(bits);
    std::vector<cf32> s(kPreambleSymbols);
    Constellation::from_name("qpsk").map_bits(bits, s);
    return s;
  }();
  return symbols;
}

// ---------------------------------------------------------------------------------------------
// ImpairmentChain

struct ImpairmentChain::Blocks {
  std::optional<IqImbalance> iq;
  std::optional<DcOffset> dc;
  std::optional<SalehAmplifier> saleh;
  std::optional<RappAmplifier> rapp;
  std::optional<MultipathChannel> multipath;
  std::optional<FrequencyOffset> cfo;
  std::optional<PhaseRotation> rotation;
  std::optional<WienerPhaseNoise> wiener;
  std::optional<MaskPhaseNoise> mask;
};

ImpairmentChain::ImpairmentChain(const ImpairmentConfig& im, double fs, double mean_power)
    : blocks_(std::make_unique<Blocks>()) {
  require_range_open_low("sample_rate_hz", fs, 0.0, 1e12);
  require_range_open_low("mean_power", mean_power, 0.0, 1e12);
  auto& b = *blocks_;
  if (im.iq_gain_db != 0.0 || im.iq_phase_deg != 0.0) b.iq.emplace(IqImbalanceConfig{im.iq_gain_db, im.iq_phase_deg});
  if (im.dc_offset != cf64{}) b.dc.emplace(DcOffsetConfig{im.dc_offset, std::sqrt(mean_power)});
  if (im.amplifier == AmplifierKind::saleh) {
    SalehConfig s;
    s.input_backoff_db = im.input_backoff_db;
    s.mean_input_power = mean_power;
    b.saleh.emplace(s);
  } else if (im.amplifier == AmplifierKind::rapp) {
    RappConfig r;
    r.smoothness = im.rapp_smoothness;
    r.input_backoff_db = im.input_backoff_db;
    r.mean_input_power = mean_power;
    b.rapp.emplace(r);
  }
  if (!im.multipath.empty()) {
    MultipathConfig m;
    m.taps = im.multipath;
    b.multipath.emplace(m);
  }
  if (im.cfo_hz != 0.0) b.cfo.emplace(FrequencyOffsetConfig{im.cfo_hz, fs, 0.0});
  if (im.phase_deg != 0.0) b.rotation.emplace(PhaseRotationConfig{im.phase_deg});
  if (im.phase_noise_linewidth_hz != 0.0) b.wiener.emplace(WienerPhaseNoiseConfig{im.phase_noise_linewidth_hz, fs, 0.0});
  if (im.phase_noise_mask) {
    MaskPhaseNoiseConfig m;
    m.sample_rate_hz = fs;
    b.mask.emplace(*im.phase_noise_mask, m);
  }
}

ImpairmentChain::ImpairmentChain(ImpairmentChain&&) noexcept = default;
ImpairmentChain& ImpairmentChain::operator=(ImpairmentChain&&) noexcept = default;
ImpairmentChain::~ImpairmentChain() = default;

void ImpairmentChain::process(RandomStream& rng, std::span<cf32> x) noexcept {
  auto& b = *blocks_;
  if (b.iq) b.iq->process(x, x);
  if (b.dc) b.dc->process(x, x);
  if (b.saleh) b.saleh->process(x, x);
  if (b.rapp) b.rapp->process(x, x);
  if (b.multipath) b.multipath->process(x, x);
  if (b.cfo) b.cfo->process(x, x);
  if (b.rotation) b.rotation->process(x, x);
  if (b.wiener) b.wiener->process(rng, x, x);
  if (b.mask) b.mask->process(rng, x, x);
}

void ImpairmentChain::reset() noexcept {
  auto& b = *blocks_;
  if (b.saleh) b.saleh->reset();
  if (b.rapp) b.rapp->reset();
  if (b.multipath) b.multipath->reset();
  if (b.cfo) b.cfo->reset();
  if (b.wiener) b.wiener->reset();
  if (b.mask) b.mask->reset();
}

bool ImpairmentChain::empty() const noexcept {
  const auto& b = *blocks_;
  return !b.iq && !b.dc && !b.saleh && !b.rapp && !b.multipath && !b.cfo && !b.rotation && !b.wiener && !b.mask;
}

// ---------------------------------------------------------------------------------------------
// Generator

namespace {

// The RRC delayed by `delay` samples (0 <= delay < 1): tap n = g((n - c - delay) / sps), unit energy.
std::vector<double> delayed_rrc_taps(const PulseShapingConfig& p, double delay) {
  const int sps = p.samples_per_symbol;
  const std::size_t count = static_cast<std::size_t>(p.span_symbols) * static_cast<std::size_t>(sps) + 1;
  const double c = static_cast<double>(count - 1) / 2.0;
  std::vector<double> taps(count);
  double energy = 0.0;
  for (std::size_t n = 0; n < count; ++n) {
    taps[n] = root_raised_cosine_pulse((static_cast<double>(n) - c - delay) / sps, p.roll_off);
    energy += taps[n] * taps[n];
  }
  const double scale = 1.0 / std::sqrt(energy);
  for (double& t : taps) t *= scale;
  return taps;
}

std::string amplifier_name(AmplifierKind a) {
  switch (a) {
    case AmplifierKind::saleh:
      return "saleh";
    case AmplifierKind::rapp:
      return "rapp";
    case AmplifierKind::none:
      break;
  }
  return "none";
}

// Predicted mean signal power per sample after the linear impairments (see predicted_power()).
double shaped_signal_power(const WaveformSpec& s) {
  const auto& im = s.impairments;
  const double sps = s.pulse.samples_per_symbol;
  const double g = std::pow(10.0, im.iq_gain_db / 20.0);
  const double iq_factor = (1.0 + g * g) / 2.0;
  double shaped = 1.0, dc = 1.0;
  if (!im.multipath.empty()) {
    shaped = 0.0;
    cf64 sum(0.0, 0.0);
    for (const auto& a : im.multipath) {
      sum += a.gain;
      for (const auto& b : im.multipath) {
        const double lag = (static_cast<double>(a.delay_samples) - static_cast<double>(b.delay_samples)) / sps;
        shaped += (a.gain * std::conj(b.gain)).real() * raised_cosine_pulse(lag, s.pulse.roll_off);
      }
    }
    dc = std::norm(sum);
  }
  return (iq_factor * shaped + std::norm(im.dc_offset) * dc) / sps;
}

constexpr std::size_t kBlockSamples = 1 << 16;  // lead and tail are produced in blocks of this size

}  // namespace

void validate(const WaveformSpec& spec) {
  (void)Constellation::from_name(spec.modulation);
  require_range("es_n0_db", spec.es_n0_db, -50.0, 150.0);
  if (spec.symbols < kPreambleSymbols + 16 || spec.symbols > (std::size_t{1} << 26)) {
    throw ConfigError("symbols", std::to_string(spec.symbols), "272 to 67108864");
  }
  if (spec.frame.payload_symbols < 16 || spec.frame.payload_symbols > (std::size_t{1} << 20)) {
    throw ConfigError("payload_symbols", std::to_string(spec.frame.payload_symbols), "16 to 1048576");
  }
  if (spec.pulse.samples_per_symbol < 2 || spec.pulse.samples_per_symbol > 64) {
    throw ConfigError("samples_per_symbol", std::to_string(spec.pulse.samples_per_symbol),
                      "2 to 64 (a recording is pulse shaped)");
  }
  require_range("lead_samples", spec.lead_samples, 0.0, 1e7);
  const auto& im = spec.impairments;
  if (im.tracker != TrackerMode::automatic) {
    throw ConfigError("tracker", im.tracker == TrackerMode::on ? "on" : "off",
                      "auto (a receiver setting: the generator has no receiver)");
  }
  if (im.tracker_bandwidth != ImpairmentConfig{}.tracker_bandwidth) {
    throw ConfigError("tracker_bandwidth", format_number(im.tracker_bandwidth),
                      "the default (a receiver setting: the generator has no receiver)");
  }
  if (im.pilot_period != 0) {
    throw ConfigError("pilot_period", std::to_string(im.pilot_period), "0 (the frame format has no pilots)");
  }
  if (im.tracker_detector != PhaseDetector::arg) {
    throw ConfigError("tracker_detector", "soft", "arg, the default (a receiver setting: the generator has no receiver)");
  }
  LinkConfig link;
  link.pulse = spec.pulse;
  link.impairments = im;
  validate(link);  // every block's own checks, naming the field
}

struct WaveformGenerator::State {
  State(const WaveformSpec& s, const Constellation& c)
      : interpolator(delayed_rrc_taps(s.pulse, s.lead_samples - std::floor(s.lead_samples)), s.pulse.samples_per_symbol),
        chain(s.impairments, s.impairments.symbol_rate_hz * s.pulse.samples_per_symbol,
              1.0 / s.pulse.samples_per_symbol),
        awgn(AwgnConfig{s.es_n0_db, 1.0}),
        noise(s.seed, 0, Substream::awgn),
        phase_noise(s.seed, 0, Substream::phase_noise),
        payload(s.frame.payload_prbs, s.frame.payload_polarity) {
    const std::size_t f = s.frame.frame_symbols();
    const std::size_t sps = static_cast<std::size_t>(s.pulse.samples_per_symbol);
    symbols.resize(std::max(f, static_cast<std::size_t>(s.pulse.span_symbols)));
    bits.resize(s.frame.payload_symbols * c.bits_per_symbol());
    samples.resize(std::max(symbols.size() * sps, kBlockSamples));
    power = shaped_signal_power(s) + awgn.noise_variance();
    if (s.impairments.adc_bits != 0) {
      QuantiserConfig q;
      q.bits = s.impairments.adc_bits;
      q.clip_mode = ClipMode::loading;
      q.loading_db = s.impairments.adc_loading_db;
      q.signal_power = power;
      adc.emplace(q);
    }
    lead_left = static_cast<std::uint64_t>(std::floor(s.lead_samples));
  }

  PolyphaseInterpolator<cf32> interpolator;
  ImpairmentChain chain;
  AwgnChannel awgn;
  RandomStream noise, phase_noise;
  PrbsGenerator payload;
  std::optional<Quantiser> adc;
  double power = 0.0;
  std::uint64_t lead_left = 0;
  std::size_t next_symbol = 0;
  bool tail_done = false;
  std::vector<cf32> symbols, samples;
  std::vector<std::uint8_t> bits;
};

WaveformGenerator::WaveformGenerator(const WaveformSpec& spec)
    : spec_(spec), constellation_(Constellation::from_name(spec.modulation)) {
  validate(spec);
  state_ = std::make_unique<State>(spec_, constellation_);
}

WaveformGenerator::~WaveformGenerator() = default;

double WaveformGenerator::sample_rate_hz() const noexcept {
  return spec_.impairments.symbol_rate_hz * spec_.pulse.samples_per_symbol;
}

std::size_t WaveformGenerator::frames() const noexcept {
  const std::size_t f = spec_.frame.frame_symbols();
  return (spec_.symbols + f - 1) / f;
}

std::uint64_t WaveformGenerator::total_samples() const noexcept {
  return static_cast<std::uint64_t>(std::floor(spec_.lead_samples)) +
         static_cast<std::uint64_t>(spec_.symbols + static_cast<std::size_t>(spec_.pulse.span_symbols)) *
             static_cast<std::uint64_t>(spec_.pulse.samples_per_symbol);
}

double WaveformGenerator::symbol_sample(std::uint64_t symbol) const noexcept {
  return spec_.lead_samples +
         (spec_.pulse.span_symbols / 2.0 + static_cast<double>(symbol)) * spec_.pulse.samples_per_symbol;
}

double WaveformGenerator::predicted_power() const noexcept { return state_->power; }

std::uint64_t WaveformGenerator::adc_clipped_rails() const noexcept {
  return state_->adc ? state_->adc->clipped_rails() : 0;
}

void WaveformGenerator::reset() { state_ = std::make_unique<State>(spec_, constellation_); }

std::span<const cf32> WaveformGenerator::next_block() {
  State& s = *state_;
  const std::size_t sps = static_cast<std::size_t>(spec_.pulse.samples_per_symbol);
  std::span<cf32> out;
  if (s.lead_left > 0) {
    const std::size_t n = static_cast<std::size_t>(std::min<std::uint64_t>(s.lead_left, s.samples.size()));
    out = std::span<cf32>(s.samples.data(), n);
    std::fill(out.begin(), out.end(), cf32{});
    s.lead_left -= n;
  } else if (s.next_symbol < spec_.symbols) {
    const std::size_t f = spec_.frame.frame_symbols();
    const std::size_t count = std::min(f, spec_.symbols - s.next_symbol);
    const auto pre = preamble_symbols();
    const std::size_t np = std::min(count, kPreambleSymbols);
    std::copy(pre.begin(), pre.begin() + static_cast<std::ptrdiff_t>(np), s.symbols.begin());
    if (count > np) {
      const std::size_t payload = count - np;
      const std::span<std::uint8_t> bits(s.bits.data(), payload * constellation_.bits_per_symbol());
      s.payload.fill(bits);
      constellation_.map_bits(bits, std::span<cf32>(s.symbols.data() + np, payload));
    }
    out = std::span<cf32>(s.samples.data(), count * sps);
    s.interpolator.process(std::span<const cf32>(s.symbols.data(), count), out);
    s.next_symbol += count;
  } else if (!s.tail_done) {
    const std::size_t span = static_cast<std::size_t>(spec_.pulse.span_symbols);
    std::fill(s.symbols.begin(), s.symbols.begin() + static_cast<std::ptrdiff_t>(span), cf32{});
    out = std::span<cf32>(s.samples.data(), span * sps);
    s.interpolator.process(std::span<const cf32>(s.symbols.data(), span), out);
    s.tail_done = true;
  } else {
    return {};
  }
  s.chain.process(s.phase_noise, out);
  s.awgn.process(s.noise, out, out);
  if (s.adc) s.adc->process(out, out);
  return out;
}

std::vector<cf32> WaveformGenerator::transmitted_symbols() const {
  std::vector<cf32> all(spec_.symbols);
  PrbsGenerator payload(spec_.frame.payload_prbs, spec_.frame.payload_polarity);
  const std::size_t f = spec_.frame.frame_symbols();
  const auto pre = preamble_symbols();
  std::vector<std::uint8_t> bits;
  for (std::size_t start = 0; start < spec_.symbols; start += f) {
    const std::size_t count = std::min(f, spec_.symbols - start);
    const std::size_t np = std::min(count, kPreambleSymbols);
    std::copy(pre.begin(), pre.begin() + static_cast<std::ptrdiff_t>(np), all.begin() + static_cast<std::ptrdiff_t>(start));
    if (count > np) {
      bits.resize((count - np) * constellation_.bits_per_symbol());
      payload.fill(bits);
      constellation_.map_bits(bits, std::span<cf32>(all.data() + start + np, count - np));
    }
  }
  return all;
}

std::string WaveformGenerator::metadata_json() const {
  const auto& im = spec_.impairments;
  const auto& pd = prbs_definition(spec_.frame.payload_prbs);
  ordered_json j = ordered_json::object();
  j["qamsight:generator"] = std::string("qamsight waveform ") + std::string(version());
  j["qamsight:modulation"] = spec_.modulation;
  j["qamsight:bits_per_symbol"] = constellation_.bits_per_symbol();
  j["qamsight:mapping"] = "Gray labels, most significant bit first (qamsight Constellation)";
  j["qamsight:symbol_rate_hz"] = im.symbol_rate_hz;
  j["qamsight:samples_per_symbol"] = spec_.pulse.samples_per_symbol;
  j["qamsight:pulse"] = "root-raised-cosine";
  j["qamsight:roll_off"] = spec_.pulse.roll_off;
  j["qamsight:span_symbols"] = spec_.pulse.span_symbols;
  j["qamsight:es_n0_db"] = spec_.es_n0_db;
  j["qamsight:es_n0_convention"] =
      "Es/N0 at the output of a unit-energy matched filter: complex noise of variance N0 = 1/(Es/N0) per "
      "sample, unit symbol energy summed over the samples of a symbol";
  j["qamsight:seed"] = spec_.seed;
  j["qamsight:symbols"] = spec_.symbols;
  j["qamsight:frames"] = frames();
  j["qamsight:frame_symbols"] = spec_.frame.frame_symbols();
  j["qamsight:payload_symbols"] = spec_.frame.payload_symbols;
  j["qamsight:lead_samples"] = spec_.lead_samples;
  j["qamsight:symbol0_sample"] = symbol_sample(0);
  j["qamsight:preamble"] = ordered_json{
      {"symbols", kPreambleSymbols},
      {"modulation", "qpsk"},
      {"definition",
       "the first 512 bits of PRBS-9 (x^9 + x^5 + 1, ITU-T O.150, all-ones seed, not inverted), two bits per "
       "symbol most significant first, Gray QPSK with unit energy; at the start of every frame"}};
  j["qamsight:payload"] = ordered_json{
      {"prbs", std::string(pd.name)},
      {"polynomial", std::string(pd.polynomial_text)},
      {"inverted", prbs_inverted(spec_.frame.payload_prbs, spec_.frame.payload_polarity)},
      {"seed", "all ones, at the first payload bit of frame 0"},
      {"definition",
       "one continuous bit stream across frames (skipping the preambles), bits_per_symbol bits per symbol "
       "most significant first as Gray labels"}};
  ordered_json multipath = ordered_json::array();
  for (const auto& t : im.multipath) {
    multipath.push_back(ordered_json{{"delay_samples", t.delay_samples}, {"re", t.gain.real()}, {"im", t.gain.imag()}});
  }
  ordered_json mask = nullptr;
  if (im.phase_noise_mask) {
    mask = ordered_json::array();
    for (const auto& p : im.phase_noise_mask->points()) mask.push_back(ordered_json{{"offset_hz", p.offset_hz}, {"dbc_hz", p.dbc_hz}});
  }
  j["qamsight:impairments"] = ordered_json{
      {"order",
       "IQ imbalance, DC offset, amplifier, multipath, carrier frequency offset, rotation, Wiener phase noise, "
       "mask phase noise, AWGN, ADC"},
      {"iq_gain_db", im.iq_gain_db},
      {"iq_phase_deg", im.iq_phase_deg},
      {"dc_offset", ordered_json::array({im.dc_offset.real(), im.dc_offset.imag()})},
      {"amplifier", amplifier_name(im.amplifier)},
      {"input_backoff_db", im.input_backoff_db},
      {"rapp_smoothness", im.rapp_smoothness},
      {"multipath", multipath},
      {"cfo_hz", im.cfo_hz},
      {"phase_deg", im.phase_deg},
      {"phase_noise_linewidth_hz", im.phase_noise_linewidth_hz},
      {"phase_noise_mask", mask},
      {"adc_bits", im.adc_bits},
      {"adc_loading_db", im.adc_loading_db}};
  return j.dump();
}

std::vector<SigmfAnnotation> WaveformGenerator::annotations() const {
  std::vector<SigmfAnnotation> out;
  const std::size_t f = spec_.frame.frame_symbols();
  const double sps = spec_.pulse.samples_per_symbol;
  const std::uint64_t total = total_samples();
  for (std::size_t k = 0, start = 0; start < spec_.symbols; ++k, start += f) {
    const std::size_t count = std::min(f, spec_.symbols - start);
    const double first = symbol_sample(start) - sps / 2.0;
    SigmfAnnotation a;
    a.sample_start = static_cast<std::uint64_t>(std::max(0.0, std::floor(first)));
    a.sample_count = std::min<std::uint64_t>(static_cast<std::uint64_t>(std::ceil(count * sps)), total - a.sample_start);
    a.label = "frame " + std::to_string(k);
    a.comment = std::to_string(std::min(count, kPreambleSymbols)) + " preamble + " +
                std::to_string(count > kPreambleSymbols ? count - kPreambleSymbols : 0) + " payload symbols";
    out.push_back(std::move(a));
  }
  return out;
}

RecordingWriteReport write_waveform_recording(const WaveformSpec& spec, const std::string& name,
                                              const RecordingFileSpec& file) {
  require_range("integer_headroom_db", file.integer_headroom_db, 0.0, 40.0);
  const auto type = parse_iq_datatype(file.datatype);
  if (!type) throw ConfigError("datatype", file.datatype, iq_datatype_names());
  WaveformGenerator gen(spec);
  SigmfWriteSpec w;
  w.datatype = file.datatype;
  w.sample_rate_hz = gen.sample_rate_hz();
  w.center_frequency_hz = file.center_frequency_hz;
  w.description = file.description.empty()
                      ? "qamsight test waveform: " + spec.modulation + ", " + format_number(spec.es_n0_db) +
                            " dB Es/N0, preamble + PRBS frames"
                      : file.description;
  w.author = file.author;
  w.annotations = gen.annotations();
  if (type->number != IqNumber::floating) {
    w.full_scale = std::sqrt(gen.predicted_power() / 2.0) * std::pow(10.0, file.integer_headroom_db / 20.0);
  }
  SigmfWriter writer(name, w);
  for (auto block = gen.next_block(); !block.empty(); block = gen.next_block()) writer.append(block);
  ordered_json ext = ordered_json::parse(gen.metadata_json());
  if (type->number != IqNumber::floating) {
    ext["qamsight:integer_scaling"] = ordered_json{
        {"full_scale", w.full_scale},
        {"headroom_db", file.integer_headroom_db},
        {"definition",
         "the integer full scale 2^(bits-1) stands for qamsight:full_scale; full scale = predicted per-rail RMS "
         "of signal plus noise x 10^(headroom_db/20)"},
        {"clipped_components", writer.clipped_components()}};
  }
  if (spec.impairments.adc_bits != 0) ext["qamsight:adc_clipped_rails"] = gen.adc_clipped_rails();
  writer.finish(ext.dump());
  RecordingWriteReport r;
  r.meta_path = writer.meta_path();
  r.data_path = writer.data_path();
  r.samples = writer.samples_written();
  r.clipped_components = writer.clipped_components();
  r.full_scale = w.full_scale;
  return r;
}

// ---------------------------------------------------------------------------------------------
// Reading the description back.

namespace {

[[noreturn]] void bad_key(const Recording& r, const std::string& key, const std::string& problem) {
  throw InputError("SigMF metadata '" + r.source + "': key global." + key + " " + problem);
}

double number_key(const Recording& r, const ordered_json& g, const char* key, double lo, double hi) {
  const auto it = g.find(key);
  if (it == g.end()) bad_key(r, key, "is missing");
  if (!it->is_number()) bad_key(r, key, "= " + it->dump() + " is not a number");
  const double v = it->get<double>();
  if (!(v >= lo && v <= hi)) {
    bad_key(r, key, "= " + format_number(v) + " is not allowed; allowed: " + format_number(lo) + " to " + format_number(hi));
  }
  return v;
}

}  // namespace

std::optional<WaveformDescription> waveform_description(const Recording& r) {
  ordered_json g;
  try {
    g = ordered_json::parse(r.global_json);
  } catch (const ordered_json::parse_error&) {
    throw InputError("SigMF metadata '" + r.source + "': global object is not valid JSON");
  }
  const auto m = g.find("qamsight:modulation");
  if (m == g.end()) return std::nullopt;
  WaveformDescription d;
  if (!m->is_string()) bad_key(r, "qamsight:modulation", "is not a string");
  d.modulation = m->get<std::string>();
  try {
    (void)Constellation::from_name(d.modulation);
  } catch (const ConfigError& e) {
    bad_key(r, "qamsight:modulation", "= '" + d.modulation + "' is not allowed; allowed: " + e.allowed());
  }
  d.symbol_rate_hz = number_key(r, g, "qamsight:symbol_rate_hz", 1e-9, 1e12);
  if (!(d.symbol_rate_hz > 0)) bad_key(r, "qamsight:symbol_rate_hz", "must be > 0");
  d.samples_per_symbol = static_cast<int>(number_key(r, g, "qamsight:samples_per_symbol", 1, 64));
  d.roll_off = number_key(r, g, "qamsight:roll_off", 1e-6, 1.0);
  d.span_symbols = static_cast<int>(number_key(r, g, "qamsight:span_symbols", 4, 256));
  d.es_n0_db = number_key(r, g, "qamsight:es_n0_db", -50, 150);
  d.frame.payload_symbols = static_cast<std::size_t>(number_key(r, g, "qamsight:payload_symbols", 16, 1 << 20));
  d.symbols = static_cast<std::size_t>(number_key(r, g, "qamsight:symbols", 1, 1ull << 26));
  d.symbol0_sample = number_key(r, g, "qamsight:symbol0_sample", 0, 1e12);
  const auto p = g.find("qamsight:payload");
  if (p == g.end() || !p->is_object()) bad_key(r, "qamsight:payload", "is missing or not an object");
  const auto prbs = p->find("prbs");
  if (prbs == p->end() || !prbs->is_string()) bad_key(r, "qamsight:payload.prbs", "is missing or not a string");
  bool found = false;
  for (auto poly : {PrbsPolynomial::prbs9, PrbsPolynomial::prbs15, PrbsPolynomial::prbs23, PrbsPolynomial::prbs31}) {
    if (prbs_definition(poly).name == prbs->get<std::string>()) {
      d.frame.payload_prbs = poly;
      found = true;
    }
  }
  if (!found) bad_key(r, "qamsight:payload.prbs", "= " + prbs->dump() + " is not allowed; allowed: PRBS-9, PRBS-15, PRBS-23, PRBS-31");
  const auto inv = p->find("inverted");
  if (inv != p->end()) {
    if (!inv->is_boolean()) bad_key(r, "qamsight:payload.inverted", "is not true or false");
    d.frame.payload_polarity = inv->get<bool>() ? PrbsPolarity::inverted : PrbsPolarity::non_inverted;
  }
  return d;
}

}  // namespace qamsight
