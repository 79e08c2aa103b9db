// `qamsight sweep`: BER/SER/EVM waterfall over modulations and SNR values.
#include <atomic>
#include <csignal>
#include <cstdio>
#include <thread>

#include "cli.hpp"
#include "qamsight/fec.hpp"
#include "qamsight/figures.hpp"
#include "qamsight/io.hpp"
#include "qamsight/sim.hpp"
#include "link_options.hpp"
#include "mpi_session.hpp"
#include "sweep_safety.hpp"
#include "sweep_table.hpp"

namespace qamsight::cli {

namespace {

std::atomic<bool> g_interrupted{false};
std::atomic<int> g_signal{0};
// Stops at the next batch boundary; a second signal ends the process at once (the checkpoint
// stays readable either way).
extern "C" void on_sigint(int sig) {
  g_signal.store(sig);
  g_interrupted.store(true);
  std::signal(sig, SIG_DFL);
}

struct SweepOptions {
  std::string mod = "qpsk";
  std::string ebn0, esn0, ebn0_range, esn0_range;
  std::string min_errors = "100", max_bits = "1e8", frame_symbols = "4096";
  double max_rel_width = 0.0;
  double confidence = 0.95;
  std::string seed = "1";
  unsigned threads = 0;
  double impl_loss_db = 0.0;
  std::string code, llr = "auto", min_frame_errors = "0";
  LinkOptions link;
  std::string csv, json, svg;
  std::string checkpoint;
  bool resume = false;
  bool quiet = false;
  bool progress = false, no_progress = false;
};

void add_options(CLI::App* s, SweepOptions& o) {
  s->add_option("--mod", o.mod, "Modulations, comma-separated: bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam")
      ->capture_default_str();
  s->add_option("--ebn0", o.ebn0, "Eb/N0 values in dB (information bits), comma-separated, e.g. 4,6,8");
  s->add_option("--esn0", o.esn0, "Es/N0 values in dB at the matched-filter output, comma-separated");
  s->add_option("--ebn0-range", o.ebn0_range, "Eb/N0 grid MIN,MAX,STEP in dB, e.g. 0,12,2");
  s->add_option("--esn0-range", o.esn0_range, "Es/N0 grid MIN,MAX,STEP in dB");
  s->add_option("--min-errors", o.min_errors, "Stop a point after this many bit errors")->capture_default_str();
  s->add_option("--max-bits", o.max_bits, "Stop a point after this many bits (then BER is an upper bound)")
      ->capture_default_str();
  s->add_option("--max-rel-width", o.max_rel_width,
                "Also stop when (BER high - BER low)/BER of the interval is at most this (0 = off)")
      ->capture_default_str();
  s->add_option("--confidence", o.confidence, "Confidence of the Clopper-Pearson intervals")->capture_default_str();
  s->add_option("--seed", o.seed, "Random seed (same seed, same counts on any thread count)")->capture_default_str();
  s->add_option("--threads", o.threads, "Worker threads (0 = all cores)")->capture_default_str();
  s->add_option("--frame-symbols", o.frame_symbols, "Symbols per frame")->capture_default_str();
  s->add_option("--impl-loss-db", o.impl_loss_db,
                "Model an implementation loss: the receiver sees this many dB less SNR")->capture_default_str();
  std::string names;
  for (const auto& c : code_names()) names += (names.empty() ? "" : ", ") + c.name;
  const std::string g = "Coding";
  s->add_option("--code", o.code, "Forward error correction (default: uncoded; one codeword per frame, "
                                  "Eb/N0 per information bit): " + names)->group(g);
  s->add_option("--llr", o.llr, "Soft decisions of the coded receiver: auto (exact log-MAP up to 16 points, "
                                "max-log above), exact, max-log")->capture_default_str()->group(g);
  s->add_option("--min-frame-errors", o.min_frame_errors,
                "Also stop a point after this many frame (codeword) errors (0 = off)")->capture_default_str()->group(g);
  add_link_options(s, o.link);
  s->add_option("--csv", o.csv, "Write the table as CSV to FILE");
  s->add_option("--json", o.json, "Write the results as JSON to FILE");
  s->add_option("--svg", o.svg, "Write the BER waterfall with theory overlay as SVG to FILE");
  s->add_option("--checkpoint", o.checkpoint,
                "Append progress records to FILE after every batch (synced), so the sweep can be resumed");
  s->add_flag("--resume", o.resume, "Continue from the --checkpoint file (starts it if it does not exist)");
  s->add_flag("--quiet", o.quiet, "Do not print the table");
  s->add_flag("--progress", o.progress, "Show a progress line on stderr even when it is not a terminal");
  s->add_flag("--no-progress", o.no_progress, "Never show the progress line");
}

SweepConfig to_config(const SweepOptions& o) {
  SweepConfig c;
  c.modulations = split_list(o.mod);
  if (c.modulations.empty()) throw UsageError("--mod = '" + o.mod + "' is not allowed; allowed: at least one modulation");
  const int given = !o.ebn0.empty() + !o.esn0.empty() + !o.ebn0_range.empty() + !o.esn0_range.empty();
  if (given == 0) throw UsageError("no SNR given: use one of --ebn0, --esn0, --ebn0-range, --esn0-range");
  if (given > 1) throw UsageError("contradictory options: give only one of --ebn0, --esn0, --ebn0-range, --esn0-range");
  if (!o.ebn0.empty()) c.snr_db = parse_real_list("--ebn0", o.ebn0);
  if (!o.esn0.empty()) c.snr_db = parse_real_list("--esn0", o.esn0), c.snr_kind = SnrKind::es_n0;
  if (!o.ebn0_range.empty()) c.snr_db = parse_range("--ebn0-range", o.ebn0_range);
  if (!o.esn0_range.empty()) c.snr_db = parse_range("--esn0-range", o.esn0_range), c.snr_kind = SnrKind::es_n0;
  c.stop.min_bit_errors = parse_count("--min-errors", o.min_errors);
  c.stop.max_bits = parse_count("--max-bits", o.max_bits);
  c.stop.max_relative_width = o.max_rel_width;
  c.confidence = o.confidence;
  c.seed = parse_count("--seed", o.seed);
  c.threads = o.threads;
  c.link.frame_symbols = parse_count("--frame-symbols", o.frame_symbols);
  c.link.impl_loss_db = o.impl_loss_db;
  apply_link_options(o.link, c.link);
  c.link.code = o.code;
  c.stop.min_frame_errors = parse_count("--min-frame-errors", o.min_frame_errors);
  c.link.llr = parse_llr_option(o.llr);
  if (o.code.empty() && (o.llr != "auto" || c.stop.min_frame_errors != 0)) {
    throw UsageError(std::string(o.llr != "auto" ? "--llr" : "--min-frame-errors") +
                     " needs --code (an uncoded sweep has hard decisions and no codewords)");
  }
  if (o.progress && o.no_progress) throw UsageError("contradictory options: --progress and --no-progress");
  try {
    validate(c);
  } catch (const ConfigError& e) {
    rethrow_with_option_names(e);
  }
  return c;
}

void progress_line(const SweepProgress& p) {
  const auto& c = p.state->totals.counts;
  char eta[32] = "?";
  if (std::isfinite(p.point_eta_seconds)) std::snprintf(eta, sizeof eta, "%.0f s", p.point_eta_seconds);
  std::fprintf(stderr, "\r\033[K[%zu/%zu] %s Eb/N0 %.2f dB: %s bits, %llu errors, ETA %s", p.point + 1, p.points,
               p.spec->modulation.c_str(), p.spec->eb_n0_db, fmt_sci(static_cast<double>(c.bits), 2).c_str(),
               static_cast<unsigned long long>(c.bit_errors), eta);
  std::fflush(stderr);
}

int run(const SweepOptions& o) {
  const SweepConfig config = to_config(o);
  SweepHooks hooks;
  const bool show = !o.no_progress && (o.progress || stderr_is_terminal());
  if (show) hooks.progress = progress_line;
  g_interrupted.store(false);
  hooks.cancel = &g_interrupted;
  // Under mpirun/srun the frames of each batch are split over the ranks (identical results);
  // rank 0 alone keeps the checkpoint and writes files.
  const auto executor = make_sweep_executor(config.threads);
  hooks.executor = executor.get();
  if (mpi_active() && o.resume) throw UsageError("--resume is not supported with more than one MPI rank");
  require_output_paths({{"--csv", o.csv}, {"--json", o.json}, {"--svg", o.svg}});  // not after hours of work
  const auto checkpoint = is_output_rank() ? attach_checkpoint(o.checkpoint, o.resume, config, hooks) : nullptr;
  auto previous = std::signal(SIGINT, on_sigint);
  auto previous_term = std::signal(SIGTERM, on_sigint);
  SweepResult result = run_sweep(config, hooks);
  std::signal(SIGINT, previous);
  std::signal(SIGTERM, previous_term);
  if (show) std::fprintf(stderr, "\r\033[K");
  if (!o.quiet) std::fputs(sweep_table(result).c_str(), stdout);
  if (!result.complete) {
    std::fputs(interrupted_note(result, sweep_points(config).size(), checkpoint.get(), g_signal.load()).c_str(),
               stderr);
    return 128 + (g_signal.load() == SIGTERM ? SIGTERM : SIGINT);
  }
  if (!is_output_rank()) return kOk;
  if (!o.csv.empty()) write_output(o.csv, sweep_to_csv(result), "CSV");
  if (!o.json.empty()) write_output(o.json, sweep_to_json(result), "JSON");
  if (!o.svg.empty()) write_output(o.svg, waterfall_svg(result), "SVG");
  return kOk;
}

}  // namespace

void register_sweep(CLI::App& app) {
  auto opts = std::make_shared<SweepOptions>();
  CLI::App* s = app.add_subcommand("sweep", "Monte-Carlo BER/SER/EVM sweep with exact confidence intervals");
  add_options(s, *opts);
  s->callback([opts] { exit_status() = run(*opts); });
}

}  // namespace qamsight::cli
