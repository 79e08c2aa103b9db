// `qamsight demo`: the main job on the built-in demo scenario, written to an output folder.
#include <cstdio>
#include <filesystem>

#include <algorithm>
#include <cmath>
#include <vector>

#include "cli.hpp"
#include "demo_scenarios.hpp"
#include "evm_text.hpp"
#include "qamsight/evm_budget.hpp"
#include "qamsight/evm_limits.hpp"
#include "qamsight/figures.hpp"
#include "qamsight/figures_signal.hpp"
#include "qamsight/io.hpp"
#include "qamsight/link.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/regression.hpp"
#include "qamsight/report.hpp"
#include "qamsight/sim.hpp"
#include "qamsight/spectrum.hpp"
#include "qamsight/views.hpp"
#include "qamsight/waveform.hpp"
#include "sweep_table.hpp"

namespace qamsight::cli {

namespace {

struct DemoOptions {
  std::string out = "demo-output";
  unsigned threads = 0;
  bool quick = false;
};

// Eb/N0 grids that take each modulation from BER ~1e-1 down to ~1e-6.
struct Leg {
  const char* modulation;
  double lo, hi;
};
constexpr Leg kLegs[] = {{"qpsk", 0, 10}, {"16qam", 4, 14}, {"64qam", 8, 18}, {"256qam", 12, 22}, {"1024qam", 16, 26}};

constexpr const char* kLineupSource = "built-in demo line-up (notebooks-free-examples/demo_lineup.toml)";
constexpr const char* kLinkSource = "built-in demo link (notebooks-free-examples/demo_link.toml)";

// An illustrative transmit mask, invented for the demo (relative to the spectral peak; offsets
// from the carrier for the 5 MBd, roll-off 0.25 line-up; mirrored).
SpectralMask demo_mask() {
  SpectralMask m;
  m.points = {{0.0, 3.0}, {2.9e6, 3.0}, {3.6e6, -30.0}, {6.0e6, -45.0}, {10.0e6, -45.0}};
  return m;
}

// Signal views of the demo line-up: the received constellation (the waveform link of the EVM
// simulation, after the receiver's phase tracker), the eye at the matched-filter output and the
// transmit spectrum with a mask.
void write_signal_views(const std::filesystem::path& dir, const EvmLineup& lineup, const EvmPrediction& pred,
                        bool quick) {
  const EvmSimulationSetup setup = evm_simulation_setup(lineup, pred);
  const SymbolCapture cap = capture_symbols(setup.link, setup.point, 2026, quick ? 4 : 16);
  ConstellationDensity density(ConstellationDensityConfig{160, 1.5});
  density.add(cap.received);
  const Constellation c = Constellation::from_name(lineup.modulation);
  ConstellationFigureOptions co;
  co.title = "Received constellation density, " + lineup.name;
  co.reference_points.assign(c.points().begin(), c.points().end());
  for (std::size_t i = 0; i < cap.received.size() && co.error_vectors.size() < 24; i += 997)
    co.error_vectors.push_back({cap.received[i], cap.transmitted[i]});
  write_output((dir / "constellation.svg").string(), constellation_svg(density, co), "SVG");

  // The waveform generator at the same settings. For the eye, the carrier offset and phase noise
  // are left out (they would turn the eye); for the spectrum, the receiver noise is (a mask is a
  // transmitter requirement).
  const PulseShapingConfig& ps = setup.link.pulse;
  const auto run_generator = [&](WaveformSpec spec, auto&& sink) {
    // The generator is a transmitter and channel: the receiver's tracker settings stay default.
    spec.impairments.tracker = TrackerMode::automatic;
    spec.impairments.tracker_bandwidth = ImpairmentConfig{}.tracker_bandwidth;
    spec.impairments.pilot_period = 0;
    spec.modulation = lineup.modulation;
    spec.pulse = ps;
    spec.symbols = quick ? 16384 : 65536;
    // PRBS-23: the short taps of PRBS-15 leave a ripple of a few dB in the spectrum of 64QAM.
    spec.frame.payload_prbs = PrbsPolynomial::prbs23;
    spec.seed = 2026;
    WaveformGenerator g(spec);
    for (auto block = g.next_block(); !block.empty(); block = g.next_block()) sink(block);
    return g.sample_rate_hz();
  };
  WaveformSpec eye_spec;
  eye_spec.es_n0_db = setup.point.es_n0_db;
  eye_spec.impairments = setup.link.impairments;
  eye_spec.impairments.cfo_hz = 0.0;
  eye_spec.impairments.phase_deg = 0.0;
  eye_spec.impairments.phase_noise_linewidth_hz = 0.0;
  eye_spec.impairments.phase_noise_mask = nullptr;
  MatchedDecimator<cf32> mf(PulseSpec{PulseFamily::root_raised_cosine, ps.roll_off, ps.span_symbols, ps.samples_per_symbol},
                      ps.samples_per_symbol);
  std::vector<cf32> filtered;
  std::vector<cf32> buf;
  run_generator(eye_spec, [&](std::span<const cf32> b) {
    buf.resize(b.size());
    mf.process(b, std::span<cf32>(buf));
    filtered.insert(filtered.end(), buf.begin(), buf.end());
  });
  // Decision phase and scale: the phase with the most power, scaled to unit RMS there.
  const int sps = ps.samples_per_symbol;
  std::vector<double> power(static_cast<std::size_t>(sps), 0.0);
  for (std::size_t i = 0; i < filtered.size(); ++i) power[i % sps] += std::norm(filtered[i]);
  const auto best = static_cast<std::size_t>(std::max_element(power.begin(), power.end()) - power.begin());
  const double scale = 1.0 / std::sqrt(power[best] / (static_cast<double>(filtered.size()) / sps));
  for (auto& v : filtered) v *= static_cast<float>(scale);
  EyeConfig ec;
  ec.samples_per_symbol = sps;
  ec.decision_offset = static_cast<double>(best);
  ec.amplitude_min = -1.6;
  ec.amplitude_max = 1.6;
  EyeDiagram eye(ec);
  eye.add(std::span<const cf32>(filtered).subspan(static_cast<std::size_t>(ps.span_symbols * sps)));
  EyeFigureOptions eo;
  eo.title = "Eye diagram, in-phase, matched-filter output (no carrier offset or phase noise)";
  write_output((dir / "eye.svg").string(), eye_svg(eye, eo), "SVG");

  WaveformSpec tx_spec;
  tx_spec.es_n0_db = 150.0;
  tx_spec.impairments = setup.link.impairments;
  WelchEstimator welch(WelchConfig{1024, 0.5, WindowKind::blackman_harris4, lineup.symbol_rate_hz * sps});
  run_generator(tx_spec, [&](std::span<const cf32> b) { welch.add(b); });
  const Spectrum sp = welch.psd();
  SpectrumFigureOptions so;
  so.title = "Transmit spectrum before the receiver noise, with an illustrative mask";
  so.mask = demo_mask();
  so.relative_to_peak = true;
  write_output((dir / "spectrum.svg").string(), spectrum_svg(sp, so), "SVG");
  const MaskVerdict mv = mask_check(sp, demo_mask());
  std::printf("Transmit spectrum against the illustrative demo mask: %s, worst margin %.1f dB at %.2f MHz\n",
              mv.pass ? "PASS" : "FAIL", mv.worst_margin_db, mv.worst_frequency_hz / 1e6);
}

// The EVM budget of the demo receiver line-up, confirmed by the full waveform simulation.
bool run_evm_budget(const std::filesystem::path& dir, bool quick) {
  const EvmLineupFile f = parse_evm_lineup(demo_files::kLineupToml, kLineupSource);
  EvmBudgetReport r;
  r.lineup = f.lineup;
  r.prediction = predict_evm(f.lineup);
  if (f.requirement.given()) {
    r.limit = f.requirement.table.empty()
                  ? parse_evm_limit(f.requirement.limit)
                  : evm_limit_from_table(f.requirement.table, f.lineup.modulation, f.requirement.rate);
    r.verdict = evm_verdict(r.prediction.total_pct, *r.limit, f.requirement.margin_db);
  }
  r.simulation = simulate_evm(f.lineup, 2026, quick ? 2 : 8);
  if (r.limit) r.simulated_verdict = evm_verdict(r.simulation->rms_pct, *r.limit, f.requirement.margin_db);
  std::printf("\nEVM budget of the demo receiver line-up [%s]\n", kLineupSource);
  std::fputs(evm_budget_text(r).c_str(), stdout);
  write_output((dir / "evm-budget.json").string(), evm_budget_json(r), "JSON");
  write_output((dir / "evm-budget.svg").string(), evm_budget_svg(r), "SVG");
  write_signal_views(dir, f.lineup, r.prediction, quick);
  return !r.verdict || r.verdict->pass;
}

// The demo link scenario: MODCOD margins at the reference elevation and the choice over the pass.
void run_link(const std::filesystem::path& dir) {
  const LinkScenario s = parse_link_scenario(demo_files::kLinkToml, kLinkSource);
  const LinkAnalysis a = analyse_link(s);
  std::printf("\nLink: %s [%s]\n", s.name.c_str(), kLinkSource);
  std::printf("MODCODs: %s; required margin %s dB, implementation margin %s dB\n", s.modcod_source.c_str(),
              format_number(s.required_margin_db).c_str(), format_number(s.implementation_margin_db).c_str());
  std::fputs(link_modcod_text(s, a).c_str(), stdout);
  write_output((dir / "link.json").string(), link_analysis_to_json(s, a), "JSON");
  write_output((dir / "link-throughput.svg").string(), link_throughput_svg(s, a), "SVG");
  write_output((dir / "link-esn0.svg").string(), link_es_n0_svg(s, a), "SVG");
}

int run(const DemoOptions& o) {
  namespace fs = std::filesystem;
  try {  // check the options before the output folder is made
    SweepConfig options;
    options.threads = o.threads;
    validate(options);
  } catch (const ConfigError& e) {
    rethrow_with_option_names(e);
  }
  std::error_code ec;
  fs::create_directories(o.out, ec);
  if (ec) throw InputError("output folder '" + o.out + "': " + ec.message());
  std::printf("qamsight demo: Gray QAM waterfall in AWGN, QPSK to 1024-QAM, with exact theory overlay\n");
  std::printf("(Eb/N0 counts information bits; intervals are exact Clopper-Pearson at 95%%)\n\n");
  SweepResult all;
  all.config.modulations.clear();
  all.config.snr_db.clear();
  all.config.seed = 2026;
  all.config.threads = o.threads;
  all.config.stop.min_bit_errors = 100;
  all.config.stop.max_bits = o.quick ? 2'000'000 : 50'000'000;
  for (const auto& leg : kLegs) {
    SweepConfig c = all.config;
    c.modulations = {leg.modulation};
    for (double x = leg.lo; x <= leg.hi + 1e-9; x += 2.0) c.snr_db.push_back(x);
    const SweepResult r = run_sweep(c);
    all.config.modulations.push_back(leg.modulation);
    for (const auto& p : r.points) all.points.push_back(p);
  }
  std::fputs(sweep_table(all).c_str(), stdout);
  const fs::path dir(o.out);
  write_output((dir / "waterfall.json").string(), sweep_to_json(all), "JSON");
  write_output((dir / "waterfall.csv").string(), sweep_to_csv(all), "CSV");
  write_output((dir / "waterfall.svg").string(), waterfall_svg(all), "SVG");
  const GateReport gate = check_against_theory(all);
  std::size_t tested = 0, failed = 0;
  for (const auto& r : gate.rows) tested += r.tested, failed += r.failed;
  std::printf("\nRegression gate against theory (99%% family-wise, Holm): %s, %zu of %zu points flagged\n",
              gate.pass ? "PASS" : "FAIL", failed, tested);
  const bool evm_pass = run_evm_budget(dir, o.quick);
  run_link(dir);
  ReportDocument report = report_from_folder(o.out);
  report.title = "qamsight demo report";
  report.subtitle = "Built-in demo: Gray QAM waterfall, the Corvane-7 receiver line-up and the Halcyra Ka downlink "
                    "(all invented)";
  write_output((dir / "report.html").string(), report_html(report), "HTML report");
  std::printf("\nDemo verdicts: waterfall against theory %s; EVM budget %s\n", gate.pass ? "PASS" : "FAIL",
              evm_pass ? "PASS" : "FAIL");
  return kOk;
}

}  // namespace

void register_demo(CLI::App& app) {
  auto o = std::make_shared<DemoOptions>();
  CLI::App* s = app.add_subcommand("demo", "Run the built-in demo scenario and write its figures and tables");
  s->add_option("--out", o->out, "Output folder")->capture_default_str();
  s->add_option("--threads", o->threads, "Worker threads (0 = all cores)")->capture_default_str();
  s->add_flag("--quick", o->quick, "Fewer bits per point (a smoke run)");
  s->callback([o] { exit_status() = run(*o); });
}

}  // namespace qamsight::cli
