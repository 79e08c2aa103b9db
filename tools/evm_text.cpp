// Text rendering of EVM budgets for the terminal.
#include "evm_text.hpp"

#include <cmath>

#include "cli.hpp"

namespace qamsight::cli {

namespace {

std::string pct(double v) { return fmt_fixed(v, 2); }
std::string db(double v) { return std::isfinite(v) ? fmt_fixed(v, 2) : (v < 0 ? "-inf" : "-"); }

std::string rate_text(double hz) {
  if (hz >= 1e9) return format_number(hz / 1e9) + " GBd";
  if (hz >= 1e6) return format_number(hz / 1e6) + " MBd";
  if (hz >= 1e3) return format_number(hz / 1e3) + " kBd";
  return format_number(hz) + " Bd";
}

std::string verdict_line(const char* what, const EvmVerdict& v) {
  return std::string(what) + pct(v.measured_pct) + " % (" + db(v.measured_db) + " dB) against " + pct(v.limit_pct) +
         " % (" + db(v.limit_db) + " dB): margin " + fmt_fixed(v.margin_db, 2) + " dB, required " +
         fmt_fixed(v.required_margin_db, 2) + " dB: " + verdict_word(v.pass) + "\n";
}

}  // namespace

std::string evm_budget_text(const EvmBudgetReport& r) {
  const EvmLineup& l = r.lineup;
  const EvmPrediction& p = r.prediction;
  std::string out;
  out += "EVM budget" + (l.name.empty() ? std::string() : ": " + l.name) + "\n";
  out += l.modulation + " at " + rate_text(l.symbol_rate_hz) + ", ";
  if (l.pulse.samples_per_symbol > 1) {
    out += "RRC roll-off " + format_number(l.pulse.roll_off) + ", span " + std::to_string(l.pulse.span_symbols) +
           " symbols, " + std::to_string(l.pulse.samples_per_symbol) + " samples per symbol";
  } else {
    out += "symbol-rate model (no pulse shaping)";
  }
  out += "; Es/N0 " + (std::isfinite(p.es_n0_db) ? fmt_fixed(p.es_n0_db, 2) + " dB" : std::string("no noise")) +
         "; phase tracker " + (p.tracking ? "on" : "off") + "\n\n";

  bool parts = false;
  for (const auto& c : p.contributions) parts = parts || !c.part.empty();
  std::vector<std::string> header = {"contribution"};
  if (parts) header.push_back("part");
  for (const char* h : {"EVM [%]", "EVM [dB]", "share [%]"}) header.push_back(h);
  Table t(header);
  for (const auto& c : p.contributions) {
    std::vector<std::string> row = {c.name};
    if (parts) row.push_back(c.part.empty() ? "-" : c.part);
    row.push_back(pct(c.evm_pct));
    row.push_back(db(c.evm_db));
    row.push_back(fmt_fixed(100.0 * c.share, 1));
    t.add(std::move(row));
  }
  std::vector<std::string> total = {"composite (root-sum-square)"};
  if (parts) total.push_back("");
  total.push_back(pct(p.total_pct));
  total.push_back(db(p.total_db));
  total.push_back(p.contributions.empty() ? "-" : "100.0");
  t.add(std::move(total));
  out += t.str();

  if (p.contributions.empty()) {
    out += "No impairment given: the predicted EVM is 0.\n";
  } else {
    const auto& d = p.contributions[p.dominant];
    out += "Dominant: " + d.name + (d.part.empty() ? std::string() : " (" + d.part + ")") + ", " +
           fmt_fixed(100.0 * d.share, 1) + " % of EVM^2\n";
  }
  if (p.rms_phase_deg > 0.0) {
    out += "Residual RMS phase error " + fmt_fixed(p.rms_phase_deg, 3) + " deg";
    if (p.rms_jitter_s > 0.0) out += " (RMS jitter " + fmt_fixed(p.rms_jitter_s * 1e12, 3) + " ps at the carrier)";
    out += "\n";
  }
  if (r.limit) {
    out += "Limit: " + pct(r.limit->pct) + " % (" + db(r.limit->db) + " dB), " + r.limit->source;
    out += "\n";
  } else {
    out += "Limit: none given (no verdict)\n";
  }
  if (r.verdict) out += verdict_line("Predicted: ", *r.verdict);
  if (r.simulation) {
    const auto& s = *r.simulation;
    out += "Simulated (waveform link, data-aided): " + pct(s.rms_pct) + " % (" + db(s.rms_db) + " dB) over " +
           std::to_string(s.frames) + " frames, " + std::to_string(s.symbols) + " symbols; " +
           fmt_fixed(100.0 * (s.rms_pct / p.total_pct - 1.0), 1) + " % relative to the prediction\n";
    if (r.simulated_verdict) out += verdict_line("Simulated: ", *r.simulated_verdict);
  }
  if (r.allowance) {
    const auto& a = *r.allowance;
    out += "Allowance (" + a.quantity + ", target " + pct(a.target_pct) + " %): ";
    if (a.found) {
      out += fmt_fixed(a.value, 3) + " " + a.unit + "; predicted EVM there " + pct(a.prediction.total_pct) + " %";
      if (!a.detail.empty()) out += "; " + a.detail;
      out += "\n";
      if (!a.reason.empty()) out += "  note: " + a.reason + "\n";
    } else {
      out += "none found: " + a.reason + "\n";
    }
  }
  bool any_note = !p.notes.empty();
  for (const auto& c : p.contributions) any_note = any_note || !c.note.empty();
  if (any_note) {
    out += "\nNotes:\n";
    for (const auto& c : p.contributions) {
      if (!c.note.empty()) out += "  " + c.key + ": " + c.note + "\n";
    }
    for (const auto& n : p.notes) out += "  " + n + "\n";
  }
  return out;
}

}  // namespace qamsight::cli
