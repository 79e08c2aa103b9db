// `qamsight theory`: AWGN reference BER/SER curves and the Eb/N0 needed for target error rates.
#include <cstdio>

#include "cli.hpp"
#include "qamsight/figures.hpp"
#include "qamsight/io.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/theory.hpp"

namespace qamsight::cli {

namespace {

struct TheoryOptions {
  std::string mod = "qpsk,16qam,64qam,256qam,1024qam";
  std::string ebn0, ebn0_range = "0,30,2";
  std::string target_ber = "1e-3,1e-5,1e-6";
  bool ser = false;
  std::string csv, svg;
};

int run(const TheoryOptions& o) {
  require_output_paths({{"--csv", o.csv}, {"--svg", o.svg}});
  const auto mods = split_list(o.mod);
  if (mods.empty()) throw UsageError("--mod = '" + o.mod + "' is not allowed; allowed: at least one modulation");
  std::vector<std::string> names;
  for (const auto& m : mods) {
    try {
      names.push_back(Constellation::from_name(m).name());
    } catch (const ConfigError& e) {
      rethrow_with_option_names(e);
    }
  }
  const std::vector<double> grid = o.ebn0.empty() ? parse_range("--ebn0-range", o.ebn0_range) : parse_real_list("--ebn0", o.ebn0);
  for (double x : grid) {
    if (x < -30.0 || x > 100.0) throw UsageError("--ebn0 = " + format_number(x) + " is not allowed; allowed: -30 to 100 dB");
  }
  const auto targets = parse_real_list("--target-ber", o.target_ber);
  for (double t : targets) {
    if (!(t > 0.0 && t < 0.1)) throw UsageError("--target-ber = " + format_number(t) + " is not allowed; allowed: 0 < target < 0.1");
  }
  std::vector<std::string> header = {"Eb/N0 dB"};
  for (const auto& n : names) header.push_back(n + (o.ser ? " BER" : ""));
  if (o.ser)
    for (const auto& n : names) header.push_back(n + " SER");
  Table t(header);
  std::string csv = "eb_n0_db";
  for (const auto& n : names) csv += ",ber_" + n;
  for (const auto& n : names) csv += ",ser_" + n;
  csv += "\n";
  for (double x : grid) {
    std::vector<std::string> row = {fmt_fixed(x, 2)};
    csv += format_number(x);
    for (const auto& n : names) {
      const double b = theory::ber_for(n, x);
      row.push_back(fmt_sci(b, 4));
      csv += "," + format_number(b);
    }
    for (const auto& n : names) {
      const double s = theory::ser_for(n, x);
      if (o.ser) row.push_back(fmt_sci(s, 4));
      csv += "," + format_number(s);
    }
    csv += "\n";
    t.add(row);
  }
  std::printf("AWGN theory, Gray mapping, exact expressions (Eb counts information bits)\n\n%s\n", t.str().c_str());
  Table req({"modulation", "target BER", "Eb/N0 dB", "Es/N0 dB"});
  for (const auto& n : names) {
    const double k = Constellation::from_name(n).bits_per_symbol();
    for (double tb : targets) {
      const double eb = theory::required_eb_n0_db(n, tb);
      req.add({n, fmt_sci(tb, 2), fmt_fixed(eb, 3), fmt_fixed(theory::es_n0_db_from_eb_n0_db(eb, k), 3)});
    }
  }
  std::printf("Required SNR for a target BER\n\n%s", req.str().c_str());
  if (!o.csv.empty()) write_output(o.csv, csv, "CSV");
  if (!o.svg.empty()) write_output(o.svg, theory_svg(names, grid), "SVG");
  return kOk;
}

}  // namespace

void register_theory(CLI::App& app) {
  auto o = std::make_shared<TheoryOptions>();
  CLI::App* s = app.add_subcommand("theory", "AWGN reference curves and required Eb/N0 for a target BER");
  s->add_option("--mod", o->mod, "Modulations, comma-separated")->capture_default_str();
  s->add_option("--ebn0", o->ebn0, "Eb/N0 values in dB, comma-separated");
  s->add_option("--ebn0-range", o->ebn0_range, "Eb/N0 grid MIN,MAX,STEP in dB")->capture_default_str();
  s->add_option("--target-ber", o->target_ber, "Target BERs for the required-SNR table")->capture_default_str();
  s->add_flag("--ser", o->ser, "Also print symbol error rates");
  s->add_option("--csv", o->csv, "Write the curves as CSV to FILE");
  s->add_option("--svg", o->svg, "Plot the curves as SVG to FILE");
  s->callback([o] { exit_status() = run(*o); });
}

}  // namespace qamsight::cli
