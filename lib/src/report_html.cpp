// report: renders a run's tables and SVG figures as one self-contained, printable HTML page.
#include "qamsight/report.hpp"

#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <optional>
#include <string_view>

#include "qamsight/core.hpp"
#include "qamsight/figures.hpp"
#include "qamsight/io.hpp"
#include "qamsight/sim.hpp"

namespace qamsight {

namespace {

using nlohmann::json;

void append_escaped(std::string& out, std::string_view s) {
  for (const char c : s) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      default: out += c;
    }
  }
}

std::string escaped(std::string_view s) {
  std::string out;
  append_escaped(out, s);
  return out;
}

bool valid_id(const std::string& id) {
  if (id.empty()) return false;
  for (const char c : id)
    if (!(std::isalnum(static_cast<unsigned char>(c)) || c == '-')) return false;
  return true;
}

// The <svg ...>...</svg> element of a figure document; anything before it (an XML
// declaration, a comment) is dropped, nothing after it is kept.
std::string svg_element(const std::string& svg, std::size_t section, std::size_t figure) {
  const auto begin = svg.find("<svg");
  const auto end = svg.rfind("</svg>");
  if (begin == std::string::npos || end == std::string::npos || end < begin) {
    throw ConfigError("sections[" + std::to_string(section) + "].figures[" + std::to_string(figure) + "].svg",
                      svg.substr(0, 40), "an <svg> element");
  }
  return svg.substr(begin, end + 6 - begin);
}

bool looks_numeric(const std::string& s) {
  if (s.empty()) return false;
  const char c = s[0];
  return std::isdigit(static_cast<unsigned char>(c)) || ((c == '-' || c == '+' || c == '.') && s.size() > 1);
}

constexpr const char* kStyle = R"css(
:root { --ink:#1d2433; --muted:#5b6475; --rule:#d5dae3; --band:#f4f6f9; --accent:#1f5fa8;
        --pass:#1e7a3c; --fail:#b3261e; --best:#fff4cc; }
* { box-sizing: border-box; }
body { margin: 0 auto; max-width: 1060px; padding: 28px 32px 48px; color: var(--ink);
       font: 15px/1.5 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; background: #fff; }
header { border-bottom: 3px solid var(--accent); padding-bottom: 12px; margin-bottom: 18px; }
h1 { font-size: 28px; margin: 0 0 4px; letter-spacing: .2px; }
.subtitle { color: var(--muted); margin: 0; }
nav { background: var(--band); border: 1px solid var(--rule); border-radius: 6px; padding: 10px 16px;
      margin-bottom: 22px; }
nav strong { display: block; margin-bottom: 4px; }
nav ol { margin: 0; padding-left: 22px; columns: 2; }
nav a { color: var(--accent); text-decoration: none; }
section { margin: 0 0 30px; }
h2 { font-size: 21px; margin: 26px 0 6px; padding-bottom: 4px; border-bottom: 1px solid var(--rule); }
.badge { display: inline-block; font-size: 13px; font-weight: bold; color: #fff; border-radius: 4px;
         padding: 1px 9px; margin-left: 10px; vertical-align: 3px; }
.badge.pass { background: var(--pass); } .badge.fail { background: var(--fail); }
.lead { margin: 4px 0 12px; }
table { border-collapse: collapse; margin: 8px 0 16px; font-size: 13.5px; width: auto; }
caption { text-align: left; font-weight: bold; padding: 2px 0 6px; }
th, td { padding: 3px 10px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th, td.num { white-space: nowrap; }
td { max-width: 420px; }
th { background: var(--band); text-align: left; border-bottom: 2px solid var(--rule); }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.pass td:last-child { color: var(--pass); font-weight: bold; }
tr.fail td:last-child { color: var(--fail); font-weight: bold; }
tr.best td { background: var(--best); font-weight: bold; }
.tablewrap { overflow-x: auto; }
figure { margin: 10px 0 18px; page-break-inside: avoid; break-inside: avoid; }
figure svg { width: 100%; height: auto; max-width: 900px; display: block; border: 1px solid var(--rule);
             border-radius: 4px; }
figcaption { color: var(--muted); font-size: 13.5px; margin-top: 4px; }
ul.notes { color: var(--muted); font-size: 13.5px; margin: 4px 0 0; }
.missing { color: var(--muted); font-size: 13.5px; }
.cautions { border: 1px solid #e0b84c; background: #fffaf0; border-radius: 6px; padding: 10px 16px;
            margin-top: 26px; font-size: 13.5px; }
.cautions strong { display: block; margin-bottom: 4px; }
footer { margin-top: 26px; color: var(--muted); font-size: 12px; border-top: 1px solid var(--rule);
         padding-top: 8px; }
@media print {
  body { max-width: none; padding: 0; font-size: 11pt; }
  nav { display: none; }
  h2 { page-break-after: avoid; break-after: avoid; }
  table, figure { page-break-inside: avoid; break-inside: avoid; }
  figure svg { max-width: 17cm; }
}
)css";

void append_table(std::string& out, const ReportTable& t) {
  // A column is numeric when every non-empty cell of it looks like a number.
  std::vector<bool> numeric(t.header.size(), true);
  for (const auto& row : t.rows)
    for (std::size_t c = 0; c < row.size() && c < numeric.size(); ++c)
      if (!row[c].empty() && !looks_numeric(row[c])) numeric[c] = false;
  out += "<div class=\"tablewrap\"><table>";
  if (!t.caption.empty()) out += "<caption>" + escaped(t.caption) + "</caption>";
  out += "<thead><tr>";
  for (std::size_t c = 0; c < t.header.size(); ++c)
    out += std::string(numeric[c] && !t.rows.empty() ? "<th class=\"num\">" : "<th>") + escaped(t.header[c]) + "</th>";
  out += "</tr></thead><tbody>";
  for (std::size_t r = 0; r < t.rows.size(); ++r) {
    const std::string cls = r < t.row_class.size() ? t.row_class[r] : std::string();
    out += cls.empty() ? "<tr>" : "<tr class=\"" + escaped(cls) + "\">";
    for (std::size_t c = 0; c < t.rows[r].size(); ++c) {
      const bool num = c < numeric.size() && numeric[c];
      out += std::string(num ? "<td class=\"num\">" : "<td>") + escaped(t.rows[r][c]) + "</td>";
    }
    out += "</tr>";
  }
  out += "</tbody></table></div>\n";
}

std::string fixed(double v, int d) {
  if (!std::isfinite(v)) return "";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", d, v);
  return buf;
}

std::string sci(double v) {
  if (!std::isfinite(v)) return "";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.3g", v);
  return buf;
}

double number_or_nan(const json& j, const char* key) {
  const auto it = j.find(key);
  return it != j.end() && it->is_number() ? it->get<double>() : std::nan("");
}

std::string string_or_empty(const json& j, const char* key) {
  const auto it = j.find(key);
  return it != j.end() && it->is_string() ? it->get<std::string>() : std::string();
}

json read_json(const std::filesystem::path& p, std::string_view what) {
  const std::string text = read_text_file(p.string(), what);
  try {
    json j = json::parse(text);
    if (!j.is_object()) throw InputError(p.string() + ": " + std::string(what) + " is not a JSON object");
    return j;
  } catch (const json::exception& e) {
    throw InputError(p.string() + ": malformed " + std::string(what) + " (" + e.what() + ")");
  }
}

// Keys of a JSON object that must have a given shape; a wrong one names the file and the key.
const json& member(const json& j, const char* key, const std::filesystem::path& p, bool array) {
  const auto it = j.find(key);
  if (it == j.end() || (array ? !it->is_array() : !it->is_object())) {
    throw InputError(p.string() + ": key '" + key + "' must be " + (array ? "an array" : "an object"));
  }
  return *it;
}

std::optional<std::string> read_svg(const std::filesystem::path& p) {
  std::error_code ec;
  if (!std::filesystem::is_regular_file(p, ec)) return std::nullopt;
  std::string text = read_text_file(p.string(), "SVG figure");
  if (text.find("<svg") == std::string::npos || text.find("</svg>") == std::string::npos)
    throw InputError(p.string() + ": not an SVG document (no <svg> element)");
  return text;
}

ReportSection waterfall_section(const std::filesystem::path& p) {
  const SweepResult r = sweep_from_json(read_text_file(p.string(), "sweep JSON"), p.string());
  ReportSection s;
  s.id = "waterfall";
  s.title = "BER waterfall against theory";
  char lead[256];
  std::snprintf(lead, sizeof lead,
                "Monte-Carlo bit-error rates with exact Clopper-Pearson intervals at %.0f %% confidence, beside "
                "the exact AWGN theory. Eb/N0 counts information bits; seed %llu.",
                100.0 * r.config.confidence, static_cast<unsigned long long>(r.config.seed));
  s.lead = lead;
  ReportTable t;
  t.caption = "Measured points";
  t.header = {"modulation", "Eb/N0 [dB]", "Es/N0 [dB]", "bits", "bit errors", "BER", "interval", "theory", "theory inside"};
  std::size_t outside = 0;
  for (const auto& pt : r.points) {
    const bool has_theory = std::isfinite(pt.ber_theory);
    const bool inside = has_theory && pt.ber_theory >= pt.ber_low && pt.ber_theory <= pt.ber_high;
    if (has_theory && !inside) ++outside;
    std::string interval = "[";  // built stepwise: GCC 12 warns falsely on "literal" + string
    interval += sci(pt.ber_low);
    interval += ", ";
    interval += sci(pt.ber_high);
    interval += "]";
    t.rows.push_back({pt.spec.modulation, fixed(pt.spec.eb_n0_db, 2), fixed(pt.spec.es_n0_db, 2),
                      sci(static_cast<double>(pt.counts.bits)), std::to_string(pt.counts.bit_errors), sci(pt.ber),
                      interval, has_theory ? sci(pt.ber_theory) : "-",
                      has_theory ? (inside ? "yes" : "no") : "-"});
    t.row_class.push_back(has_theory ? (inside ? "pass" : "fail") : "");
  }
  s.tables.push_back(std::move(t));
  s.figures.push_back({waterfall_svg(r), "Measured BER (points with interval bars) and exact theory (lines)."});
  char note[200];
  std::snprintf(note, sizeof note,
                "%zu of %zu points have the theory value outside their interval (about %.0f %% are expected to "
                "by chance; the regression gate applies a family-wise correction).",
                outside, r.points.size(), 100.0 * (1.0 - r.config.confidence));
  s.notes.push_back(note);
  return s;
}

ReportSection evm_section(const std::filesystem::path& dir) {
  const auto p = dir / "evm-budget.json";
  const json j = read_json(p, "EVM budget JSON");
  const json& lineup = member(j, "lineup", p, false);
  const json& contributions = member(j, "contributions", p, true);
  ReportSection s;
  s.id = "evm-budget";
  s.title = "EVM budget";
  const std::string name = string_or_empty(lineup, "name");
  s.lead = "Predicted contribution of each impairment of the line-up" + (name.empty() ? std::string() : " '" + name + "'") +
           " (" + string_or_empty(lineup, "modulation") +
           "); the composite is the root-sum-square of the independent contributions.";
  ReportTable t;
  t.caption = "Contributions";
  t.header = {"contribution", "EVM [%]", "EVM [dB]", "share of total [%]", "note"};
  const std::string dominant = string_or_empty(j, "dominant");
  std::string dominant_name = dominant;
  for (const auto& c : contributions) {
    if (c.is_object() && string_or_empty(c, "key") == dominant) dominant_name = string_or_empty(c, "name");
    if (!c.is_object()) throw InputError(p.string() + ": key 'contributions' must hold objects");
    t.rows.push_back({string_or_empty(c, "name"), fixed(number_or_nan(c, "evm_pct"), 3), fixed(number_or_nan(c, "evm_db"), 2),
                      fixed(100.0 * number_or_nan(c, "share"), 1), string_or_empty(c, "note")});
    t.row_class.push_back(string_or_empty(c, "key") == dominant ? "best" : "");
  }
  if (const auto tot = j.find("total"); tot != j.end() && tot->is_object()) {
    t.rows.push_back({"composite (RSS)", fixed(number_or_nan(*tot, "evm_pct"), 3), fixed(number_or_nan(*tot, "evm_db"), 2), "100.0", ""});
    t.row_class.push_back("");
  }
  s.tables.push_back(std::move(t));
  if (const auto v = j.find("verdict"); v != j.end() && v->is_object()) {
    const bool pass = v->value("pass", false);
    s.verdict = pass ? "PASS" : "FAIL";
    ReportTable vt;
    vt.caption = "Verdict";
    vt.header = {"quantity", "EVM [%]", "EVM [dB]", "limit [%]", "limit [dB]", "margin [dB]", "required margin [dB]", "verdict"};
    vt.rows.push_back({"prediction", fixed(number_or_nan(*v, "evm_pct"), 3), fixed(number_or_nan(*v, "evm_db"), 2),
                       fixed(number_or_nan(*v, "limit_pct"), 2), fixed(number_or_nan(*v, "limit_db"), 2),
                       fixed(number_or_nan(*v, "margin_db"), 2), fixed(number_or_nan(*v, "required_margin_db"), 2),
                       pass ? "PASS" : "FAIL"});
    vt.row_class.push_back(pass ? "pass" : "fail");
    if (const auto sim = j.find("simulation"); sim != j.end() && sim->is_object()) {
      if (const auto sv = sim->find("verdict"); sv != sim->end() && sv->is_object()) {
        const bool spass = sv->value("pass", false);
        vt.rows.push_back({"full simulation", fixed(number_or_nan(*sv, "evm_pct"), 3), fixed(number_or_nan(*sv, "evm_db"), 2),
                           fixed(number_or_nan(*sv, "limit_pct"), 2), fixed(number_or_nan(*sv, "limit_db"), 2),
                           fixed(number_or_nan(*sv, "margin_db"), 2), fixed(number_or_nan(*sv, "required_margin_db"), 2),
                           spass ? "PASS" : "FAIL"});
        vt.row_class.push_back(spass ? "pass" : "fail");
      }
    }
    s.tables.push_back(std::move(vt));
  }
  if (const auto l = j.find("limit"); l != j.end() && l->is_object()) {
    std::string src = string_or_empty(*l, "source");
    const std::string provenance = string_or_empty(*l, "provenance");
    if (!provenance.empty() && src.find(provenance) == std::string::npos) src += " [" + provenance + "]";
    s.notes.push_back("Limit: " + src);
  }
  if (!dominant.empty()) s.notes.push_back("Dominant contribution (highlighted): " + dominant_name);
  if (const auto notes = j.find("notes"); notes != j.end() && notes->is_array())
    for (const auto& n : *notes)
      if (n.is_string()) s.notes.push_back(n.get<std::string>());
  if (auto svg = read_svg(dir / "evm-budget.svg"))
    s.figures.push_back({*svg, "Contributions and composite EVM in %, with the limit as a reference line."});
  return s;
}

// The link section; the link's cautions (transmit power, licensing) go to `cautions`.
ReportSection link_section(const std::filesystem::path& dir, std::vector<std::string>& cautions) {
  const auto p = dir / "link.json";
  const json j = read_json(p, "link JSON");
  if (const auto c = j.find("cautions"); c != j.end() && c->is_array())
    for (const auto& x : *c)
      if (x.is_string()) cautions.push_back(x.get<std::string>());
  const json& scenario = member(j, "scenario", p, false);
  const json& pass = member(j, "pass", p, true);
  ReportSection s;
  s.id = "modcod";
  s.title = "MODCOD over the pass";
  s.lead = "Link '" + string_or_empty(scenario, "name") + "': the MODCOD with the most throughput that keeps the required margin (" +
           fixed(number_or_nan(scenario, "required_margin_db"), 1) + " dB, plus " +
           fixed(number_or_nan(scenario, "implementation_margin_db"), 1) + " dB implementation margin) at each elevation. MODCOD table: " +
           string_or_empty(scenario, "modcod_source") + ".";
  ReportTable t;
  t.caption = "Chosen MODCOD against elevation";
  t.header = {"elevation [deg]", "slant range [km]", "Doppler [kHz]", "G/T [dB/K]", "Es/N0 [dB]", "MODCOD", "margin [dB]", "throughput [Mbit/s]"};
  for (const auto& e : pass) {
    if (!e.is_object()) throw InputError(p.string() + ": key 'pass' must hold objects");
    const bool available = e.value("available", false);
    std::string modcod = string_or_empty(e, "modcod");
    if (!available) modcod = "no link";
    else if (modcod.empty()) modcod = "none meets the margin";
    t.rows.push_back({fixed(number_or_nan(e, "elevation_deg"), 1), fixed(number_or_nan(e, "slant_range_km"), 1),
                      fixed(number_or_nan(e, "doppler_hz") / 1e3, 1), fixed(number_or_nan(e, "g_over_t_db_k"), 2),
                      fixed(number_or_nan(e, "es_n0_db"), 2), modcod, fixed(number_or_nan(e, "margin_db"), 2),
                      fixed(number_or_nan(e, "throughput_bps") / 1e6, 2)});
    t.row_class.push_back("");
  }
  s.tables.push_back(std::move(t));
  if (auto svg = read_svg(dir / "link-throughput.svg"))
    s.figures.push_back({*svg, "Throughput of the chosen MODCOD against elevation."});
  if (auto svg = read_svg(dir / "link-esn0.svg"))
    s.figures.push_back({*svg, "Link Es/N0 against elevation with the MODCOD thresholds."});
  for (const char* key : {"notes", "warnings"})
    if (const auto n = j.find(key); n != j.end() && n->is_array())
      for (const auto& x : *n)
        if (x.is_string()) s.notes.push_back(x.get<std::string>());
  return s;
}

}  // namespace

std::string report_html(const ReportDocument& d) {
  for (std::size_t i = 0; i < d.sections.size(); ++i) {
    if (!valid_id(d.sections[i].id))
      throw ConfigError("sections[" + std::to_string(i) + "].id", d.sections[i].id, "letters, digits and '-', not empty");
  }
  std::string out;
  out.reserve(1 << 20);
  out += "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n";
  out += "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n";
  out += "<title>" + escaped(d.title) + "</title>\n<style>" + std::string(kStyle) + "</style>\n</head>\n<body>\n";
  out += "<header><h1>" + escaped(d.title) + "</h1>";
  if (!d.subtitle.empty()) out += "<p class=\"subtitle\">" + escaped(d.subtitle) + "</p>";
  out += "</header>\n";
  if (!d.sections.empty()) {
    out += "<nav><strong>Contents</strong><ol>";
    for (const auto& s : d.sections) out += "<li><a href=\"#" + s.id + "\">" + escaped(s.title) + "</a></li>";
    out += "</ol></nav>\n";
  }
  for (std::size_t i = 0; i < d.sections.size(); ++i) {
    const auto& s = d.sections[i];
    out += "<section id=\"" + s.id + "\">\n<h2>" + escaped(s.title);
    if (s.verdict == "PASS") out += "<span class=\"badge pass\">PASS</span>";
    if (s.verdict == "FAIL") out += "<span class=\"badge fail\">FAIL</span>";
    out += "</h2>\n";
    if (!s.lead.empty()) out += "<p class=\"lead\">" + escaped(s.lead) + "</p>\n";
    for (const auto& t : s.tables) append_table(out, t);
    for (std::size_t f = 0; f < s.figures.size(); ++f) {
      out += "<figure>" + svg_element(s.figures[f].svg, i, f);
      if (!s.figures[f].caption.empty()) out += "<figcaption>" + escaped(s.figures[f].caption) + "</figcaption>";
      out += "</figure>\n";
    }
    if (!s.notes.empty()) {
      out += "<ul class=\"notes\">";
      for (const auto& n : s.notes) out += "<li>" + escaped(n) + "</li>";
      out += "</ul>\n";
    }
    out += "</section>\n";
  }
  if (!d.missing.empty()) {
    out += "<p class=\"missing\">Not in this run: ";
    for (std::size_t i = 0; i < d.missing.size(); ++i) out += (i ? "; " : "") + escaped(d.missing[i]);
    out += ".</p>\n";
  }
  if (!d.cautions.empty()) {
    out += "<div class=\"cautions\"><strong>Cautions</strong><ul>";
    for (const auto& c : d.cautions) out += "<li>" + escaped(c) + "</li>";
    out += "</ul></div>\n";
  }
  out += "<footer>Written by qamsight " QAMSIGHT_VERSION "; a single file with inline figures, no external resources.</footer>\n";
  out += "</body>\n</html>\n";
  return out;
}

ReportDocument report_from_folder(const std::string& folder) {
  namespace fs = std::filesystem;
  const fs::path dir(folder);
  std::error_code ec;
  if (!fs::is_directory(dir, ec)) throw InputError("report folder '" + folder + "': not a folder");
  const auto has = [&](const char* name) { return fs::is_regular_file(dir / name, ec); };
  ReportDocument d;
  d.subtitle = "Results gathered from " + folder;
  if (has("waterfall.json")) d.sections.push_back(waterfall_section(dir / "waterfall.json"));
  else d.missing.push_back("BER waterfall (waterfall.json)");
  {
    ReportSection s;
    s.id = "signal";
    s.title = "Signal views";
    s.lead = "Received constellation density, eye diagram and power spectrum of the demo waveform.";
    const struct {
      const char* file;
      const char* caption;
    } figs[] = {{"constellation.svg", "Constellation density of the received symbols (matched-filter output)."},
                {"eye.svg", "Eye diagram of the in-phase component at the matched-filter output."},
                {"spectrum.svg", "Welch power spectral density with the spectral mask."}};
    for (const auto& f : figs)
      if (auto svg = read_svg(dir / f.file)) s.figures.push_back({*svg, f.caption});
    if (!s.figures.empty()) d.sections.push_back(std::move(s));
    else d.missing.push_back("signal views (constellation.svg, eye.svg, spectrum.svg)");
  }
  if (has("evm-budget.json")) d.sections.push_back(evm_section(dir));
  else d.missing.push_back("EVM budget (evm-budget.json)");
  if (has("link.json")) d.sections.push_back(link_section(dir, d.cautions));
  else d.missing.push_back("MODCOD over the pass (link.json)");
  if (d.sections.empty())
    throw InputError("report folder '" + folder +
                     "': none of waterfall.json, constellation.svg, eye.svg, spectrum.svg, evm-budget.json, link.json found");
  d.cautions.push_back(
      "Simulation results support design work only; they do not authorise any transmission. Follow local "
      "regulations on spectrum use and RF exposure and licensed engineering practice.");
  return d;
}

}  // namespace qamsight
