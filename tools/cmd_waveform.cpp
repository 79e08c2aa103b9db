// `qamsight waveform`: writes a framed, pulse-shaped, impaired test recording (SigMF) with a PRBS payload.
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>

#include "cli.hpp"
#include "evm_text.hpp"
#include "link_options.hpp"
#include "qamsight/prbs.hpp"
#include "qamsight/sigmf.hpp"
#include "qamsight/waveform.hpp"

namespace qamsight::cli {

namespace {

struct WaveformOptions {
  std::string mod = "qpsk";
  std::string esn0 = "30";
  std::string symbols = "16384";
  std::string payload_symbols = "3840";
  std::string prbs = "15";
  std::string datatype = "cf32_le";
  std::string headroom_db = "12";
  std::string lead_samples = "0";
  std::string carrier_hz = "0";
  std::string seed = "1";
  std::string description;
  LinkOptions link;
  std::string out;
  bool quiet = false;
};

[[noreturn]] void rethrow_waveform(const ConfigError& e) {
  static const std::map<std::string, std::string> names = {
      {"symbols", "--symbols"},          {"payload_symbols", "--payload-symbols"},
      {"lead_samples", "--lead-samples"}, {"integer_headroom_db", "--headroom-db"},
      {"datatype", "--datatype"},        {"tracker", "--tracker"},
      {"prbs", "--prbs"},                {"center_frequency_hz", "--carrier-hz"},
      {"es_n0_db", "--esn0"},
  };
  const auto it = names.find(e.parameter());
  if (it == names.end()) rethrow_with_option_names(e);
  throw ConfigError(it->second, e.value(), e.allowed());
}

std::string bytes_text(std::uintmax_t n) {
  if (n >= 10u * 1024u * 1024u) return std::to_string(n) + " bytes (" + fmt_fixed(n / 1048576.0, 1) + " MiB)";
  if (n >= 10u * 1024u) return std::to_string(n) + " bytes (" + fmt_fixed(n / 1024.0, 1) + " KiB)";
  return std::to_string(n) + " bytes";
}

// The impairments that differ from "none", in words, for the summary.
std::vector<std::string> impairment_lines(const ImpairmentConfig& im) {
  std::vector<std::string> out;
  if (im.iq_gain_db != 0.0 || im.iq_phase_deg != 0.0) {
    out.push_back("IQ imbalance " + format_number(im.iq_gain_db) + " dB, " + format_number(im.iq_phase_deg) + " deg");
  }
  if (im.dc_offset != cf64(0.0, 0.0)) {
    out.push_back("DC offset " + format_number(im.dc_offset.real()) + "," + format_number(im.dc_offset.imag()));
  }
  if (im.amplifier != AmplifierKind::none) {
    out.push_back(std::string(im.amplifier == AmplifierKind::saleh ? "Saleh" : "Rapp") + " amplifier, input back-off " +
                  format_number(im.input_backoff_db) + " dB");
  }
  if (!im.multipath.empty()) out.push_back("multipath, " + std::to_string(im.multipath.size()) + " taps");
  if (im.cfo_hz != 0.0) out.push_back("carrier offset " + format_number(im.cfo_hz) + " Hz");
  if (im.phase_deg != 0.0) out.push_back("rotation " + format_number(im.phase_deg) + " deg");
  if (im.phase_noise_linewidth_hz > 0.0) {
    out.push_back("Wiener phase noise, linewidth " + format_number(im.phase_noise_linewidth_hz) + " Hz");
  }
  if (im.phase_noise_mask) out.push_back("phase noise from a mask");
  if (im.adc_bits != 0) {
    out.push_back(std::to_string(im.adc_bits) + "-bit ADC, loading " + format_number(im.adc_loading_db) + " dB");
  }
  return out;
}

int run(const WaveformOptions& o) {
  if (o.out.empty()) throw UsageError("--out is required: the recording's name (PATH gives PATH.sigmf-meta and .sigmf-data)");
  const std::string meta = sigmf_meta_path(o.out), data = sigmf_data_path(o.out);
  require_output_paths({{"--out", meta}, {"--out", data}});
  WaveformSpec spec;
  spec.modulation = o.mod;
  spec.es_n0_db = parse_real("--esn0", o.esn0);
  spec.symbols = parse_count("--symbols", o.symbols);
  spec.frame.payload_symbols = parse_count("--payload-symbols", o.payload_symbols);
  spec.lead_samples = parse_real("--lead-samples", o.lead_samples);
  spec.seed = parse_count("--seed", o.seed);
  RecordingFileSpec file;
  file.datatype = o.datatype;
  file.integer_headroom_db = parse_real("--headroom-db", o.headroom_db);
  file.center_frequency_hz = parse_real("--carrier-hz", o.carrier_hz);
  file.description = o.description.empty() ? "qamsight test recording" : o.description;
  RecordingWriteReport w;
  try {
    const auto degree = parse_count("--prbs", o.prbs);
    spec.frame.payload_prbs = prbs_from_degree(static_cast<unsigned>(std::min<std::uint64_t>(degree, 1000)));
    LinkConfig link;
    apply_link_options(o.link, link);
    spec.pulse = link.pulse;
    spec.impairments = link.impairments;
    if (!parse_iq_datatype(o.datatype)) throw ConfigError("datatype", o.datatype, iq_datatype_names());
    if (!(std::fabs(file.center_frequency_hz) <= 1e13)) {
      throw ConfigError("center_frequency_hz", o.carrier_hz, "-1e13 to 1e13 Hz");
    }
    validate(spec);
    w = write_waveform_recording(spec, o.out, file);
  } catch (const ConfigError& e) {
    rethrow_waveform(e);
  }

  if (!o.quiet) {
    namespace fs = std::filesystem;
    std::error_code ec;
    const auto data_bytes = fs::file_size(w.data_path, ec);
    const auto meta_bytes = fs::file_size(w.meta_path, ec);
    const auto& pd = prbs_definition(spec.frame.payload_prbs);
    const double fs_hz = spec.impairments.symbol_rate_hz * spec.pulse.samples_per_symbol;
    const std::size_t frame = spec.frame.frame_symbols();
    const std::size_t frames = (spec.symbols + frame - 1) / frame;
    KeyValueText t;
    t.add({"recording", w.meta_path + " + " + w.data_path});
    t.add({"waveform", spec.modulation + ", " + format_number(spec.impairments.symbol_rate_hz) + " Bd, RRC roll-off " +
                           format_number(spec.pulse.roll_off) + ", span " + std::to_string(spec.pulse.span_symbols)});
    t.add({"Es/N0", format_number(spec.es_n0_db) + " dB (matched-filter output)"});
    t.add({"samples", std::to_string(w.samples) + " at " + format_number(fs_hz) + " Hz (" +
                          std::to_string(spec.pulse.samples_per_symbol) + " per symbol)"});
    t.add({"symbols", std::to_string(spec.symbols) + " in " + std::to_string(frames) + " frames of " +
                          std::to_string(frame)});
    t.add({"preamble", std::to_string(kPreambleSymbols) + " QPSK symbols (PRBS-9) at the start of every frame"});
    t.add({"payload PRBS", std::string(pd.name) + " (" + std::string(pd.polynomial_text) + "), " +
                               std::to_string(spec.frame.payload_symbols) + " symbols per frame"});
    const auto im = impairment_lines(spec.impairments);
    std::string imp;
    for (const auto& s : im) imp += (imp.empty() ? "" : "; ") + s;
    t.add({"impairments", imp.empty() ? "none besides the noise" : imp});
    t.add({"datatype", o.datatype + (w.full_scale != 1.0 || o.datatype.rfind("cf", 0) != 0
                                         ? ", full scale " + format_number(w.full_scale)
                                         : std::string())});
    if (o.datatype.rfind("cf", 0) != 0) t.add({"clipped components", std::to_string(w.clipped_components)});
    t.add({"data file", bytes_text(data_bytes)});
    t.add({"metadata file", bytes_text(meta_bytes)});
    std::fputs(t.str().c_str(), stdout);
    std::fputs(
        "Caution: this file is a test vector for receivers and analysers. Radiating it (through a signal "
        "generator, SDR or transmitter) needs a licence or must follow local radio regulations.\n",
        stdout);
  }
  return kOk;
}

}  // namespace

void register_waveform(CLI::App& app) {
  auto opts = std::make_shared<WaveformOptions>();
  opts->link.sps = 4;   // a recording is always pulse shaped
  opts->link.span = 24; // transmit-plus-matched-filter ISI at -64 dB (waveform.hpp)
  CLI::App* s = app.add_subcommand(
      "waveform",
      "Write a test recording (SigMF): framed, RRC-shaped, impaired QAM/PSK with a known preamble and a PRBS payload; "
      "`qamsight evm measure` reads it back");
  auto& o = *opts;
  s->add_option("--mod", o.mod, "Modulation: bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam, ...")
      ->capture_default_str();
  s->add_option("--esn0", o.esn0, "Es/N0 in dB at the matched-filter output (-50 to 150)")->capture_default_str();
  s->add_option("--symbols", o.symbols, "Symbols in the recording, preambles included (272 to 2^26)")
      ->capture_default_str();
  s->add_option("--payload-symbols", o.payload_symbols, "Payload symbols per frame (16 to 2^20)")
      ->capture_default_str();
  s->add_option("--prbs", o.prbs, "Payload PRBS: 9, 15, 23 or 31 (ITU-T O.150 polynomials)")->capture_default_str();
  s->add_option("--datatype", o.datatype, "Sample format: " + iq_datatype_names())->capture_default_str();
  s->add_option("--headroom-db", o.headroom_db,
                "Integer datatypes: full scale over the predicted per-rail RMS, dB (0 to 40)")->capture_default_str();
  s->add_option("--lead-samples", o.lead_samples, "Noise-only samples before the first symbol (a timing offset; "
                                                  "fractions allowed)")->capture_default_str();
  s->add_option("--carrier-hz", o.carrier_hz, "Centre frequency recorded as core:frequency, Hz")->capture_default_str();
  s->add_option("--seed", o.seed, "Random seed (noise and phase noise)")->capture_default_str();
  s->add_option("--description", o.description, "core:description of the recording");
  add_link_options(s, o.link);
  s->add_option("--out", o.out, "Recording name: writes PATH.sigmf-meta and PATH.sigmf-data")->required();
  s->add_flag("--quiet", o.quiet, "Do not print the summary");
  s->callback([opts] { exit_status() = run(*opts); });
}

}  // namespace qamsight::cli
