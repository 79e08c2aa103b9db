// `qamsight evm budget`: EVM budget of a line-up (options or TOML), verdict against a limit, allowances.
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>

#include "cli.hpp"
#include "evm_text.hpp"
#include "link_options.hpp"
#include "qamsight/evm_budget.hpp"
#include "qamsight/evm_limits.hpp"

namespace qamsight::cli {

namespace {

constexpr const char* kLinkGroup = "Waveform link (pulse shaping and impairments)";

struct BudgetOptions {
  std::string lineup_arg, lineup;
  std::string mod = "qpsk";
  LinkOptions link;
  std::string snr_db, signal_dbm, noise_figure_db, noise_bandwidth_hz, carrier_hz;
  bool adc_gaussian = false;
  std::string limit, limit_table, rate, margin_db;
  bool simulate = false;
  std::string frames = "8", seed = "1";
  std::string solve;
  std::string json, svg;
  bool quiet = false;
};

// Line-up fields and library parameters -> the options that set them (ahead of the shared map,
// which gives "phase_deg" to the IQ quadrature error: here it is the carrier rotation).
[[noreturn]] void rethrow_budget(const ConfigError& e) {
  static const std::map<std::string, std::string> names = {
      {"snr_db", "--snr-db"},
      {"signal_dbm", "--signal-dbm"},
      {"noise_figure_db", "--noise-figure-db"},
      {"noise_bandwidth_hz", "--noise-bandwidth-hz"},
      {"carrier_frequency_hz", "--carrier-hz"},
      {"phase_noise_linewidth_hz", "--phase-noise-linewidth"},
      {"phase noise mask first offset", "--phase-noise-mask"},
      {"pilot_period", "--pilot-period"},
      {"iq_gain_db", "--iq-gain-db"},
      {"iq_phase_deg", "--iq-phase-deg"},
      {"dc_offset", "--dc-offset"},
      {"input_backoff_db", "--input-backoff-db"},
      {"rapp_smoothness", "--rapp-smoothness"},
      {"adc_bits", "--adc-bits"},
      {"adc_loading_db", "--adc-loading-db"},
      {"cfo_hz", "--cfo-hz"},
      {"phase_deg", "--phase-deg"},
      {"multipath", "--multipath"},
      {"frames", "--frames"},
      {"margin_db", "--margin-db"},
      {"required_margin_db", "--margin-db"},
      {"solve", "--solve"},
      {"limit", "--limit"},
      {"limit table", "--limit-table"},
      {"rate", "--rate"},
  };
  const auto it = names.find(e.parameter());
  if (it == names.end()) rethrow_with_option_names(e);
  throw ConfigError(it->second, e.value(), e.allowed());
}

void add_budget_options(CLI::App* s, BudgetOptions& o) {
  s->add_option("lineup", o.lineup_arg, "Line-up file (TOML, docs/evm-lineup.md); the same as --lineup");
  s->add_option("--lineup", o.lineup, "Line-up file (TOML, docs/evm-lineup.md) instead of the link options");
  s->add_option("--mod", o.mod, "Modulation: bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam, ...")
      ->capture_default_str();
  s->add_option("--snr-db", o.snr_db, "Thermal noise as Es/N0 of the received signal in dB");
  s->add_option("--signal-dbm", o.signal_dbm, "Thermal noise from a noise figure: signal power at the receiver input, dBm");
  s->add_option("--noise-figure-db", o.noise_figure_db, "Thermal noise from a noise figure: receiver noise figure, dB");
  s->add_option("--noise-bandwidth-hz", o.noise_bandwidth_hz,
                "Bandwidth the noise power is quoted in, Hz (default: the symbol rate)");
  s->add_option("--carrier-hz", o.carrier_hz, "Carrier frequency in Hz (for the RMS jitter of the phase noise)");
  s->add_flag("--adc-gaussian-input", o.adc_gaussian,
              "Model the ADC input as Gaussian (OFDM-like) instead of the shaped single-carrier signal");
  add_link_options(s, o.link);
  const std::string g = "Requirement";
  s->add_option("--limit", o.limit, "RMS EVM limit: a percentage (8%) or dB (-22dB)")->group(g);
  s->add_option("--limit-table", o.limit_table,
                "Limit from a standard's table: 3gpp-nr-bs, 3gpp-lte-bs, ieee-802.11-ofdm, ieee-802.11-ht, "
                "ieee-802.11-vht, ieee-802.11-he, ieee-802.11-eht (docs/evm-limits.md)")->group(g);
  s->add_option("--rate", o.rate, "Code rate for tables that distinguish rates (IEEE 802.11 MCS: modulation + rate)")
      ->group(g);
  s->add_option("--margin-db", o.margin_db, "Required margin below the limit in dB (0 to 60; default 0 or the file's)")
      ->group(g);
  s->add_option("--solve", o.solve,
                "Find the allowance that just meets the limit less the margin: phase-noise, iq, backoff")->group(g);
  const std::string r = "Simulation and output";
  s->add_flag("--simulate", o.simulate, "Confirm the prediction with the waveform-link simulation")->group(r);
  s->add_option("--frames", o.frames, "Simulated blocks (frames) with --simulate, 1 to 100000")
      ->capture_default_str()->group(r);
  s->add_option("--seed", o.seed, "Random seed of the simulation")->capture_default_str()->group(r);
  s->add_option("--json", o.json, "Write the budget as JSON to FILE")->group(r);
  s->add_option("--svg", o.svg, "Write the budget bars as SVG to FILE")->group(r);
  s->add_flag("--quiet", o.quiet, "Do not print the table")->group(r);
}

// The options that describe a line-up on the command line (they cannot go with a file).
std::vector<std::string> given_lineup_options(const CLI::App* s) {
  std::vector<std::string> given;
  for (const CLI::Option* opt : s->get_options()) {
    const std::string name = opt->get_name();
    const bool lineup_option = opt->get_group() == kLinkGroup || name == "--mod" || name == "--snr-db" ||
                               name == "--signal-dbm" || name == "--noise-figure-db" ||
                               name == "--noise-bandwidth-hz" || name == "--carrier-hz" ||
                               name == "--adc-gaussian-input";
    if (lineup_option && opt->count() > 0) given.push_back(name);
  }
  return given;
}

EvmLineup lineup_from_options(const BudgetOptions& o) {
  LinkConfig link;
  apply_link_options(o.link, link);
  const bool nf = !o.signal_dbm.empty() || !o.noise_figure_db.empty() || !o.noise_bandwidth_hz.empty();
  if (!o.snr_db.empty() && nf) {
    throw UsageError("contradictory options: --snr-db and a noise figure (--signal-dbm, --noise-figure-db)");
  }
  if (nf && (o.signal_dbm.empty() || o.noise_figure_db.empty())) {
    throw UsageError("--noise-figure-db and --signal-dbm go together: give both (or --snr-db instead)");
  }
  const double es = o.snr_db.empty() ? std::numeric_limits<double>::infinity() : parse_real("--snr-db", o.snr_db);
  EvmLineup l = lineup_from_link(link, o.mod, es);
  if (nf) {
    ReceiverNoiseSpec n;
    n.signal_dbm = parse_real("--signal-dbm", o.signal_dbm);
    n.noise_figure_db = parse_real("--noise-figure-db", o.noise_figure_db);
    if (!o.noise_bandwidth_hz.empty()) n.noise_bandwidth_hz = parse_real("--noise-bandwidth-hz", o.noise_bandwidth_hz);
    l.noise = n;
  }
  if (!o.carrier_hz.empty()) l.carrier_frequency_hz = parse_real("--carrier-hz", o.carrier_hz);
  l.adc_gaussian_input = o.adc_gaussian;
  return l;
}

EvmVerdict verdict_of(double pct, const EvmLimit& limit, double margin_db) {
  if (pct > 0.0) return evm_verdict(pct, limit, margin_db);
  // No impairment at all: EVM 0 meets any limit.
  EvmVerdict v;
  v.measured_pct = 0.0;
  v.measured_db = -std::numeric_limits<double>::infinity();
  v.limit_pct = limit.pct;
  v.limit_db = limit.db;
  v.margin_db = std::numeric_limits<double>::infinity();
  v.required_margin_db = margin_db;
  v.pass = true;
  return v;
}

int run_budget(const CLI::App* s, const BudgetOptions& o) {
  require_output_paths({{"--json", o.json}, {"--svg", o.svg}});
  if (!o.lineup.empty() && !o.lineup_arg.empty()) {
    throw UsageError("contradictory options: a line-up file given twice ('" + o.lineup_arg + "' and --lineup '" +
                     o.lineup + "')");
  }
  const std::string file = o.lineup.empty() ? o.lineup_arg : o.lineup;
  if (!o.limit.empty() && !o.limit_table.empty()) throw UsageError("contradictory options: --limit and --limit-table");
  if (!o.rate.empty() && o.limit_table.empty()) throw UsageError("--rate goes with --limit-table");
  const std::uint64_t frames = parse_count("--frames", o.frames);
  const std::uint64_t seed = parse_count("--seed", o.seed);
  std::optional<EvmAllowanceKind> solve;
  if (!o.solve.empty()) {
    if (o.solve == "phase-noise") solve = EvmAllowanceKind::phase_noise;
    else if (o.solve == "iq") solve = EvmAllowanceKind::iq_imbalance;
    else if (o.solve == "backoff") solve = EvmAllowanceKind::backoff;
    else throw UsageError("--solve = '" + o.solve + "' is not allowed; allowed: phase-noise, iq, backoff");
  }
  double margin = 0.0;
  if (!o.margin_db.empty()) {
    margin = parse_real("--margin-db", o.margin_db);
    if (!(margin >= 0.0 && margin <= 60.0)) {
      throw UsageError("--margin-db = '" + o.margin_db + "' is not allowed; allowed: 0 to 60 dB");
    }
  }

  EvmBudgetReport report;
  EvmRequirement file_requirement;
  std::string file_name;
  try {
    if (!file.empty()) {
      const auto given = given_lineup_options(s);
      if (!given.empty()) {
        throw UsageError("contradictory options: " + given.front() + " describes a line-up, and the line-up file '" +
                         file + "' is given (options of a file's line-up go in the file)");
      }
      EvmLineupFile f = load_evm_lineup(file);
      report.lineup = std::move(f.lineup);
      file_requirement = f.requirement;
      file_name = file;
    } else {
      report.lineup = lineup_from_options(o);
    }
    validate(report.lineup);
    if (!o.limit.empty()) {
      report.limit = parse_evm_limit(o.limit);
    } else if (!o.limit_table.empty()) {
      report.limit = evm_limit_from_table(o.limit_table, report.lineup.modulation, o.rate);
    }
  } catch (const ConfigError& e) {
    rethrow_budget(e);
  }
  if (!report.limit && file_requirement.given()) {
    // The file's own requirement: its problems are the file's.
    try {
      report.limit = file_requirement.limit.empty()
                         ? evm_limit_from_table(file_requirement.table, report.lineup.modulation, file_requirement.rate)
                         : parse_evm_limit(file_requirement.limit);
    } catch (const ConfigError& e) {
      throw InputError("line-up '" + file_name + "': key requirement: " + e.what());
    }
    if (o.margin_db.empty()) margin = file_requirement.margin_db;
  }
  if (solve && !report.limit) throw UsageError("--solve needs a limit: give --limit or --limit-table");

  try {
    report.prediction = predict_evm(report.lineup);
    if (report.limit) report.verdict = verdict_of(report.prediction.total_pct, *report.limit, margin);
    if (o.simulate) {
      report.simulation = simulate_evm(report.lineup, seed, frames);
      if (report.limit) report.simulated_verdict = verdict_of(report.simulation->rms_pct, *report.limit, margin);
    }
    if (solve) report.allowance = solve_evm_allowance(report.lineup, *solve, report.limit->pct, margin);
  } catch (const ConfigError& e) {
    rethrow_budget(e);
  }

  if (!o.quiet) {
    std::string text = evm_budget_text(report);
    if (report.verdict) {
      const bool pass = report.verdict->pass && (!report.simulated_verdict || report.simulated_verdict->pass);
      text += std::string("\nResult: ") + verdict_word(pass) + "\n";
    }
    std::fputs(text.c_str(), stdout);
  }
  if (!o.json.empty()) write_output(o.json, evm_budget_json(report), "JSON");
  if (!o.svg.empty()) write_output(o.svg, evm_budget_svg(report), "SVG");
  if (report.verdict && !report.verdict->pass) return kFail;
  if (report.simulated_verdict && !report.simulated_verdict->pass) return kFail;
  return kOk;
}

}  // namespace

void register_evm(CLI::App& app) {
  CLI::App* evm = app.add_subcommand(
      "evm", "EVM budgets of line-ups and EVM/MER measurements of recordings, against standard or own limits");
  evm->require_subcommand(1);
  auto opts = std::make_shared<BudgetOptions>();
  CLI::App* s = evm->add_subcommand(
      "budget",
      "Predict the EVM of a line-up (from the link options or a TOML file), impairment by impairment, and "
      "check it against a limit. Exit 0: PASS or no limit; 1: FAIL; 2: bad input");
  add_budget_options(s, *opts);
  s->callback([s, opts] { exit_status() = run_budget(s, *opts); });
  add_evm_measure(evm);
}

}  // namespace qamsight::cli
