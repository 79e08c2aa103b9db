// `qamsight evm measure`: EVM, MER and PRBS BER of a recording (SigMF or raw IQ), against a limit.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>

#include <nlohmann/json.hpp>

#include "cli.hpp"
#include "evm_text.hpp"
#include "qamsight/capture_rx.hpp"
#include "qamsight/evm.hpp"
#include "qamsight/evm_limits.hpp"
#include "qamsight/sigmf.hpp"
#include "qamsight/waveform.hpp"

namespace qamsight::cli {

namespace {

struct MeasureOptions {
  std::string recording;
  std::string raw, raw_datatype = "ci16_le", sample_rate, full_scale = "1", header_bytes = "0";
  std::string mod, symbol_rate, rolloff, span, payload_symbols, prbs;
  bool blind = false;
  std::string equaliser_taps = "0";
  std::string limit, limit_table, rate, margin_db = "0";
  std::string json, svg_constellation, svg_evm;
  bool quiet = false;
};

[[noreturn]] void rethrow_measure(const ConfigError& e) {
  static const std::map<std::string, std::string> names = {
      {"modulation", "--mod"},           {"symbol_rate_hz", "--symbol-rate"},
      {"roll_off", "--rolloff"},         {"span_symbols", "--span"},
      {"equaliser_taps", "--equaliser-taps"}, {"payload_symbols", "--payload-symbols"},
      {"sample_rate_hz", "--sample-rate"}, {"datatype", "--raw-datatype"},
      {"full_scale", "--full-scale"},    {"limit", "--limit"},
      {"limit table", "--limit-table"},  {"rate", "--rate"},
      {"required_margin_db", "--margin-db"},
  };
  const auto it = names.find(e.parameter());
  if (it == names.end()) rethrow_with_option_names(e);
  throw ConfigError(it->second, e.value(), e.allowed());
}

void add_measure_options(CLI::App* s, MeasureOptions& o) {
  s->add_option("recording", o.recording, "SigMF recording (NAME, NAME.sigmf-meta or NAME.sigmf-data)");
  const std::string raw = "Raw IQ input (no metadata)";
  s->add_option("--raw", o.raw, "Read a raw interleaved IQ file instead of a SigMF recording")->group(raw);
  s->add_option("--raw-datatype", o.raw_datatype, "Sample format of --raw: " + iq_datatype_names())
      ->capture_default_str()->group(raw);
  s->add_option("--sample-rate", o.sample_rate, "Sample rate of --raw in Hz")->group(raw);
  s->add_option("--full-scale", o.full_scale, "Amplitude of the integer full scale of --raw")
      ->capture_default_str()->group(raw);
  s->add_option("--header-bytes", o.header_bytes, "Bytes to skip at the start of --raw")
      ->capture_default_str()->group(raw);
  const std::string w = "Waveform (default: the recording's qamsight description)";
  s->add_option("--mod", o.mod, "Modulation of the payload: bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, ...")->group(w);
  s->add_option("--symbol-rate", o.symbol_rate, "Symbol rate in Hz")->group(w);
  s->add_option("--rolloff", o.rolloff, "Roll-off of the transmitter's RRC filter (default 0.25)")->group(w);
  s->add_option("--span", o.span, "Span of the receiver's matched filter in symbols (even; default: the "
                                  "transmitter's, else 12)")->group(w);
  s->add_option("--payload-symbols", o.payload_symbols,
                "Payload symbols per frame of the qamsight frame format (default: the recording's, else 3840)")
      ->group(w);
  s->add_option("--prbs", o.prbs, "Payload PRBS of the frame format: 9, 15, 23, 31 (default: the recording's, else 15)")
      ->group(w);
  const std::string rx = "Receiver";
  s->add_flag("--blind", o.blind,
              "Blind recovery (no preamble; Gardner timing, decision-directed references; EVM biased low at low SNR)")
      ->group(rx);
  s->add_option("--equaliser-taps", o.equaliser_taps, "Linear equaliser taps spaced T/2 (0 = none; odd, 3 to 63)")
      ->capture_default_str()->group(rx);
  const std::string g = "Requirement";
  s->add_option("--limit", o.limit, "RMS EVM limit: a percentage (8%) or dB (-22dB)")->group(g);
  s->add_option("--limit-table", o.limit_table, "Limit from a standard's table (docs/evm-limits.md)")->group(g);
  s->add_option("--rate", o.rate, "Code rate for tables that distinguish rates")->group(g);
  s->add_option("--margin-db", o.margin_db, "Required margin below the limit in dB (0 to 60)")
      ->capture_default_str()->group(g);
  const std::string out = "Output";
  s->add_option("--json", o.json, "Write the measurement as JSON to FILE")->group(out);
  s->add_option("--svg-constellation", o.svg_constellation,
                "Write the constellation with error vectors as SVG to FILE")->group(out);
  s->add_option("--svg-evm", o.svg_evm, "Write the EVM of each symbol against its index as SVG to FILE")->group(out);
  s->add_flag("--quiet", o.quiet, "Do not print the table")->group(out);
}

PrbsPolynomial prbs_of(const std::string& text) {
  if (text == "9") return PrbsPolynomial::prbs9;
  if (text == "15") return PrbsPolynomial::prbs15;
  if (text == "23") return PrbsPolynomial::prbs23;
  if (text == "31") return PrbsPolynomial::prbs31;
  throw UsageError("--prbs = '" + text + "' is not allowed; allowed: 9, 15, 23, 31");
}

using nlohmann::ordered_json;
ordered_json num(double v) { return std::isfinite(v) ? ordered_json(v) : ordered_json(nullptr); }

std::string hz_text(double hz) {
  if (!std::isfinite(hz)) return "-";
  return fmt_fixed(hz, std::fabs(hz) >= 100.0 ? 1 : 3) + " Hz";
}

struct Outcome {
  CaptureMeasurement capture;
  std::optional<EvmMeasurement> evm;
  std::string reference_mode;
  std::size_t references_known = 0;
  std::optional<EvmLimit> limit;
  std::optional<EvmVerdict> verdict;
  std::vector<std::string> notes;
  std::string source;
  double sample_rate_hz = 0.0;
  std::uint64_t samples = 0;
  std::string modulation;
  double symbol_rate_hz = 0.0, roll_off = 0.0;
  bool described = false;
  double described_symbol0 = std::nan("");
  double described_es_n0_db = std::nan("");
};

std::string measure_table(const Outcome& r) {
  const CaptureMeasurement& c = r.capture;
  KeyValueText t;
  t.add({"recording", r.source});
  t.add({"samples", std::to_string(r.samples) + " at " + format_number(r.sample_rate_hz) + " Hz"});
  t.add({"waveform", r.modulation + ", " + format_number(r.symbol_rate_hz) + " Bd, roll-off " +
                         format_number(r.roll_off) + (r.described ? " (from the recording)" : " (from the options)")});
  t.add({"mode", c.blind ? "blind" : "data-aided (preamble search)"});
  t.add({"status", std::string(capture_status_name(c.status)) + ": " + c.message});
  if (!c.blind) t.add({"frames", std::to_string(c.frames.size())});
  t.add({"carrier offset", hz_text(c.cfo_hz) +
                               (std::isfinite(c.cfo_hz) && r.symbol_rate_hz > 0
                                    ? " (" + fmt_sci(c.cfo_hz / r.symbol_rate_hz, 3) + " x symbol rate)"
                                    : std::string())});
  t.add({"carrier offset, coarse", hz_text(c.cfo_coarse_hz)});
  std::string timing = std::isfinite(c.timing_sample) ? fmt_fixed(c.timing_sample, 3) + " samples" : "-";
  if (std::isfinite(c.timing_sample) && std::isfinite(r.described_symbol0) && !c.blind) {
    timing += " (recording says " + fmt_fixed(r.described_symbol0, 3) + ")";
  }
  t.add({"first symbol at", timing});
  if (c.blind) t.add({"symbol clock", std::isfinite(c.symbol_clock_ppm) ? fmt_fixed(c.symbol_clock_ppm, 2) + " ppm" : "-"});
  t.add({"SNR estimate (Es/N0)", std::isfinite(c.snr_estimate_db) ? fmt_fixed(c.snr_estimate_db, 2) + " dB" : "-"});
  if (r.evm) {
    const EvmMeasurement& e = *r.evm;
    t.add({"symbols measured", std::to_string(e.symbols)});
    t.add({"references", r.reference_mode});
    t.add({"EVM rms", fmt_fixed(e.rms_pct, 3) + " % (" + fmt_fixed(e.rms_db, 2) + " dB)"});
    t.add({"EVM peak", fmt_fixed(e.peak_pct, 2) + " % (" + fmt_fixed(e.peak_db, 2) + " dB) at symbol " +
                           std::to_string(e.peak_index)});
    t.add({"MER", fmt_fixed(e.mer_db, 2) + " dB"});
  }
  if (c.prbs_checked) {
    const auto& p = c.prbs;
    t.add({"PRBS BER", p.bits ? fmt_sci(p.ber(), 3) + " (" + std::to_string(p.errors) + " errors in " +
                                    std::to_string(p.bits) + " bits" + (c.prbs_locked ? ")" : ", lost lock at the end)")
                              : std::string("- (never locked)")});
  }
  if (r.limit) {
    t.add({"limit", fmt_fixed(r.limit->pct, 2) + " % (" + fmt_fixed(r.limit->db, 2) + " dB), " + r.limit->source});
    if (r.verdict) {
      t.add({"margin", fmt_fixed(r.verdict->margin_db, 2) + " dB (required " +
                           fmt_fixed(r.verdict->required_margin_db, 2) + " dB)"});
      t.add({"verdict", verdict_word(r.verdict->pass)});
    } else {
      t.add({"verdict", "FAIL (nothing measured)"});
    }
  }
  std::string out = t.str();
  if (!r.notes.empty()) {
    out += "Notes:\n";
    for (const auto& n : r.notes) out += "  " + n + "\n";
  }
  return out;
}

std::string measure_json(const Outcome& r) {
  const CaptureMeasurement& c = r.capture;
  ordered_json j;
  j["recording"] = r.source;
  j["sample_rate_hz"] = r.sample_rate_hz;
  j["samples"] = r.samples;
  j["modulation"] = r.modulation;
  j["symbol_rate_hz"] = r.symbol_rate_hz;
  j["roll_off"] = r.roll_off;
  j["described"] = r.described;
  j["blind"] = c.blind;
  j["status"] = std::string(capture_status_name(c.status));
  j["message"] = c.message;
  j["frames"] = c.frames.size();
  j["detection_threshold"] = num(c.detection_threshold);
  j["best_metric"] = num(c.best_metric);
  j["cfo_hz"] = num(c.cfo_hz);
  j["cfo_coarse_hz"] = num(c.cfo_coarse_hz);
  j["timing_sample"] = num(c.timing_sample);
  j["symbol_clock_ppm"] = num(c.symbol_clock_ppm);
  j["snr_estimate_db"] = num(c.snr_estimate_db);
  const double nan = std::nan("");
  const EvmMeasurement* e = r.evm ? &*r.evm : nullptr;
  j["symbols"] = e ? e->symbols : 0;
  j["reference_mode"] = r.reference_mode;
  j["references_known"] = r.references_known;
  j["evm_rms_pct"] = num(e ? e->rms_pct : nan);
  j["evm_rms_db"] = num(e ? e->rms_db : nan);
  j["evm_peak_pct"] = num(e ? e->peak_pct : nan);
  j["evm_peak_db"] = num(e ? e->peak_db : nan);
  j["evm_peak_index"] = e ? ordered_json(e->peak_index) : ordered_json(nullptr);
  j["mer_db"] = num(e ? e->mer_db : nan);
  j["prbs_checked"] = c.prbs_checked;
  if (c.prbs_checked) {
    j["prbs"] = ordered_json{{"locked", c.prbs_locked},      {"bits", c.prbs.bits},
                             {"errors", c.prbs.errors},      {"ber", num(c.prbs.ber())},
                             {"sync_losses", c.prbs.sync_losses}};
  }
  if (r.limit) {
    ordered_json l{{"source", r.limit->source}, {"pct", num(r.limit->pct)}, {"db", num(r.limit->db)}};
    if (r.limit->row) l["provenance"] = provenance_name(r.limit->row->provenance);
    j["limit"] = l;
  } else {
    j["limit"] = nullptr;
  }
  j["margin_db"] = r.verdict ? num(r.verdict->margin_db) : ordered_json(nullptr);
  j["margin"] = j["margin_db"];  // the same, under the short name (dB: limit_db - evm_rms_db)
  j["required_margin_db"] = r.verdict ? num(r.verdict->required_margin_db) : ordered_json(nullptr);
  // pass: null without a limit; false when nothing was measured.
  if (r.verdict) {
    j["pass"] = r.verdict->pass;
  } else {
    j["pass"] = r.limit ? ordered_json(false) : ordered_json(nullptr);
  }
  ordered_json fr = ordered_json::array();
  for (const auto& f : c.frames) {
    fr.push_back(ordered_json{{"symbol0_sample", num(f.symbol0_sample)}, {"metric", num(f.metric)},
                              {"symbols", f.symbols},                    {"cfo_hz", num(f.cfo_hz)},
                              {"preamble_snr_db", num(f.preamble_snr_db)}});
  }
  j["frame_list"] = fr;
  j["notes"] = r.notes;
  return j.dump(2) + "\n";
}

int run_measure(const MeasureOptions& o) {
  require_output_paths({{"--json", o.json}, {"--svg-constellation", o.svg_constellation}, {"--svg-evm", o.svg_evm}});
  if (o.recording.empty() == o.raw.empty()) {
    throw UsageError(o.raw.empty() ? "no recording given: name a SigMF recording or use --raw FILE"
                                   : "contradictory options: a SigMF recording and --raw");
  }
  if (!o.limit.empty() && !o.limit_table.empty()) throw UsageError("contradictory options: --limit and --limit-table");
  if (!o.rate.empty() && o.limit_table.empty()) throw UsageError("--rate goes with --limit-table");
  if (o.raw.empty() && !o.sample_rate.empty()) {
    throw UsageError("--sample-rate goes with --raw (a SigMF recording states its own core:sample_rate)");
  }
  const double margin = parse_real("--margin-db", o.margin_db);
  if (!(margin >= 0.0 && margin <= 60.0)) {
    throw UsageError("--margin-db = '" + o.margin_db + "' is not allowed; allowed: 0 to 60 dB");
  }
  const std::uint64_t taps = parse_count("--equaliser-taps", o.equaliser_taps);

  Recording rec;
  try {
    if (!o.raw.empty()) {
      if (o.sample_rate.empty()) throw UsageError("--raw needs --sample-rate HZ");
      RawIqSpec spec;
      spec.datatype = o.raw_datatype;
      spec.sample_rate_hz = parse_real("--sample-rate", o.sample_rate);
      spec.full_scale = parse_real("--full-scale", o.full_scale);
      spec.header_bytes = parse_count("--header-bytes", o.header_bytes);
      rec = read_raw_iq(o.raw, spec);
    } else {
      rec = read_sigmf(o.recording);
    }
  } catch (const ConfigError& e) {
    rethrow_measure(e);
  }
  const std::optional<WaveformDescription> d = waveform_description(rec);

  Outcome r;
  r.source = rec.source;
  r.sample_rate_hz = rec.sample_rate_hz;
  r.samples = rec.samples.size();
  r.described = d.has_value();
  CaptureRxConfig cfg;
  if (d) {
    cfg.modulation = d->modulation;
    cfg.symbol_rate_hz = d->symbol_rate_hz;
    cfg.roll_off = d->roll_off;
    cfg.span_symbols = std::clamp(d->span_symbols, 4, 256);
    cfg.frame = d->frame;
    r.described_symbol0 = d->symbol0_sample;
    r.described_es_n0_db = d->es_n0_db;
  } else if (o.mod.empty() || o.symbol_rate.empty()) {
    throw UsageError("'" + rec.source + "' has no qamsight waveform description: give --mod and --symbol-rate");
  }
  auto overridden = [&](const char* option) {
    if (d) r.notes.push_back(std::string(option) + " overrides the recording's description");
  };
  if (!o.mod.empty()) cfg.modulation = o.mod, overridden("--mod");
  if (!o.symbol_rate.empty()) cfg.symbol_rate_hz = parse_real("--symbol-rate", o.symbol_rate), overridden("--symbol-rate");
  if (!o.rolloff.empty()) cfg.roll_off = parse_real("--rolloff", o.rolloff), overridden("--rolloff");
  if (!o.span.empty()) {
    const auto span = parse_count("--span", o.span);
    cfg.span_symbols = static_cast<int>(std::min<std::uint64_t>(span, 100000));
  }
  if (!o.payload_symbols.empty()) {
    cfg.frame.payload_symbols = parse_count("--payload-symbols", o.payload_symbols);
    overridden("--payload-symbols");
  }
  if (!o.prbs.empty()) cfg.frame.payload_prbs = prbs_of(o.prbs), overridden("--prbs");
  cfg.equaliser_taps = taps;
  r.modulation = cfg.modulation;
  r.symbol_rate_hz = cfg.symbol_rate_hz;
  r.roll_off = cfg.roll_off;

  std::optional<CaptureReceiver> rx;
  try {
    if (!o.limit.empty()) r.limit = parse_evm_limit(o.limit);
    if (!o.limit_table.empty()) r.limit = evm_limit_from_table(o.limit_table, cfg.modulation, o.rate);
    rx.emplace(cfg, rec.sample_rate_hz);
  } catch (const ConfigError& e) {
    if (e.parameter() == "sample_rate_hz" && o.raw.empty()) {
      throw InputError("SigMF metadata '" + rec.source + "': key global.core:sample_rate: " + e.what());
    }
    rethrow_measure(e);
  }

  r.capture = o.blind ? rx->analyse_blind(rec.samples) : rx->analyse(rec.samples);
  const CaptureMeasurement& c = r.capture;
  for (const auto& n : c.notes) r.notes.push_back(n);
  if (c.status == CaptureStatus::measured && c.received.size() >= 2) {
    EvmOptions eo;
    // The receiver has removed the carrier offset and tracked the phase; the measurement fits
    // only the remaining common complex gain (amplitude and phase).
    eo.remove_frequency = false;
    eo.keep_error_vectors = !o.svg_constellation.empty() || !o.svg_evm.empty();
    for (auto k : c.reference_known) r.references_known += k;
    if (o.blind) {
      eo.data_aided = false;
      r.evm = measure_evm(c.received, {}, rx->constellation(), eo);
      r.reference_mode = "decisions (blind, decision-directed)";
      if (d && cfg.modulation != "qpsk") {
        r.notes.push_back("blind mode measures every symbol, the recording's QPSK preambles included: against " +
                          cfg.modulation + " decisions they add error; use the data-aided mode for this recording");
      }
    } else {
      r.evm = measure_evm(c.received, c.reference, rx->constellation(), eo);
      const std::size_t n = c.received.size();
      if (r.references_known == n) {
        r.reference_mode = "transmitted symbols (PRBS copy, data-aided)";
      } else if (r.references_known == 0) {
        r.reference_mode = "decisions (PRBS not locked, decision-directed)";
      } else {
        r.reference_mode = "transmitted symbols (PRBS copy) for " + std::to_string(r.references_known) + " of " +
                           std::to_string(n) + ", decisions while the checker was not locked";
      }
      // A few symbols pass before the PRBS checker locks (about degree / bits-per-symbol):
      // those cannot bias the result; warn only when decisions are a noticeable part.
      if (r.references_known + 64 < n) {
        r.notes.push_back("some references are decisions: where symbol errors are not rare the EVM reads low "
                          "(decision-directed bias, docs/evm.md)");
      }
    }
    if (r.limit) r.verdict = evm_verdict(r.evm->rms_pct, *r.limit, margin);
  }
  if (!o.quiet) std::fputs(measure_table(r).c_str(), stdout);
  if (!r.evm) {
    std::fprintf(stderr, "qamsight: %s: nothing measured (%s)\n", rec.source.c_str(),
                 std::string(capture_status_name(c.status)).c_str());
  }
  if (!o.json.empty()) write_output(o.json, measure_json(r), "JSON");
  if (r.evm) {
    EvmFigureOptions fo;
    if (r.limit) fo.limit_pct = r.limit->pct;
    if (!o.svg_constellation.empty()) {
      write_output(o.svg_constellation, evm_constellation_svg(*r.evm, rx->constellation(), fo), "SVG");
    }
    if (!o.svg_evm.empty()) write_output(o.svg_evm, evm_symbols_svg(*r.evm, fo), "SVG");
  } else if (!o.svg_constellation.empty() || !o.svg_evm.empty()) {
    std::fprintf(stderr, "qamsight: no figures written: nothing was measured\n");
  }
  if (!r.evm) return kFail;
  if (r.verdict && !r.verdict->pass) return kFail;
  return kOk;
}

}  // namespace

void add_evm_measure(CLI::App* evm) {
  auto opts = std::make_shared<MeasureOptions>();
  CLI::App* s = evm->add_subcommand(
      "measure",
      "Measure EVM, MER, carrier offset, timing and PRBS BER of a recording (SigMF or raw IQ): the qamsight frame "
      "format (preamble search) or, with --blind, any single-carrier signal. Exit 0: measured and PASS (or no "
      "limit); 1: FAIL or nothing measured (no preamble); 2: bad input");
  add_measure_options(s, *opts);
  s->callback([opts] { exit_status() = run_measure(*opts); });
}

}  // namespace qamsight::cli
