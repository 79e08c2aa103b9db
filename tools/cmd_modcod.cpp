// `qamsight modcod`: a MODCOD table (CSV/JSON for `qamsight link`) from our own coded sweeps.
#include <cmath>
#include <cstdio>

#include "cli.hpp"
#include "link_options.hpp"
#include "qamsight/fec.hpp"
#include "qamsight/link.hpp"

namespace qamsight::cli {

namespace {

struct ModcodOptions {
  std::string mod = "qpsk";
  std::string code;
  std::string target_ber, target_fer;
  std::string esn0_range;
  std::string min_errors = "100", max_bits = "0";
  double confidence = 0.95;
  std::string seed = "1";
  unsigned threads = 0;
  std::string llr = "auto";
  std::string csv, json;
  bool quiet = false, progress = false;
  LinkOptions link;  ///< pulse shaping and impairments of the simulated link (as for sweep)
};

ModcodSimulationConfig to_config(const ModcodOptions& o) {
  ModcodSimulationConfig c;
  c.modulations = split_list(o.mod);
  if (c.modulations.empty()) throw UsageError("--mod = '" + o.mod + "' is not allowed; allowed: at least one modulation");
  c.codes = split_list(o.code);
  if (c.codes.empty()) throw UsageError("--code is required: one or more code names separated by commas");
  if (o.target_ber.empty() == o.target_fer.empty()) {
    throw UsageError(o.target_ber.empty() ? "no target given: use --target-ber or --target-fer"
                                          : "contradictory options: give only one of --target-ber, --target-fer");
  }
  c.target = o.target_ber.empty() ? ModcodTarget::fer : ModcodTarget::ber;
  c.target_rate = o.target_ber.empty() ? parse_real("--target-fer", o.target_fer) : parse_real("--target-ber", o.target_ber);
  if (o.esn0_range.empty()) throw UsageError("--esn0-range is required: MIN,MAX,STEP in dB");
  c.es_n0_db = parse_range("--esn0-range", o.esn0_range);
  if (c.es_n0_db.size() < 2) {
    throw UsageError("--esn0-range = '" + o.esn0_range + "' is not allowed; allowed: MIN,MAX,STEP giving at least two values");
  }
  c.min_errors = parse_count("--min-errors", o.min_errors);
  c.max_bits = parse_count("--max-bits", o.max_bits);
  c.confidence = o.confidence;
  c.seed = parse_count("--seed", o.seed);
  c.threads = o.threads;
  apply_link_options(o.link, c.link);
  c.link.llr = parse_llr_option(o.llr);
  if (!(c.confidence > 0.0 && c.confidence < 1.0)) {
    throw UsageError("--confidence = " + format_number(c.confidence) + " is not allowed; allowed: strictly between 0 and 1");
  }
  if (c.threads > 4096) throw UsageError("--threads = " + std::to_string(c.threads) + " is not allowed; allowed: 0 (all cores) to 4096");
  return c;
}

std::string bound_text(double v) { return std::isfinite(v) ? fmt_fixed(v, 2) : "-"; }

int run(const ModcodOptions& o) {
  ModcodSimulationConfig config;
  try {
    config = to_config(o);
    // Names are checked before any simulation time is spent (the rest in simulate_modcod_table,
    // which checks everything before its first point).
    for (const auto& code : config.codes) (void)make_code(code);
    for (const auto& m : config.modulations) (void)Constellation::from_name(m);
  } catch (const ConfigError& e) {
    rethrow_with_option_names(e);
  }
  require_output_paths({{"--csv", o.csv}, {"--json", o.json}});
  std::function<void(const std::string&)> progress;
  if (o.progress || stderr_is_terminal()) progress = [](const std::string& line) { std::fprintf(stderr, "%s\n", line.c_str()); };
  ModcodSimulation sim;
  try {
    sim = simulate_modcod_table(config, progress);
  } catch (const ConfigError& e) {
    rethrow_with_option_names(e);
  }
  const std::string ci = fmt_fixed(100.0 * config.confidence, 0) + "% interval dB";
  Table t({"modulation", "code", "rate", "bits/symbol", "required Es/N0 dB", ci, "Eb/N0 dB", "points", "note"});
  bool all = true;
  for (const auto& r : sim.rows) {
    all = all && r.available;
    t.add({r.modulation, r.code, fmt_fixed(r.code_rate, 4), fmt_fixed(r.spectral_efficiency, 4),
           r.available ? fmt_fixed(r.required_es_n0_db, 2) : "-",
           r.available ? "[" + bound_text(r.required_low_db) + ", " + bound_text(r.required_high_db) + "]" : "-",
           r.available ? fmt_fixed(r.required_es_n0_db - 10.0 * std::log10(r.spectral_efficiency), 2) : "-",
           std::to_string(r.curve.size()), r.note});
  }
  if (!o.quiet) {
    std::printf("target %s %s\n", config.target == ModcodTarget::ber ? "BER" : "FER", format_number(config.target_rate).c_str());
    std::fputs(t.str().c_str(), stdout);
  }
  if (sim.table.empty()) {
    std::fprintf(stderr, "qamsight: no (modulation, code) pair crossed the target inside the grid; nothing written\n");
    return kFail;
  }
  if (!o.csv.empty()) write_output(o.csv, sim.table.to_csv(), "MODCOD CSV");
  if (!o.json.empty()) write_output(o.json, sim.table.to_json(), "MODCOD JSON");
  return all ? kOk : kFail;
}

}  // namespace

void register_modcod(CLI::App& app) {
  auto o = std::make_shared<ModcodOptions>();
  CLI::App* s = app.add_subcommand(
      "modcod", "MODCOD table from coded sweeps: required Es/N0 at a target BER or FER (CSV/JSON for `link`)");
  std::string names;
  for (const auto& c : code_names()) names += (names.empty() ? "" : ", ") + c.name;
  s->add_option("--mod", o->mod, "Modulations, comma-separated: bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam")
      ->capture_default_str();
  s->add_option("--code", o->code, "Codes, comma-separated (required): " + names);
  s->add_option("--target-ber", o->target_ber, "Read the thresholds at this information-bit error rate");
  s->add_option("--target-fer", o->target_fer, "Read the thresholds at this frame (codeword) error rate");
  s->add_option("--esn0-range", o->esn0_range, "Es/N0 grid MIN,MAX,STEP in dB (required); a curve stops at the "
                                               "first point confidently below the target");
  s->add_option("--min-errors", o->min_errors, "Errors of the target's kind (bits or frames) that end a point")
      ->capture_default_str();
  s->add_option("--max-bits", o->max_bits, "Information bits that end a point (0 = 30/target bits or frames)")
      ->capture_default_str();
  s->add_option("--confidence", o->confidence, "Confidence of the intervals behind the threshold bounds")
      ->capture_default_str();
  s->add_option("--seed", o->seed, "Random seed (same seed, same table on any thread count)")->capture_default_str();
  s->add_option("--threads", o->threads, "Worker threads (0 = all cores)")->capture_default_str();
  s->add_option("--llr", o->llr, "Soft decisions: auto (exact up to 16 points, max-log above), exact, max-log")
      ->capture_default_str();
  s->add_option("--csv", o->csv, "Write the MODCOD table as CSV to FILE (the format `link` reads)");
  s->add_option("--json", o->json, "Write the MODCOD table as JSON to FILE (the format `link` reads)");
  s->add_flag("--quiet", o->quiet, "Do not print the table");
  add_link_options(s, o->link);
  s->add_flag("--progress", o->progress, "Print one line per simulated point on stderr even when it is not a terminal");
  s->callback([o] { exit_status() = run(*o); });
}

}  // namespace qamsight::cli
