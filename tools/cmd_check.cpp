// `qamsight check`: the regression gate against theory or a baseline run.
#include <cstdio>

#include "cli.hpp"
#include "qamsight/io.hpp"
#include "qamsight/regression.hpp"

namespace qamsight::cli {

namespace {

struct CheckOptions {
  std::string result;
  std::string baseline;
  double confidence = 0.99;
  bool no_holm = false;
  bool also_theory = false;
  std::string target_ber = "1e-4";
  std::string junit;
};

std::string report_table(const GateReport& rep) {
  Table t({"modulation", "Eb/N0 dB", "errors/bits", "BER", rep.kind == "theory" ? "theory" : "baseline", "p-value",
           "alpha", "verdict"});
  for (const auto& r : rep.rows) {
    const auto& p = r.point;
    t.add({p.spec.modulation, fmt_fixed(p.spec.eb_n0_db, 2),
           std::to_string(p.counts.bit_errors) + "/" + fmt_sci(static_cast<double>(p.counts.bits), 3),
           fmt_sci(p.ber, 3), r.tested ? fmt_sci(r.reference_ber, 3) : "-", r.tested ? fmt_sci(r.p_value, 2) : "-",
           r.tested ? fmt_sci(r.alpha, 2) : "-", !r.tested ? "skipped: " + r.note : r.failed ? "FAIL: " + r.note : "pass"});
  }
  std::string out = t.str();
  Table l({"modulation", "target BER", "measured Eb/N0 dB", rep.kind == "theory" ? "theory Eb/N0 dB" : "baseline Eb/N0 dB",
           "loss dB"});
  for (const auto& il : rep.losses) {
    l.add({il.modulation, fmt_sci(il.target_ber, 2), il.available ? fmt_fixed(il.measured_eb_n0_db, 3) : "-",
           fmt_fixed(il.reference_eb_n0_db, 3), il.available ? fmt_fixed(il.loss_db, 3) : il.note});
  }
  out += "\nImplementation loss at the target BER (log-linear interpolation of the measured curve)\n\n" + l.str();
  return out;
}

int run(const CheckOptions& o) {
  require_output_paths({{"--junit", o.junit}});
  GateConfig g;
  g.confidence = o.confidence;
  g.holm = !o.no_holm;
  g.target_ber = parse_real("--target-ber", o.target_ber);
  const SweepResult result = sweep_from_json(read_text_file(o.result, "result"), o.result);
  if (result.points.empty()) throw InputError(o.result + ": key 'points' is empty; nothing to check");
  std::vector<GateReport> reports;
  try {
    if (!o.baseline.empty()) {
      const SweepResult base = sweep_from_json(read_text_file(o.baseline, "baseline"), o.baseline);
      reports.push_back(check_against_baseline(result, base, g));
      if (o.also_theory) reports.push_back(check_against_theory(result, g));
    } else {
      reports.push_back(check_against_theory(result, g));
    }
  } catch (const ConfigError& e) {
    rethrow_with_option_names(e);
  }
  bool pass = true;
  std::string junit;
  for (const auto& rep : reports) {
    std::printf("Check against %s (family-wise confidence %s%s)\n\n%s\n", rep.kind.c_str(),
                format_number(g.confidence).c_str(), g.holm ? ", Holm-corrected" : ", per point",
                report_table(rep).c_str());
    std::size_t fails = 0, tested = 0;
    for (const auto& r : rep.rows) fails += r.failed, tested += r.tested;
    std::printf("%s: %zu of %zu tested points %s\n\n", rep.pass ? "PASS" : "FAIL", rep.pass ? tested : fails, tested,
                rep.pass ? "consistent" : "flagged");
    pass = pass && rep.pass;
    junit += gate_junit_xml(rep);
  }
  if (!o.junit.empty()) {
    if (reports.size() > 1) {
      // Several suites: wrap them.
      std::string body;
      for (const auto& rep : reports) {
        std::string x = gate_junit_xml(rep);
        body += x.substr(x.find("<testsuite"));
      }
      junit = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites>\n" + body + "</testsuites>\n";
    }
    write_output(o.junit, junit, "JUnit XML");
  }
  return pass ? kOk : kFail;
}

}  // namespace

void register_check(CLI::App& app) {
  auto o = std::make_shared<CheckOptions>();
  CLI::App* s = app.add_subcommand("check",
                                   "Regression gate: a sweep JSON against AWGN theory or a baseline JSON "
                                   "(exit 0 pass, 1 regression, 2 usage or input error)");
  s->add_option("result", o->result, "Sweep results (JSON written by `qamsight sweep --json`)")->required();
  s->add_option("--baseline", o->baseline, "Baseline sweep JSON from an earlier run");
  s->add_flag("--also-theory", o->also_theory, "With --baseline, also check against theory");
  s->add_option("--confidence", o->confidence, "Family-wise confidence (false-alarm rate = 1 - confidence)")
      ->capture_default_str();
  s->add_flag("--no-holm", o->no_holm, "Test each point at the full level (no multiplicity correction)");
  s->add_option("--target-ber", o->target_ber, "BER at which implementation loss is reported")->capture_default_str();
  s->add_option("--junit", o->junit, "Write a JUnit XML report to FILE");
  s->callback([o] { exit_status() = run(*o); });
}

}  // namespace qamsight::cli
