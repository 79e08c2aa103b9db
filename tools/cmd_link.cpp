// `qamsight link`: link budget, MODCOD margins and the best MODCOD over a pass, from a TOML scenario.
#include <cmath>
#include <cstdio>

#include "cli.hpp"
#include "qamsight/link.hpp"

namespace qamsight::cli {

namespace {

struct LinkOptions {
  std::string scenario;
  std::string json, svg, svg_esn0;
  std::string elevation;
  bool quiet = false;
};

std::string mbps(double bps) { return fmt_fixed(bps / 1e6, 2); }

std::string budget_table(const LinkBudget& b) {
  Table t({"item", "value", "unit"});
  for (const auto& l : b.lines()) {
    const int decimals = l.unit == "km" || l.unit == "K" || l.unit == "m/s" ? 1 : (l.unit.empty() ? 0 : 2);
    t.add({l.label, fmt_fixed(l.value, decimals), l.unit});
  }
  return t.str();
}

std::string margin_table(const LinkScenario& s, const ModcodChoice& c) {
  Table t({"MODCOD", "eta [bit/sym]", "required Es/N0 [dB]", "link Eb/N0 [dB]", "margin [dB]",
           "throughput [Mbit/s]", "meets margin"});
  for (const auto& m : c.margins) {
    const Modcod& r = s.modcods.rows()[m.index];
    const bool best = c.best && *c.best == m.index;
    t.add({r.name, fmt_fixed(r.spectral_efficiency, 4), fmt_fixed(r.required_es_n0_db, 2),
           fmt_fixed(m.eb_n0_db, 2), fmt_fixed(m.margin_db, 2), mbps(m.throughput_bps),
           best ? "yes (best)" : (m.meets_margin ? "yes" : "no")});
  }
  return t.str();
}

std::string pass_table(const LinkScenario& s, const LinkAnalysis& a) {
  // Scan columns only for the ends that have an array.
  bool tx_scan = false, rx_scan = false;
  for (const auto& p : a.pass) {
    tx_scan = tx_scan || std::isfinite(p.budget.tx_scan_deg);
    rx_scan = rx_scan || std::isfinite(p.budget.rx_scan_deg);
  }
  std::vector<std::string> header = {"elev [deg]", "range [km]", "delay [ms]", "Doppler [kHz]"};
  if (tx_scan) header.push_back("tx scan [deg]");
  if (rx_scan) header.push_back("rx scan [deg]");
  for (const char* h : {"Es/N0 [dB]", "MODCOD", "margin [dB]", "throughput [Mbit/s]"}) header.push_back(h);
  Table t(header);
  for (const auto& p : a.pass) {
    const LinkBudget& b = p.budget;
    const ModcodMargin* m = p.choice.best_margin();
    std::vector<std::string> row = {fmt_fixed(b.elevation_deg, 1), fmt_fixed(b.slant_range_km, 1),
                                    fmt_fixed(1000.0 * b.delay_s, 3),
                                    fmt_fixed(b.doppler_hz / 1000.0 + 0.0, 2)};
    if (tx_scan) row.push_back(fmt_fixed(b.tx_scan_deg, 1));
    if (rx_scan) row.push_back(fmt_fixed(b.rx_scan_deg, 1));
    row.push_back(fmt_fixed(b.es_n0_db, 2));
    row.push_back(m ? s.modcods.rows()[m->index].name
                    : (b.available ? "none keeps margin" : "out of scan range"));
    row.push_back(m ? fmt_fixed(m->margin_db, 2) : "-");
    row.push_back(mbps(p.choice.throughput_bps()));
    t.add(std::move(row));
  }
  return t.str();
}

// MODCOD margins at the reference elevation, the best choice and the pass table.
std::string modcod_sections(const LinkScenario& s, const LinkAnalysis& a) {
  std::string out;
  out += "MODCOD margins at " + format_number(a.reference.elevation_deg) +
         " deg (margin = link Es/N0 - required - implementation margin)\n";
  out += margin_table(s, a.reference_choice);
  if (const ModcodMargin* m = a.reference_choice.best_margin()) {
    out += "Best: " + s.modcods.rows()[m->index].name + ", " + mbps(m->throughput_bps) + " Mbit/s with " +
           fmt_fixed(m->margin_db, 2) + " dB margin\n";
  } else {
    out += "Best: no MODCOD keeps the required margin at this elevation\n";
  }
  if (!a.pass.empty()) {
    out += "\nOver the pass (best MODCOD at each elevation)\n";
    out += pass_table(s, a);
  }
  return out;
}

std::string warnings_and_cautions(const LinkAnalysis& a) {
  std::string out;
  for (const auto& w : a.warnings) out += "\nWarning: " + w;
  if (!a.warnings.empty()) out += "\n";
  for (const auto& c : a.cautions) out += "\n" + c + "\n";
  return out;
}

}  // namespace

std::string link_modcod_text(const LinkScenario& s, const LinkAnalysis& a) {
  return modcod_sections(s, a) + warnings_and_cautions(a);
}

std::string link_report_text(const LinkScenario& s, const LinkAnalysis& a) {
  std::string out;
  out += "Link: " + (s.name.empty() ? std::string("(unnamed)") : s.name) + "  [" + s.source + "]\n";
  auto end = [](const auto& x) {
    return (x.name.empty() ? std::string("(unnamed)") : x.name) +
           (x.platform == Platform::satellite ? " (satellite)" : " (ground)");
  };
  out += "From " + end(s.transmitter) + " to " + end(s.receiver) + "; circular orbit at " +
         format_number(s.altitude_km) + " km, pass up to " + format_number(s.max_elevation_deg) + " deg\n";
  out += "MODCODs: " + s.modcod_source + "; required margin " + format_number(s.required_margin_db) +
         " dB, implementation margin " + format_number(s.implementation_margin_db) + " dB\n";
  out +=
      "Model: spherical Earth (R_e = 6378.137 km), not rotating; Doppler first order on the rising "
      "half\n\n";
  out += "Link budget at " + format_number(a.reference.elevation_deg) + " deg elevation\n";
  out += budget_table(a.reference);
  if (!a.reference.available) out += "No link at this elevation: " + a.reference.unavailable_reason + "\n";
  out += "\n" + modcod_sections(s, a);
  if (!a.notes.empty()) out += "\n";
  for (const auto& n : a.notes) out += "Antenna model, " + n + "\n";
  out += warnings_and_cautions(a);
  return out;
}

namespace {

int run(const LinkOptions& o) {
  require_output_paths({{"--json", o.json}, {"--svg", o.svg}, {"--svg-esn0", o.svg_esn0}});
  std::optional<double> elevation;
  if (!o.elevation.empty()) {
    const double e = parse_real("--elevation", o.elevation);
    if (!(e >= 0.0 && e <= 90.0)) {
      throw UsageError("--elevation = '" + o.elevation + "' is not allowed; allowed: 0 to 90 degrees");
    }
    elevation = e;
  }
  const LinkScenario s = load_link_scenario(o.scenario);
  LinkAnalysis a;
  try {
    a = analyse_link(s, elevation);
  } catch (const ConfigError& e) {
    if (e.parameter() == "elevation_deg") throw ConfigError("--elevation", e.value(), e.allowed());
    throw;
  }

  if (!o.quiet) std::fputs(link_report_text(s, a).c_str(), stdout);
  if (!o.json.empty()) write_output(o.json, link_analysis_to_json(s, a), "JSON");
  if (!o.svg.empty()) write_output(o.svg, link_throughput_svg(s, a), "SVG");
  if (!o.svg_esn0.empty()) write_output(o.svg_esn0, link_es_n0_svg(s, a), "SVG");

  bool closes = a.reference_choice.best.has_value();
  for (const auto& p : a.pass) closes = closes || p.choice.best.has_value();
  return closes ? kOk : kFail;
}

}  // namespace

void register_link(CLI::App& app) {
  auto opts = std::make_shared<LinkOptions>();
  CLI::App* s = app.add_subcommand(
      "link",
      "Link budget and MODCOD choice from a TOML scenario (docs/link-scenario.md): the budget at one "
      "elevation, every MODCOD's margin, and the best MODCOD and throughput over the pass. Exit 1 when no "
      "MODCOD keeps the required margin at any elevation");
  s->add_option("scenario", opts->scenario, "Scenario file (TOML)")->required();
  s->add_option("--json", opts->json, "Write the analysis as JSON to FILE");
  s->add_option("--svg", opts->svg, "Write throughput and MODCOD against elevation as SVG to FILE");
  s->add_option("--svg-esn0", opts->svg_esn0,
                "Write link Es/N0 against elevation with the MODCOD thresholds as SVG");
  s->add_option(
      "--elevation", opts->elevation,
      "Elevation in degrees (0 to 90) of the budget table (default: the scenario's link.elevation_deg, "
      "else the lowest pass elevation)");
  s->add_flag("--quiet", opts->quiet, "Do not print the tables");
  s->callback([opts] { exit_status() = run(*opts); });
}

}  // namespace qamsight::cli
