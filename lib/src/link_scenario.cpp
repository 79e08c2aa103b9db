// link_scenario: reads and checks a link scenario written in TOML (schema below).
//
// Schema (also in docs/link-scenario.md). Keys are lower case; every key not listed is an error.
// Numbers may be written as integers or floats; "opt" keys may be left out.
//
//   [link]
//   name = "..."                          opt, string
//   frequency_ghz = 19.7                  one of frequency_ghz (0, 3000] / frequency_hz (0, 3e12]
//   symbol_rate_mbd = 50.0                one of symbol_rate_mbd (0, 1e6] / symbol_rate_bd (0, 1e12]
//   roll_off = 0.2                        [0, 1]; occupied bandwidth Rs (1 + roll_off)
//   required_margin_db = 3.0              [0, 100], margin every chosen MODCOD must keep
//   implementation_margin_db = 0.5        opt [0, 100], default 0; subtracted from every margin
//   elevation_deg = 30.0                  opt [0, 90]; elevation of the budget table (default: the
//                                         lowest pass elevation)
//   [orbit]
//   constellation = "..."                 opt, string (a label)
//   altitude_km = 870.0                   (0, 1e6], circular orbit
//   [pass]                                opt (then link.elevation_deg is required)
//   max_elevation_deg = 90.0              opt (0, 90], default 90 (overhead pass)
//   elevations_deg = [10, 20, 30]         each in [0, max_elevation_deg]; or instead:
//   min_elevation_deg = 10.0              [0, max_elevation_deg] together with
//   step_deg = 10.0                       (0, 90]: min, min + step, ... and max_elevation_deg
//   [losses]                              opt; every loss opt [0, 300] dB, default 0
//   atmospheric_db, rain_db, pointing_db, polarisation_db, other_db
//   elevation_scaling = "none"            opt "none" | "cosecant" (atmospheric and rain given at
//                                         the zenith, scaled by 1/sin E)
//   [transmitter] / [receiver]
//   platform = "satellite"                "satellite" | "ground" (one of each)
//   name = "..."                          opt, string
//   feeder_loss_db = 0.5                  opt [0, 50], default 0
//   transmitter only, exactly one of:
//     eirp_dbw [-100, 200] (then no antenna table) | power_dbw [-100, 100] | power_w (0, 1e9] |
//     element_power_dbw [-100, 60] (array antennas: EIRP = P_el + 10 log10 N + G_array)
//   receiver only, exactly one of:
//     g_over_t_db_k [-100, 100] (then no antenna table) | system_temperature_k (0, 1e6] |
//     antenna_temperature_k [0, 1e5] together with noise_figure_db [0, 40]
//   [transmitter.antenna] / [receiver.antenna]
//   type = "fixed"                        "fixed" | "array"
//     fixed: gain_dbi [-50, 100]
//     array: model = "scan-loss" | "lattice"; max_scan_deg opt (0, 90]; array_loss_db opt [0, 50]
//       scan-loss: elements (integer, 1 to 1e7), element_gain_dbi [-30, 40],
//                  scan_loss_exponent opt [0, 10], default 1.2 (common practice)
//       lattice:   lattice = "rectangular" | "triangular", columns and rows (integers, 1 to 16384,
//                  product at most 16384), spacing_wavelengths (0, 10],
//                  row_spacing_wavelengths opt (0, 10] (default: spacing, or spacing sqrt(3)/2
//                  on a triangular lattice), element_pattern_exponent opt [0, 20], default 1,
//                  scan_azimuth_deg opt [-360, 360], default 0
//   [modcods]
//   source = "dvb-s2"                     "dvb-s2" | "file" | "gmi" | "table"
//     file:  path = "modcods.csv"         CSV or JSON (by extension), relative to the scenario
//     gmi:   modulations = ["qpsk", "16qam"], code_rates = [0.5, "3/4"], gap_db [0, 30]
//     table: [[modcods.row]] with name, modulation, code (opt), rate (number or "3/4"),
//            bits_per_symbol_info, required_es_n0_db, source (opt)
#include <toml++/toml.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <set>

#include "qamsight/io.hpp"
#include "qamsight/link.hpp"

#include "toml_names.hpp"

namespace qamsight {

namespace {

using detail::toml_number;
using detail::toml_type_name;

/// Levenshtein distance (for "did you mean" hints).
std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diag = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t up = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diag + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diag = up;
    }
  }
  return row[b.size()];
}

/// Reads the keys of one TOML table, remembering which it used, so that finish() can reject the
/// rest. Every message names the source, the line where toml++ knows it, and the dotted key.
class Reader {
 public:
  Reader(const toml::table& table, std::string path, const std::string& source)
      : t_(table), path_(std::move(path)), source_(source) {}

  std::string key(std::string_view k) const {
    return path_.empty() ? std::string(k) : path_ + "." + std::string(k);
  }
  std::string at(const toml::node* n) const {
    const auto line = n ? n->source().begin.line : 0;
    return line > 0 ? source_ + ":" + std::to_string(line) : source_;
  }
  std::string here() const { return at(&t_); }
  [[noreturn]] void fail(const toml::node* n, const std::string& message) const {
    throw InputError(at(n) + ": " + message);
  }

  const toml::node* node(std::string_view k) {
    used_.insert(std::string(k));
    return t_.get(k);
  }
  bool has(std::string_view k) const { return t_.contains(k); }

  std::optional<double> number(std::string_view k, double lo, double hi, bool open_low = false,
                               const char* unit = "") {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_number()) fail(n, key(k) + " must be a number, not " + toml_type_name(*n));
    const double v = toml_number(*n);
    if (!std::isfinite(v) || (open_low ? v <= lo : v < lo) || v > hi) {
      fail(n, key(k) + " = " + format_number(v) + " is not allowed; allowed: " +
                  (open_low ? "greater than " + format_number(lo) + " and at most "
                            : format_number(lo) + " to ") +
                  format_number(hi) + unit);
    }
    return v;
  }
  double required_number(std::string_view k, double lo, double hi, bool open_low = false,
                         const char* unit = "") {
    if (!has(k)) missing(k);
    return *number(k, lo, hi, open_low, unit);
  }
  std::optional<long long> integer(std::string_view k, long long lo, long long hi) {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_integer()) fail(n, key(k) + " must be an integer, not " + toml_type_name(*n));
    const long long v = n->value<long long>().value();
    if (v < lo || v > hi) {
      fail(n, key(k) + " = " + std::to_string(v) + " is not allowed; allowed: " + std::to_string(lo) +
                  " to " + std::to_string(hi));
    }
    return v;
  }
  std::optional<std::string> string(std::string_view k) {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_string()) fail(n, key(k) + " must be a string, not " + toml_type_name(*n));
    return n->value<std::string>().value();
  }
  std::string choice(std::string_view k, const std::vector<std::string>& allowed, bool required,
                     const std::string& fallback = {}) {
    const auto s = string(k);
    if (!s) {
      if (required) missing(k);
      return fallback;
    }
    if (std::find(allowed.begin(), allowed.end(), *s) == allowed.end()) {
      std::string list;
      for (const auto& a : allowed) list += (list.empty() ? "" : ", ") + ("'" + a + "'");
      fail(t_.get(k), key(k) + " = '" + *s + "' is not allowed; allowed: " + list);
    }
    return *s;
  }
  const toml::table* table(std::string_view k) {
    const toml::node* n = node(k);
    if (!n) return nullptr;
    if (!n->is_table()) fail(n, key(k) + " must be a table, not " + toml_type_name(*n));
    return n->as_table();
  }
  const toml::array* array(std::string_view k) {
    const toml::node* n = node(k);
    if (!n) return nullptr;
    if (!n->is_array()) fail(n, key(k) + " must be an array, not " + toml_type_name(*n));
    return n->as_array();
  }
  /// A missing key; a present unknown key that looks like it (a typo) is named instead.
  [[noreturn]] void missing(std::string_view k) const {
    for (const auto& [name, v] : t_) {
      const std::string n(name.str());
      if (!used_.count(n) && n != k && edit_distance(n, k) <= 2) {
        fail(&v, "unknown key '" + key(n) + "'; did you mean '" + key(k) + "'?");
      }
    }
    fail(&t_, "missing required key '" + key(k) + "'");
  }
  /// Exactly one of the keys is present; returns its index.
  std::size_t exactly_one(const std::vector<std::string>& keys) const {
    std::vector<std::size_t> present;
    for (std::size_t i = 0; i < keys.size(); ++i)
      if (has(keys[i])) present.push_back(i);
    std::string list;
    for (const auto& k : keys) list += (list.empty() ? "" : ", ") + key(k);
    if (present.empty()) fail(&t_, "missing key: give one of " + list);
    if (present.size() > 1) {
      fail(t_.get(keys[present[1]]),
           key(keys[present[0]]) + " and " + key(keys[present[1]]) + " conflict; give only one of " + list);
    }
    return present[0];
  }
  /// Rejects every key not read.
  void finish() const {
    for (const auto& [k, v] : t_) {
      if (used_.count(std::string(k.str()))) continue;
      std::vector<std::string> names(used_.begin(), used_.end());
      std::string list;
      for (const auto& n : names) list += (list.empty() ? "" : ", ") + n;
      const std::string where = path_.empty() ? "at the top level" : "in [" + path_ + "]";
      fail(&v, "unknown key '" + key(k.str()) + "'; allowed " + where + ": " + list);
    }
  }
  /// Keys that belong to another mode of the same table: present means an error.
  void forbid(std::initializer_list<const char*> keys, const std::string& why) const {
    for (const char* k : keys)
      if (has(k)) fail(t_.get(k), key(k) + " is not used " + why);
  }

  const toml::table& raw() const { return t_; }
  const std::string& path() const { return path_; }

 private:
  const toml::table& t_;
  std::string path_;
  const std::string& source_;
  std::set<std::string> used_;
};

AntennaSpec read_antenna(Reader& r) {
  AntennaSpec a;
  const std::string type = r.choice("type", {"fixed", "array"}, true);
  if (type == "fixed") {
    r.forbid({"model", "elements", "element_gain_dbi", "scan_loss_exponent", "lattice", "columns", "rows",
              "spacing_wavelengths", "row_spacing_wavelengths", "element_pattern_exponent",
              "scan_azimuth_deg", "max_scan_deg", "array_loss_db"},
             "with type = 'fixed' (array keys)");
    a.kind = AntennaKind::fixed;
    a.gain_dbi = r.required_number("gain_dbi", -50.0, 100.0, false, " dBi");
    r.finish();
    return a;
  }
  r.forbid({"gain_dbi"}, "with type = 'array' (the gain follows from the array model)");
  const std::string model = r.choice("model", {"scan-loss", "lattice"}, true);
  if (const auto v = r.number("max_scan_deg", 0.0, 90.0, true, " deg")) a.max_scan_deg = *v;
  a.array_loss_db = r.number("array_loss_db", 0.0, 50.0, false, " dB").value_or(0.0);
  if (model == "scan-loss") {
    r.forbid({"lattice", "columns", "rows", "spacing_wavelengths", "row_spacing_wavelengths",
              "element_pattern_exponent", "scan_azimuth_deg"},
             "with model = 'scan-loss' (lattice keys)");
    a.kind = AntennaKind::scan_loss_array;
    if (!r.has("elements")) r.missing("elements");
    a.elements = static_cast<std::size_t>(*r.integer("elements", 1, 10'000'000));
    a.element_gain_dbi = r.required_number("element_gain_dbi", -30.0, 40.0, false, " dBi");
    a.scan_loss_exponent = r.number("scan_loss_exponent", 0.0, 10.0).value_or(kDefaultScanLossExponent);
    r.finish();
    return a;
  }
  r.forbid({"elements", "element_gain_dbi", "scan_loss_exponent"},
           "with model = 'lattice' (the gain follows from the lattice; use columns and rows)");
  PlanarArrayConfig c;
  c.lattice = r.choice("lattice", {"rectangular", "triangular"}, true) == "triangular"
                  ? ArrayLattice::triangular
                  : ArrayLattice::rectangular;
  if (!r.has("columns")) r.missing("columns");
  if (!r.has("rows")) r.missing("rows");
  c.columns = static_cast<unsigned>(*r.integer("columns", 1, 16384));
  c.rows = static_cast<unsigned>(*r.integer("rows", 1, 16384));
  if (std::size_t{c.columns} * c.rows > 16384) {
    r.fail(r.raw().get("rows"), r.key("columns") + " x " + r.key("rows") + " = " +
                                    std::to_string(std::size_t{c.columns} * c.rows) +
                                    " elements is not allowed; allowed: at most 16384");
  }
  if (c.lattice == ArrayLattice::triangular && (c.columns < 2 || c.rows < 2)) {
    r.fail(r.raw().get("lattice"), r.key("lattice") +
                                       " = 'triangular' needs at least 2 columns and 2 rows (a single "
                                       "line is a rectangular lattice)");
  }
  c.column_spacing_wavelengths = r.required_number("spacing_wavelengths", 0.0, 10.0, true, " wavelengths");
  c.row_spacing_wavelengths =
      r.number("row_spacing_wavelengths", 0.0, 10.0, true, " wavelengths").value_or(0.0);
  c.element_pattern_exponent = r.number("element_pattern_exponent", 0.0, 20.0).value_or(1.0);
  a.scan_azimuth_deg = r.number("scan_azimuth_deg", -360.0, 360.0, false, " deg").value_or(0.0);
  r.finish();
  const double az = a.scan_azimuth_deg;
  a = [&] {
    AntennaSpec built = AntennaSpec::lattice_array(c);
    built.max_scan_deg = a.max_scan_deg;
    built.array_loss_db = a.array_loss_db;
    built.scan_azimuth_deg = az;
    return built;
  }();
  return a;
}

Platform read_platform(Reader& r) {
  return r.choice("platform", {"satellite", "ground"}, true) == "satellite" ? Platform::satellite
                                                                            : Platform::ground;
}

std::optional<AntennaSpec> read_antenna_table(Reader& parent, const std::string& source) {
  const toml::table* t = parent.table("antenna");
  if (!t) return std::nullopt;
  Reader r(*t, parent.key("antenna"), source);
  return read_antenna(r);
}

TransmitterSpec read_transmitter(Reader& r, const std::string& source) {
  TransmitterSpec tx;
  tx.platform = read_platform(r);
  tx.name = r.string("name").value_or("");
  tx.feeder_loss_db = r.number("feeder_loss_db", 0.0, 50.0, false, " dB").value_or(0.0);
  const std::size_t which = r.exactly_one({"eirp_dbw", "power_dbw", "power_w", "element_power_dbw"});
  switch (which) {
    case 0:
      tx.eirp_dbw = r.number("eirp_dbw", -100.0, 200.0, false, " dBW");
      break;
    case 1:
      tx.power_dbw = r.number("power_dbw", -100.0, 100.0, false, " dBW");
      break;
    case 2:
      tx.power_dbw = linear_to_db(*r.number("power_w", 0.0, 1e9, true, " W"));
      break;
    default:
      tx.element_power_dbw = r.number("element_power_dbw", -100.0, 60.0, false, " dBW");
      break;
  }
  if (tx.eirp_dbw && r.has("antenna")) {
    r.fail(r.raw().get("antenna"), r.key("antenna") + " is not used with " + r.key("eirp_dbw") +
                                       " (EIRP already includes the antenna); give a power instead, or "
                                       "remove the antenna table");
  }
  tx.antenna = read_antenna_table(r, source);
  if (!tx.eirp_dbw && !tx.antenna) r.missing("antenna");
  if (tx.element_power_dbw && !tx.antenna->is_array()) {
    r.fail(r.raw().get("element_power_dbw"),
           r.key("element_power_dbw") + " needs an array antenna (" + r.key("antenna.type") + " = 'array')");
  }
  r.finish();
  return tx;
}

ReceiverSpec read_receiver(Reader& r, const std::string& source) {
  ReceiverSpec rx;
  rx.platform = read_platform(r);
  rx.name = r.string("name").value_or("");
  rx.feeder_loss_db = r.number("feeder_loss_db", 0.0, 50.0, false, " dB").value_or(0.0);
  if (r.has("g_over_t_db_k")) {
    rx.g_over_t_db_k = r.number("g_over_t_db_k", -100.0, 100.0, false, " dB/K");
    r.forbid({"system_temperature_k", "antenna_temperature_k", "noise_figure_db", "antenna"},
             "with g_over_t_db_k (G/T already includes antenna gain and noise temperature)");
  } else {
    if (r.has("system_temperature_k")) {
      r.forbid({"antenna_temperature_k", "noise_figure_db"}, "with system_temperature_k");
      rx.system_temperature_k = r.number("system_temperature_k", 0.0, 1e6, true, " K");
    } else if (r.has("antenna_temperature_k") || r.has("noise_figure_db")) {
      if (!r.has("antenna_temperature_k")) r.missing("antenna_temperature_k");
      if (!r.has("noise_figure_db")) r.missing("noise_figure_db");
      rx.antenna_temperature_k = r.number("antenna_temperature_k", 0.0, 1e5, false, " K");
      rx.noise_figure_db = r.number("noise_figure_db", 0.0, 40.0, false, " dB");
    } else {
      r.fail(&r.raw(), "missing key: give one of " + r.key("g_over_t_db_k") + ", " +
                           r.key("system_temperature_k") + ", or " + r.key("antenna_temperature_k") +
                           " with " + r.key("noise_figure_db"));
    }
    rx.antenna = read_antenna_table(r, source);
    if (!rx.antenna) r.missing("antenna");
  }
  r.finish();
  return rx;
}

/// A code rate written as a number or a fraction string ("3/4"); `allow_one` admits rate 1
/// (uncoded rows of a table).
double read_rate(Reader& r, const toml::node& n, const std::string& key, bool allow_one) {
  double v = std::nan("");
  if (n.is_number()) {
    v = toml_number(n);
  } else if (n.is_string()) {
    const std::string s = n.value<std::string>().value();
    const auto slash = s.find('/');
    char* end_p = nullptr;
    char* end_q = nullptr;
    const std::string ps = s.substr(0, slash), qs = slash == std::string::npos ? "" : s.substr(slash + 1);
    const double p = std::strtod(ps.c_str(), &end_p);
    const double q = std::strtod(qs.c_str(), &end_q);
    if (slash == std::string::npos || ps.empty() || qs.empty() || *end_p != '\0' || *end_q != '\0' ||
        q == 0.0) {
      r.fail(&n, key + " = '" + s + "' is not a rate; write a number such as 0.75 or a fraction \"3/4\"");
    }
    v = p / q;
  } else {
    r.fail(&n, key + " must be a number or a fraction string, not " + toml_type_name(n));
  }
  if (!(v > 0.0 && (allow_one ? v <= 1.0 : v < 1.0))) {
    r.fail(&n, key + " = " + format_number(v) +
                   " is not allowed; allowed: " + (allow_one ? "0 < rate <= 1" : "0 < rate < 1"));
  }
  return v;
}

std::vector<double> read_rates(Reader& r, const toml::array& a, const std::string& k) {
  std::vector<double> out;
  for (std::size_t i = 0; i < a.size(); ++i) {
    out.push_back(read_rate(r, *a.get(i), r.key(k) + "[" + std::to_string(i) + "]", false));
  }
  return out;
}

ModcodTable read_modcods(Reader& r, const std::string& source, std::string& description) {
  const std::string kind = r.choice("source", {"dvb-s2", "file", "gmi", "table"}, true);
  if (kind == "dvb-s2") {
    r.finish();
    description = "built-in DVB-S2 thresholds (ETSI EN 302 307-1 Table 13, ideal, from memory)";
    return ModcodTable::dvb_s2_normal_frame();
  }
  if (kind == "file") {
    const auto p = r.string("path");
    if (!p) r.missing("path");
    r.finish();
    std::filesystem::path path(*p);
    if (path.is_relative()) path = std::filesystem::path(source).parent_path() / path;
    std::string text;
    try {
      text = read_text_file(path.string(), "MODCOD table");
    } catch (const InputError& e) {
      r.fail(r.raw().get("path"), r.key("path") + ": " + e.what());
    }
    description = "file " + path.string();
    std::string ext = path.extension().string();
    for (auto& ch : ext) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
    if (ext == ".csv") return ModcodTable::from_csv(text, path.string());
    if (ext == ".json") return ModcodTable::from_json(text, path.string());
    r.fail(r.raw().get("path"),
           r.key("path") + " = '" + *p + "' is not allowed; allowed: a .csv or .json file");
  }
  if (kind == "gmi") {
    const toml::array* mods = r.array("modulations");
    if (!mods) r.missing("modulations");
    const toml::array* rates = r.array("code_rates");
    if (!rates) r.missing("code_rates");
    const double gap = r.required_number("gap_db", 0.0, 30.0, false, " dB");
    std::vector<std::string> names;
    for (std::size_t i = 0; i < mods->size(); ++i) {
      const toml::node& n = *mods->get(i);
      if (!n.is_string()) {
        r.fail(&n,
               r.key("modulations") + "[" + std::to_string(i) + "] must be a string, not " + toml_type_name(n));
      }
      names.push_back(n.value<std::string>().value());
    }
    if (names.empty()) r.fail(mods, r.key("modulations") + " is empty; give at least one modulation");
    const std::vector<double> rs = read_rates(r, *rates, "code_rates");
    if (rs.empty()) r.fail(rates, r.key("code_rates") + " is empty; give at least one code rate");
    r.finish();
    description = "GMI (BICM) thresholds + " + format_number(gap) + " dB gap";
    try {
      return ModcodTable::from_gmi_threshold(names, rs, gap);
    } catch (const ConfigError& e) {
      r.fail(mods, r.key(e.parameter() == "modulation" ? "modulations" : e.parameter()) + " = " + e.value() +
                       " is not allowed; allowed: " + e.allowed());
    }
  }
  // Inline table.
  const toml::array* rows = r.array("row");
  if (!rows) r.missing("row");
  r.finish();
  ModcodTable t;
  for (std::size_t i = 0; i < rows->size(); ++i) {
    const toml::node& n = *rows->get(i);
    const std::string key = r.key("row") + "[" + std::to_string(i) + "]";
    if (!n.is_table()) r.fail(&n, key + " must be a table ([[modcods.row]]), not " + toml_type_name(n));
    Reader row(*n.as_table(), key, source);
    Modcod m;
    const auto name = row.string("name");
    if (!name) row.missing("name");
    m.name = *name;
    const auto mod = row.string("modulation");
    if (!mod) row.missing("modulation");
    m.modulation = *mod;
    m.code = row.string("code").value_or("");
    const toml::node* rate = row.node("rate");
    if (!rate) row.missing("rate");
    m.rate = read_rate(row, *rate, row.key("rate"), true);
    m.spectral_efficiency = row.required_number("bits_per_symbol_info", 0.0, 64.0, true, " bit/symbol");
    m.required_es_n0_db = row.required_number("required_es_n0_db", -200.0, 200.0, false, " dB");
    m.source = row.string("source").value_or(source);
    row.finish();
    try {
      t.add(std::move(m));
    } catch (const ConfigError& e) {
      std::string field = e.parameter().substr(e.parameter().rfind('.') + 1);
      row.fail(row.raw().get(field), key + "." + field + " ('" + *name + "') = " + e.value() +
                                         " is not allowed; allowed: " + e.allowed());
    }
  }
  if (t.empty()) r.fail(rows, r.key("row") + " is empty; give at least one MODCOD row");
  description = "inline table";
  return t;
}

}  // namespace

LinkScenario parse_link_scenario(std::string_view toml_text, const std::string& source) {
  toml::table root;
  try {
    root = toml::parse(toml_text, std::string_view(source));
  } catch (const toml::parse_error& e) {
    const auto& b = e.source().begin;
    throw InputError(source + ":" + std::to_string(b.line) + ":" + std::to_string(b.column) +
                     ": TOML syntax error: " + std::string(e.description()));
  }
  Reader top(root, "", source);
  LinkScenario s;
  s.source = source;

  auto section = [&](const char* name, bool required) -> const toml::table* {
    const toml::table* t = top.table(name);
    if (!t && required) top.fail(nullptr, "missing required table [" + std::string(name) + "]");
    return t;
  };

  // [link]
  const toml::table* link_t = section("link", true);
  Reader link(*link_t, "link", source);
  s.name = link.string("name").value_or("");
  if (link.exactly_one({"frequency_ghz", "frequency_hz"}) == 0) {
    s.frequency_hz = 1e9 * *link.number("frequency_ghz", 0.0, 3000.0, true, " GHz");
  } else {
    s.frequency_hz = *link.number("frequency_hz", 0.0, 3e12, true, " Hz");
  }
  if (link.exactly_one({"symbol_rate_mbd", "symbol_rate_bd"}) == 0) {
    s.symbol_rate_bd = 1e6 * *link.number("symbol_rate_mbd", 0.0, 1e6, true, " MBd");
  } else {
    s.symbol_rate_bd = *link.number("symbol_rate_bd", 0.0, 1e12, true, " Bd");
  }
  s.roll_off = link.required_number("roll_off", 0.0, 1.0);
  s.required_margin_db = link.required_number("required_margin_db", 0.0, 100.0, false, " dB");
  s.implementation_margin_db =
      link.number("implementation_margin_db", 0.0, 100.0, false, " dB").value_or(0.0);
  s.reference_elevation_deg = link.number("elevation_deg", 0.0, 90.0, false, " deg");
  link.finish();

  // [orbit]
  const toml::table* orbit_t = section("orbit", true);
  Reader orbit(*orbit_t, "orbit", source);
  const std::string constellation = orbit.string("constellation").value_or("");
  s.altitude_km = orbit.required_number("altitude_km", 0.0, 1e6, true, " km");
  orbit.finish();
  if (s.name.empty()) s.name = constellation;

  // [pass]
  if (const toml::table* pass_t = section("pass", false)) {
    Reader pass(*pass_t, "pass", source);
    s.max_elevation_deg = pass.number("max_elevation_deg", 0.0, 90.0, true, " deg").value_or(90.0);
    const double top_e = s.max_elevation_deg;
    if (pass.has("elevations_deg")) {
      pass.forbid({"min_elevation_deg", "step_deg"}, "with pass.elevations_deg (give a list or a range)");
      const toml::array* a = pass.array("elevations_deg");
      for (std::size_t i = 0; i < a->size(); ++i) {
        const toml::node& n = *a->get(i);
        const std::string k = "pass.elevations_deg[" + std::to_string(i) + "]";
        if (!n.is_number()) pass.fail(&n, k + " must be a number, not " + toml_type_name(n));
        const double e = toml_number(n);
        if (!(e >= 0.0 && e <= top_e)) {
          pass.fail(&n, k + " = " + format_number(e) + " is not allowed; allowed: 0 to " +
                            format_number(top_e) + " deg (pass.max_elevation_deg)");
        }
        s.pass_elevations_deg.push_back(e);
      }
      if (s.pass_elevations_deg.empty()) pass.fail(a, "pass.elevations_deg is empty");
      if (s.pass_elevations_deg.size() > 10000)
        pass.fail(a, "pass.elevations_deg has more than 10000 values");
    } else if (pass.has("min_elevation_deg") || pass.has("step_deg")) {
      const double lo = pass.required_number("min_elevation_deg", 0.0, top_e, false, " deg");
      const double step = pass.required_number("step_deg", 0.0, 90.0, true, " deg");
      for (int i = 0;; ++i) {
        const double e = std::round((lo + i * step) * 1e9) / 1e9;
        if (e > top_e + 1e-9) break;
        s.pass_elevations_deg.push_back(std::min(e, top_e));
      }
      if (s.pass_elevations_deg.back() < top_e - 1e-9) s.pass_elevations_deg.push_back(top_e);
    } else {
      pass.fail(pass_t,
                "missing key: give pass.elevations_deg, or pass.min_elevation_deg with pass.step_deg");
    }
    std::sort(s.pass_elevations_deg.begin(), s.pass_elevations_deg.end());
    s.pass_elevations_deg.erase(std::unique(s.pass_elevations_deg.begin(), s.pass_elevations_deg.end()),
                                s.pass_elevations_deg.end());
    pass.finish();
  } else if (!s.reference_elevation_deg) {
    top.fail(nullptr, "missing required table [pass] (or link.elevation_deg for a single elevation)");
  }

  // [losses]
  if (const toml::table* loss_t = section("losses", false)) {
    Reader l(*loss_t, "losses", source);
    s.losses.atmospheric_db = l.number("atmospheric_db", 0.0, 300.0, false, " dB").value_or(0.0);
    s.losses.rain_db = l.number("rain_db", 0.0, 300.0, false, " dB").value_or(0.0);
    s.losses.pointing_db = l.number("pointing_db", 0.0, 300.0, false, " dB").value_or(0.0);
    s.losses.polarisation_db = l.number("polarisation_db", 0.0, 300.0, false, " dB").value_or(0.0);
    s.losses.other_db = l.number("other_db", 0.0, 300.0, false, " dB").value_or(0.0);
    s.losses.scaling = l.choice("elevation_scaling", {"none", "cosecant"}, false, "none") == "cosecant"
                           ? LossScaling::cosecant
                           : LossScaling::none;
    l.finish();
  }

  // [transmitter], [receiver]
  const toml::table* tx_t = section("transmitter", true);
  Reader tx(*tx_t, "transmitter", source);
  s.transmitter = read_transmitter(tx, source);
  const toml::table* rx_t = section("receiver", true);
  Reader rx(*rx_t, "receiver", source);
  s.receiver = read_receiver(rx, source);
  if (s.transmitter.platform == s.receiver.platform) {
    rx.fail(rx_t->get("platform"),
            "transmitter.platform and receiver.platform are both '" +
                std::string(s.receiver.platform == Platform::ground ? "ground" : "satellite") +
                "'; one end must be 'satellite' and the other 'ground'");
  }

  // [modcods]
  const toml::table* m_t = section("modcods", true);
  Reader m(*m_t, "modcods", source);
  s.modcods = read_modcods(m, source, s.modcod_source);

  top.finish();
  return s;
}

LinkScenario load_link_scenario(const std::string& path) {
  return parse_link_scenario(read_text_file(path, "link scenario"), path);
}

}  // namespace qamsight
