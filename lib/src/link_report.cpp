// link_report: JSON and SVG output of a link analysis (budget lines, MODCOD margins, the pass).
#include <algorithm>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>

#include "qamsight/link.hpp"
#include "qamsight/plot.hpp"

namespace qamsight {

namespace {

using nlohmann::ordered_json;

ordered_json number(double v) { return std::isfinite(v) ? ordered_json(v) : ordered_json(nullptr); }

const char* platform_name(Platform p) { return p == Platform::satellite ? "satellite" : "ground"; }

ordered_json budget_json(const LinkBudget& b) {
  ordered_json lines = ordered_json::array();
  for (const auto& l : b.lines()) {
    lines.push_back({{"key", l.key}, {"label", l.label}, {"value", number(l.value)}, {"unit", l.unit}});
  }
  return lines;
}

ordered_json margins_json(const LinkScenario& s, const ModcodChoice& c) {
  ordered_json rows = ordered_json::array();
  for (const auto& m : c.margins) {
    const Modcod& r = s.modcods.rows()[m.index];
    rows.push_back({{"name", r.name},
                    {"modulation", r.modulation},
                    {"code", r.code},
                    {"rate", r.rate},
                    {"bits_per_symbol_info", r.spectral_efficiency},
                    {"required_es_n0_db", r.required_es_n0_db},
                    {"margin_db", number(m.margin_db)},
                    {"eb_n0_db", number(m.eb_n0_db)},
                    {"throughput_bps", m.throughput_bps},
                    {"meets_margin", m.meets_margin},
                    {"source", r.source}});
  }
  return rows;
}

ordered_json best_json(const LinkScenario& s, const ModcodChoice& c) {
  const ModcodMargin* m = c.best_margin();
  if (!m) return nullptr;
  return {{"name", s.modcods.rows()[m->index].name},
          {"throughput_bps", m->throughput_bps},
          {"margin_db", number(m->margin_db)}};
}

/// The MODCOD chosen at a pass point, or why there is none.
std::string choice_name(const LinkScenario& s, const PassPoint& p) {
  const ModcodMargin* m = p.choice.best_margin();
  if (m) return s.modcods.rows()[m->index].name;
  return p.budget.available ? "margin short" : "beyond scan range";
}

/// Scenario name and the margins, written in the top-left corner of the plot.
void caption(plot::Figure& fig, const LinkScenario& s, double y_top, double y_step) {
  if (!s.name.empty()) fig.text(1.0, y_top, s.name, {.anchor = plot::Anchor::start, .font_size = 12.0});
  fig.text(1.0, y_top - y_step,
           "required margin " + format_number(s.required_margin_db) + " dB, implementation margin " +
               format_number(s.implementation_margin_db) + " dB, Rs = " +
               format_number(s.symbol_rate_bd / 1e6) + " MBd, roll-off " + format_number(s.roll_off),
           {.anchor = plot::Anchor::start, .font_size = 11.0});
}

}  // namespace

std::string link_analysis_to_json(const LinkScenario& s, const LinkAnalysis& a) {
  ordered_json j;
  j["program"] = "qamsight";
  j["version"] = std::string(version());
  ordered_json sc;
  sc["name"] = s.name;
  sc["source"] = s.source;
  sc["altitude_km"] = s.altitude_km;
  sc["max_elevation_deg"] = s.max_elevation_deg;
  sc["frequency_hz"] = s.frequency_hz;
  sc["symbol_rate_bd"] = s.symbol_rate_bd;
  sc["roll_off"] = s.roll_off;
  sc["required_margin_db"] = s.required_margin_db;
  sc["implementation_margin_db"] = s.implementation_margin_db;
  sc["modcod_source"] = s.modcod_source;
  sc["transmitter"] = {{"platform", platform_name(s.transmitter.platform)}, {"name", s.transmitter.name}};
  sc["receiver"] = {{"platform", platform_name(s.receiver.platform)}, {"name", s.receiver.name}};
  sc["model"] =
      "spherical Earth R_e = 6378.137 km, not rotating; circular orbit; Doppler first order, rising "
      "half of the pass; Es/N0 = C/N0 - 10 log10(Rs)";
  j["scenario"] = sc;

  ordered_json ref;
  ref["elevation_deg"] = a.reference.elevation_deg;
  ref["available"] = a.reference.available;
  ref["unavailable_reason"] = a.reference.unavailable_reason;
  ref["budget"] = budget_json(a.reference);
  ref["modcods"] = margins_json(s, a.reference_choice);
  ref["best"] = best_json(s, a.reference_choice);
  j["reference"] = ref;

  ordered_json pass = ordered_json::array();
  for (const auto& p : a.pass) {
    const LinkBudget& b = p.budget;
    const ModcodMargin* m = p.choice.best_margin();
    pass.push_back({{"elevation_deg", b.elevation_deg},
                    {"slant_range_km", b.slant_range_km},
                    {"delay_ms", 1000.0 * b.delay_s},
                    {"range_rate_m_s", number(b.range_rate_m_s)},
                    {"doppler_hz", number(b.doppler_hz)},
                    {"tx_scan_deg", number(b.tx_scan_deg)},
                    {"rx_scan_deg", number(b.rx_scan_deg)},
                    {"eirp_dbw", number(b.eirp_dbw)},
                    {"free_space_loss_db", b.free_space_loss_db},
                    {"total_loss_db", number(b.total_loss_db)},
                    {"g_over_t_db_k", number(b.g_over_t_db_k)},
                    {"c_over_n0_dbhz", number(b.c_over_n0_dbhz)},
                    {"es_n0_db", number(b.es_n0_db)},
                    {"available", b.available},
                    {"modcod", m ? ordered_json(s.modcods.rows()[m->index].name) : ordered_json(nullptr)},
                    {"margin_db", m ? number(m->margin_db) : ordered_json(nullptr)},
                    {"throughput_bps", m ? m->throughput_bps : 0.0}});
  }
  j["pass"] = pass;
  j["notes"] = a.notes;
  j["warnings"] = a.warnings;
  j["cautions"] = a.cautions;
  return j.dump(2) + "\n";
}

std::string link_throughput_svg(const LinkScenario& s, const LinkAnalysis& a) {
  std::vector<double> e, t;
  for (const auto& p : a.pass) {
    e.push_back(p.budget.elevation_deg);
    t.push_back(p.choice.throughput_bps() / 1e6);
  }
  const double top = t.empty() ? 1.0 : std::max(1e-9, *std::max_element(t.begin(), t.end()));
  const double y_max = plot::nice_ticks(0.0, top * 1.25, 8).hi;
  plot::Figure fig("Best MODCOD and throughput over the pass");
  fig.size(860, 540);
  fig.x_axis({.label = "elevation [deg]", .min = 0.0, .max = 90.0});
  fig.y_axis({.label = "throughput [Mbit/s]", .min = 0.0, .max = y_max});
  fig.legend(plot::LegendPlace::bottom_right);
  fig.step(e, t,
           {.label = "throughput (held from each elevation to the next)",
            .color = plot::palette_color(0),
            .line_width = 2.4});
  fig.points(e, t,
             {.label = "evaluated elevations",
              .color = plot::palette_color(0),
              .marker = plot::Marker::circle,
              .marker_size = 7.0});
  // One label per run of equal choices, above the middle of the run; labels of neighbouring
  // runs without a MODCOD (both at zero) are staggered so they cannot overlap.
  bool raise = false;
  for (std::size_t i = 0; i < a.pass.size();) {
    std::size_t j = i;
    const std::string name = choice_name(s, a.pass[i]);
    while (j + 1 < a.pass.size() && choice_name(s, a.pass[j + 1]) == name) ++j;
    const double x_end = j + 1 < a.pass.size() ? e[j + 1] : e[j];
    const bool none = !a.pass[i].choice.best;
    const double dy = none && raise ? -24.0 : -9.0;
    raise = none ? !raise : false;
    fig.text(0.5 * (e[i] + x_end), t[i], name,
             {.anchor = plot::Anchor::middle,
              .font_size = 11.5,
              .color = none ? std::optional(plot::Color{150, 40, 30}) : std::nullopt,
              .dy = dy});
    i = j + 1;
  }
  caption(fig, s, y_max * 0.95, y_max * 0.05);
  return fig.svg();
}

std::string link_es_n0_svg(const LinkScenario& s, const LinkAnalysis& a) {
  std::vector<double> e, es;
  std::vector<std::size_t> chosen;
  for (const auto& p : a.pass) {
    e.push_back(p.budget.elevation_deg);
    es.push_back(p.budget.es_n0_db);
    if (p.choice.best && std::find(chosen.begin(), chosen.end(), *p.choice.best) == chosen.end()) {
      chosen.push_back(*p.choice.best);
    }
  }
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (double v : es)
    if (std::isfinite(v)) lo = std::min(lo, v), hi = std::max(hi, v);
  for (std::size_t k : chosen) {
    const double level =
        s.modcods.rows()[k].required_es_n0_db + s.required_margin_db + s.implementation_margin_db;
    lo = std::min(lo, level), hi = std::max(hi, level);
  }
  if (!std::isfinite(lo)) lo = 0.0, hi = 10.0;
  const plot::LinearTicks ticks = plot::nice_ticks(lo - 2.0, hi + 0.3 * (hi - lo) + 3.0, 8);
  plot::Figure fig("Link Es/N0 and MODCOD thresholds over the pass");
  fig.size(860, 540);
  fig.x_axis({.label = "elevation [deg]", .min = 0.0, .max = 90.0});
  fig.y_axis({.label = "E_{s}/N_{0} [dB]", .min = ticks.lo, .max = ticks.hi});
  fig.legend(plot::LegendPlace::bottom_right);
  fig.line(e, es,
           {.label = "link E_{s}/N_{0}",
            .color = plot::palette_color(0),
            .marker = plot::Marker::circle,
            .line_width = 2.2});
  const double extra = s.required_margin_db + s.implementation_margin_db;
  for (std::size_t k = 0; k < chosen.size(); ++k) {
    const Modcod& m = s.modcods.rows()[chosen[k]];
    const double level = m.required_es_n0_db + extra;
    fig.hline(level, {.label = m.name + " needs " + format_number(std::round(level * 100) / 100) +
                               " dB with margins",
                      .color = plot::palette_color(1 + k % 5),
                      .dash = plot::Dash::dashed});
  }
  // Elevations without a link have no Es/N0 to draw; say so where they are.
  for (const auto& p : a.pass) {
    if (!p.budget.available) {
      fig.text(p.budget.elevation_deg, ticks.lo + 0.03 * (ticks.hi - ticks.lo), "beyond scan range",
               {.anchor = plot::Anchor::middle, .font_size = 10.5, .color = plot::Color{150, 40, 30}});
    }
  }
  caption(fig, s, ticks.hi - 0.05 * (ticks.hi - ticks.lo), 0.05 * (ticks.hi - ticks.lo));
  return fig.svg();
}

}  // namespace qamsight
