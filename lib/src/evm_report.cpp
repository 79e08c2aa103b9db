// evm_report: JSON and SVG (budget bars) of an EVM budget run.
#include <cmath>
#include <cstdio>

#include <nlohmann/json.hpp>

#include "qamsight/evm_budget.hpp"
#include "qamsight/plot.hpp"

namespace qamsight {

namespace {

using nlohmann::ordered_json;

ordered_json num(double v) { return std::isfinite(v) ? ordered_json(v) : ordered_json(nullptr); }

std::string_view amplifier_name(AmplifierKind k) {
  switch (k) {
    case AmplifierKind::saleh:
      return "saleh";
    case AmplifierKind::rapp:
      return "rapp";
    default:
      return "none";
  }
}

std::string_view tracker_name(TrackerMode m) {
  switch (m) {
    case TrackerMode::on:
      return "on";
    case TrackerMode::off:
      return "off";
    default:
      return "auto";
  }
}

std::string_view allowance_name(EvmAllowanceKind k) {
  switch (k) {
    case EvmAllowanceKind::phase_noise:
      return "phase-noise";
    case EvmAllowanceKind::iq_imbalance:
      return "iq";
    default:
      return "backoff";
  }
}

ordered_json verdict_json(const EvmVerdict& v) {
  return ordered_json{{"evm_pct", num(v.measured_pct)},       {"evm_db", num(v.measured_db)},
                      {"limit_pct", num(v.limit_pct)},        {"limit_db", num(v.limit_db)},
                      {"margin_db", num(v.margin_db)},        {"required_margin_db", num(v.required_margin_db)},
                      {"pass", v.pass}};
}

ordered_json lineup_json(const EvmLineup& l) {
  ordered_json j;
  j["name"] = l.name;
  j["modulation"] = l.modulation;
  j["symbol_rate_hz"] = l.symbol_rate_hz;
  j["samples_per_symbol"] = l.pulse.samples_per_symbol;
  j["roll_off"] = l.pulse.roll_off;
  j["span_symbols"] = l.pulse.span_symbols;
  j["es_n0_db"] = num(lineup_es_n0_db(l));
  if (l.noise) {
    j["signal_dbm"] = l.noise->signal_dbm;
    j["noise_figure_db"] = l.noise->noise_figure_db;
  }
  j["phase_noise_linewidth_hz"] = l.phase_noise_linewidth_hz;
  j["phase_noise_mask"] = l.phase_noise_mask != nullptr;
  j["phase_noise_mask_offset_db"] = l.phase_noise_mask_offset_db;
  j["tracker"] = tracker_name(l.tracker);
  j["tracker_bandwidth"] = l.tracker_bandwidth;
  j["iq_gain_db"] = l.iq_gain_db;
  j["iq_phase_deg"] = l.iq_phase_deg;
  j["dc_offset"] = {l.dc_offset.real(), l.dc_offset.imag()};
  j["amplifier"] = amplifier_name(l.amplifier);
  j["input_backoff_db"] = l.input_backoff_db;
  j["adc_bits"] = l.adc_bits;
  j["adc_loading_db"] = l.adc_loading_db;
  j["cfo_hz"] = l.cfo_hz;
  j["measurement_removes_frequency"] = l.measurement_removes_frequency;
  j["measurement_symbols"] = l.measurement_symbols;
  return j;
}

std::string fixed(double v, int d) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", d, v);
  return buf;
}

}  // namespace

std::string evm_budget_json(const EvmBudgetReport& r) {
  const EvmPrediction& p = r.prediction;
  ordered_json j;
  j["lineup"] = lineup_json(r.lineup);
  ordered_json cs = ordered_json::array();
  for (const auto& c : p.contributions) {
    cs.push_back(ordered_json{{"key", c.key},
                              {"name", c.name},
                              {"part", c.part},
                              {"evm_pct", num(c.evm_pct)},
                              {"evm_db", num(c.evm_db)},
                              {"share", num(c.share)},
                              {"note", c.note}});
  }
  j["contributions"] = cs;
  j["total"] = ordered_json{{"evm_pct", num(p.total_pct)}, {"evm_db", num(p.total_db)}};
  j["dominant"] = p.contributions.empty() ? ordered_json(nullptr) : ordered_json(p.contributions[p.dominant].key);
  j["tracking"] = p.tracking;
  j["rms_phase_deg"] = num(p.rms_phase_deg);
  if (r.lineup.carrier_frequency_hz > 0.0) j["rms_jitter_s"] = num(p.rms_jitter_s);
  if (r.limit) {
    ordered_json l{{"source", r.limit->source}, {"pct", num(r.limit->pct)}, {"db", num(r.limit->db)}};
    if (r.limit->row) {
      l["document"] = r.limit->row->document;
      l["table"] = r.limit->row->table;
      l["edition"] = r.limit->row->edition;
      l["provenance"] = provenance_name(r.limit->row->provenance);
    }
    j["limit"] = l;
  }
  if (r.verdict) j["verdict"] = verdict_json(*r.verdict);
  if (r.simulation) {
    const auto& s = *r.simulation;
    ordered_json sj{{"evm_pct", num(s.rms_pct)},
                    {"evm_db", num(s.rms_db)},
                    {"frames", s.frames},
                    {"symbols", s.symbols},
                    {"simulated_es_n0_db", num(s.setup.point.es_n0_db)},
                    {"relative_difference", num(s.rms_pct / p.total_pct - 1.0)}};
    if (r.simulated_verdict) sj["verdict"] = verdict_json(*r.simulated_verdict);
    j["simulation"] = sj;
  }
  if (r.allowance) {
    const auto& a = *r.allowance;
    ordered_json aj{{"kind", allowance_name(a.kind)}, {"found", a.found},     {"quantity", a.quantity},
                    {"value", num(a.value)},          {"unit", a.unit},       {"detail", a.detail},
                    {"target_pct", num(a.target_pct)}, {"reason", a.reason}};
    if (a.found) aj["evm_pct_at_solution"] = num(a.prediction.total_pct);
    j["allowance"] = aj;
  }
  j["notes"] = p.notes;
  return j.dump(2) + "\n";
}

std::string evm_budget_svg(const EvmBudgetReport& r) {
  const EvmPrediction& p = r.prediction;
  plot::Bars bars;
  bars.horizontal = true;
  bars.value_decimals = 2;
  bars.value_suffix = " %";
  plot::BarGroup predicted{.label = "predicted", .values = {}, .color = plot::palette_color(0)};
  plot::BarGroup simulated{.label = "simulated", .values = {}, .color = plot::palette_color(2)};
  for (const auto& c : p.contributions) {
    std::string name = c.name;
    if (!c.part.empty()) name = c.part + ": " + name;
    bars.categories.push_back(name);
    predicted.values.push_back(c.evm_pct);
    simulated.values.push_back(std::nan(""));
  }
  bars.categories.push_back("composite (root-sum-square)");
  predicted.values.push_back(p.total_pct);
  simulated.values.push_back(r.simulation ? r.simulation->rms_pct : std::nan(""));
  bars.groups.push_back(predicted);
  if (r.simulation) bars.groups.push_back(simulated);
  const std::string title = "EVM budget" + (r.lineup.name.empty() ? std::string() : ": " + r.lineup.name);
  double top = p.total_pct;
  if (r.simulation) top = std::max(top, r.simulation->rms_pct);
  if (r.limit) top = std::max(top, r.limit->pct);
  const int height = std::max(300, 150 + 34 * static_cast<int>(bars.categories.size()) * (r.simulation ? 2 : 1));
  plot::Figure fig(title);
  fig.size(900, height).x_axis({.label = "RMS EVM [%]", .min = 0.0, .max = 1.12 * top}).bars(bars);
  if (r.limit) {
    // One label for both lines: two labels side by side at lines ~1 dB apart would overlap.
    const double margin = r.verdict ? r.verdict->required_margin_db : 0.0;
    std::string label = "limit " + fixed(r.limit->pct, 2) + " %";
    if (margin > 0.0) {
      const double with = r.limit->pct * std::pow(10.0, -margin / 20.0);
      label += " (dashed: with " + fixed(margin, 1) + " dB margin, " + fixed(with, 2) + " %)";
      fig.vline(with, {.label = "", .color = plot::palette_color(4), .dash = plot::Dash::dashed, .line_width = 1.5});
    }
    fig.vline(r.limit->pct, {.label = label, .color = plot::palette_color(1), .dash = plot::Dash::solid, .line_width = 2.0});
  }
  return fig.svg();
}

}  // namespace qamsight
