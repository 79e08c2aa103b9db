// Command-line options of the waveform link (pulse shaping and impairments).
#include "link_options.hpp"

#include <memory>

#include "cli.hpp"
#include "qamsight/channel.hpp"

namespace qamsight::cli {

void add_link_options(CLI::App* s, LinkOptions& o) {
  const std::string g = "Waveform link (pulse shaping and impairments)";
  s->add_option("--sps", o.sps, "Samples per symbol: 1 = symbol-rate link, 2..64 = RRC pulse shaping")
      ->capture_default_str()->group(g);
  s->add_option("--rolloff", o.rolloff, "Roll-off of the root-raised-cosine filters (0 < beta <= 1)")
      ->capture_default_str()->group(g);
  s->add_option("--span", o.span, "Span of the RRC filters in symbols (even, 4..256, span x roll-off >= 1)")
      ->capture_default_str()->group(g);
  s->add_option("--symbol-rate", o.symbol_rate, "Symbol rate in Hz (gives the Hz options their meaning)")
      ->capture_default_str()->group(g);
  s->add_option("--phase-noise-linewidth", o.phase_noise_linewidth, "Wiener phase noise: 3-dB linewidth in Hz")
      ->group(g);
  s->add_option("--phase-noise-mask", o.phase_noise_mask,
                "Phase noise from a single-sideband mask: CSV of offset_hz,dbc_hz lines")->group(g);
  s->add_option("--cfo-hz", o.cfo_hz, "Carrier frequency offset in Hz")->group(g);
  s->add_option("--phase-deg", o.phase_deg, "Static carrier phase rotation in degrees")->group(g);
  s->add_option("--iq-gain-db", o.iq_gain_db, "Modulator IQ gain imbalance (Q/I) in dB")->group(g);
  s->add_option("--iq-phase-deg", o.iq_phase_deg, "Modulator IQ quadrature error in degrees")->group(g);
  s->add_option("--dc-offset", o.dc_offset, "Carrier leak RE,IM relative to the RMS signal amplitude")->group(g);
  s->add_option("--amp", o.amp, "Amplifier model: none, saleh (TWT), rapp (solid state)")
      ->capture_default_str()->group(g);
  s->add_option("--input-backoff-db", o.input_backoff_db, "Amplifier input back-off from saturation in dB")
      ->capture_default_str()->group(g);
  s->add_option("--rapp-smoothness", o.rapp_smoothness, "Smoothness p of the Rapp model")
      ->capture_default_str()->group(g);
  s->add_option("--adc-bits", o.adc_bits, "Receiver ADC resolution in bits, 1..24 (default: ideal, no ADC)")->group(g);
  s->add_option("--adc-loading-db", o.adc_loading_db, "ADC full scale over the per-rail RMS of signal plus noise")
      ->capture_default_str()->group(g);
  s->add_option("--multipath", o.multipath,
                "Static multipath taps DELAY:RE:IM,... (delay in samples), e.g. 0:1:0,3:0.2:-0.1")->group(g);
  s->add_option("--tracker", o.tracker, "Receiver phase tracker: auto (on with CFO, rotation or phase noise), on, off")
      ->capture_default_str()->group(g);
  s->add_option("--tracker-bandwidth", o.tracker_bandwidth, "Phase tracker loop bandwidth B_L T (symbol rate)")
      ->capture_default_str()->group(g);
  s->add_option("--pilot-period", o.pilot_period, "A known pilot symbol every P symbols for the tracker (0 = none)")
      ->capture_default_str()->group(g);
  s->add_option("--tracker-detector", o.tracker_detector,
                "Phase detector: arg (decision angle; the EVM regime) or soft (posterior-mean symbol, for low Es/N0)")
      ->capture_default_str()->group(g);
}

namespace {

std::vector<MultipathTap> parse_multipath(const std::string& text) {
  std::vector<MultipathTap> taps;
  for (const auto& item : split_list(text)) {
    std::vector<std::string> parts;
    std::size_t start = 0;
    while (true) {
      const auto colon = item.find(':', start);
      parts.push_back(item.substr(start, colon == std::string::npos ? std::string::npos : colon - start));
      if (colon == std::string::npos) break;
      start = colon + 1;
    }
    if (parts.size() != 3) {
      throw UsageError("--multipath = '" + text + "' is not allowed; allowed: DELAY:RE:IM taps separated by commas");
    }
    MultipathTap t;
    t.delay_samples = parse_count("--multipath", parts[0]);
    t.gain = cf64(parse_real("--multipath", parts[1]), parse_real("--multipath", parts[2]));
    taps.push_back(t);
  }
  if (taps.empty()) throw UsageError("--multipath = '" + text + "' is not allowed; allowed: at least one tap");
  return taps;
}

}  // namespace

std::optional<LlrMethod> parse_llr_option(const std::string& text) {
  if (text == "auto") return std::nullopt;
  if (text == "exact") return LlrMethod::exact;
  if (text == "max-log") return LlrMethod::max_log;
  throw UsageError("--llr = '" + text + "' is not allowed; allowed: auto, exact, max-log");
}

void apply_link_options(const LinkOptions& o, LinkConfig& link) {
  link.pulse.samples_per_symbol = o.sps;
  link.pulse.roll_off = o.rolloff;
  link.pulse.span_symbols = o.span;
  auto& im = link.impairments;
  im.symbol_rate_hz = parse_real("--symbol-rate", o.symbol_rate);
  im.phase_noise_linewidth_hz = o.phase_noise_linewidth;
  if (!o.phase_noise_mask.empty()) {
    try {
      im.phase_noise_mask = std::make_shared<const PhaseNoiseMask>(PhaseNoiseMask::from_csv(o.phase_noise_mask));
    } catch (const InputError& e) {
      throw InputError(std::string("--phase-noise-mask: ") + e.what());  // names the option and the file
    }
  }
  im.cfo_hz = o.cfo_hz;
  im.phase_deg = o.phase_deg;
  im.iq_gain_db = o.iq_gain_db;
  im.iq_phase_deg = o.iq_phase_deg;
  if (!o.dc_offset.empty()) {
    const auto v = parse_real_list("--dc-offset", o.dc_offset);
    if (v.size() != 2) throw UsageError("--dc-offset = '" + o.dc_offset + "' is not allowed; allowed: RE,IM");
    im.dc_offset = cf64(v[0], v[1]);
  }
  if (o.amp == "none") {
    im.amplifier = AmplifierKind::none;
  } else if (o.amp == "saleh") {
    im.amplifier = AmplifierKind::saleh;
  } else if (o.amp == "rapp") {
    im.amplifier = AmplifierKind::rapp;
  } else {
    throw UsageError("--amp = '" + o.amp + "' is not allowed; allowed: none, saleh, rapp");
  }
  im.input_backoff_db = o.input_backoff_db;
  im.rapp_smoothness = o.rapp_smoothness;
  if (!o.adc_bits.empty()) {
    const auto bits = parse_count("--adc-bits", o.adc_bits);
    if (bits < 1 || bits > 24) {
      throw UsageError("--adc-bits = " + o.adc_bits + " is not allowed; allowed: 1 to 24 (omit it for an ideal receiver)");
    }
    im.adc_bits = static_cast<unsigned>(bits);
  }
  im.adc_loading_db = o.adc_loading_db;
  if (!o.multipath.empty()) im.multipath = parse_multipath(o.multipath);
  if (o.tracker == "auto") {
    im.tracker = TrackerMode::automatic;
  } else if (o.tracker == "on") {
    im.tracker = TrackerMode::on;
  } else if (o.tracker == "off") {
    im.tracker = TrackerMode::off;
  } else {
    throw UsageError("--tracker = '" + o.tracker + "' is not allowed; allowed: auto, on, off");
  }
  im.tracker_bandwidth = o.tracker_bandwidth;
  im.pilot_period = parse_count("--pilot-period", o.pilot_period);
  if (o.tracker_detector == "arg") {
    im.tracker_detector = PhaseDetector::arg;
  } else if (o.tracker_detector == "soft") {
    im.tracker_detector = PhaseDetector::soft;
  } else {
    throw UsageError("--tracker-detector = '" + o.tracker_detector + "' is not allowed; allowed: arg, soft");
  }
}

}  // namespace qamsight::cli
