// link_modcod: MODCOD tables (built-in DVB-S2, GMI thresholds, CSV/JSON files) and the choice.
#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>

#include "qamsight/figures.hpp"
#include "qamsight/information.hpp"
#include "qamsight/link.hpp"
#include "qamsight/modem.hpp"

namespace qamsight {

namespace {

std::string lower(std::string_view s) {
  std::string out(s);
  for (auto& ch : out) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  return out;
}

/// Constellation size named by a modulation ("qpsk" 4, "8psk" 8, "16apsk" 16, "64qam" 64);
/// 0 when the name does not say.
unsigned modulation_order(std::string_view name) {
  const std::string m = lower(name);
  if (m.find("bpsk") != std::string::npos) return 2;
  if (m.find("qpsk") != std::string::npos) return 4;
  unsigned order = 0;
  const auto res = std::from_chars(m.data(), m.data() + m.size(), order);
  if (res.ec != std::errc() || order < 2 || (order & (order - 1)) != 0) return 0;
  return order;
}

/// "3/4" for rates that are a fraction with a small denominator, else the decimal.
std::string rate_text(double rate) {
  for (int q = 1; q <= 20; ++q) {
    const double p = std::round(rate * q);
    if (std::abs(rate * q - p) < 1e-9 && p >= 1) {
      return q == 1 ? format_number(p) : format_number(p) + "/" + std::to_string(q);
    }
  }
  return format_number(rate);
}

/// Parses "0.75" or "3/4"; nullopt for anything else.
std::optional<double> parse_rate(std::string_view t) {
  auto number = [](std::string_view s, double& v) {
    const auto res = std::from_chars(s.data(), s.data() + s.size(), v);
    return !s.empty() && res.ec == std::errc() && res.ptr == s.data() + s.size() && std::isfinite(v);
  };
  double v = 0.0;
  const auto slash = t.find('/');
  if (slash == std::string_view::npos) {
    if (number(t, v)) return v;
    return std::nullopt;
  }
  double p = 0.0, q = 0.0;
  if (number(t.substr(0, slash), p) && number(t.substr(slash + 1), q) && q != 0.0) return p / q;
  return std::nullopt;
}

void check_row(const Modcod& m, std::size_t index, const std::vector<Modcod>& existing) {
  const std::string where = "modcods[" + std::to_string(index) + "] '" + m.name + "'";
  if (m.name.empty())
    throw ConfigError("modcods[" + std::to_string(index) + "].name", "''", "a non-empty name");
  for (const auto& e : existing) {
    if (e.name == m.name) throw ConfigError(where + ".name", m.name, "a name not used by another row");
  }
  if (!(m.rate > 0.0 && m.rate <= 1.0))
    throw ConfigError(where + ".rate", format_number(m.rate), "0 < rate <= 1");
  if (!std::isfinite(m.spectral_efficiency) || m.spectral_efficiency <= 0.0 || m.spectral_efficiency > 64.0) {
    throw ConfigError(where + ".bits_per_symbol_info", format_number(m.spectral_efficiency),
                      "greater than 0 and at most 64");
  }
  const unsigned order = modulation_order(m.modulation);
  if (order > 0) {
    const double most = m.rate * std::log2(static_cast<double>(order));
    if (m.spectral_efficiency > most * (1.0 + 1e-9)) {
      throw ConfigError(where + ".bits_per_symbol_info", format_number(m.spectral_efficiency),
                        "at most rate x log2(M) = " + format_number(most) + " for " + m.modulation);
    }
  }
  if (!std::isfinite(m.required_es_n0_db) || std::abs(m.required_es_n0_db) > 200.0) {
    throw ConfigError(where + ".required_es_n0_db", format_number(m.required_es_n0_db),
                      "finite, -200 to 200 dB");
  }
  const double bound = shannon_min_es_n0_db(m.spectral_efficiency);
  if (m.required_es_n0_db < bound) {
    char buf[160];
    std::snprintf(buf, sizeof buf,
                  "at least the Shannon bound 10 log10(2^eta - 1) = %.4f dB for eta = %.6g bit/symbol", bound,
                  m.spectral_efficiency);
    throw ConfigError(where + ".required_es_n0_db", format_number(m.required_es_n0_db), buf);
  }
}

/// Splits one CSV line, honouring double quotes ("" inside quotes is a quote).
std::vector<std::string> csv_cells(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char ch = line[i];
    if (quoted) {
      if (ch == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        cell += '"';
        ++i;
      } else if (ch == '"') {
        quoted = false;
      } else {
        cell += ch;
      }
    } else if (ch == '"') {
      quoted = true;
    } else if (ch == ',') {
      cells.push_back(cell);
      cell.clear();
    } else {
      cell += ch;
    }
  }
  cells.push_back(cell);
  for (auto& c : cells) {
    const auto b = c.find_first_not_of(" \t\r");
    const auto e = c.find_last_not_of(" \t\r");
    c = b == std::string::npos ? std::string() : c.substr(b, e - b + 1);
  }
  return cells;
}

const char* const kRequiredColumns[] = {"name", "modulation", "rate", "bits_per_symbol_info",
                                        "required_es_n0_db"};

}  // namespace

// ---------------------------------------------------------------------------------------------
// Table
// ---------------------------------------------------------------------------------------------

ModcodTable::ModcodTable(std::vector<Modcod> rows) {
  for (auto& r : rows) add(std::move(r));
}

void ModcodTable::add(Modcod row) {
  check_row(row, rows_.size(), rows_);
  rows_.push_back(std::move(row));
}

ModcodTable ModcodTable::dvb_s2_normal_frame() {
  // ETSI EN 302 307-1 Table 13, ideal Es/N0 at QEF (PER 1e-7), normal FECFRAME, no pilots,
  // AWGN. From memory (see the corroboration in the class comment); eta is
  // (K_bch - 80) / (90 (S + 1)), S = 64800 / (90 log2 M) slots, with K_bch of Table 5a.
  struct Row {
    const char* mod;
    const char* rate;
    double p, q, eta, es_n0;
  };
  static const Row rows[] = {
      {"QPSK", "1/4", 1, 4, 0.490243, -2.35},     {"QPSK", "1/3", 1, 3, 0.656448, -1.24},
      {"QPSK", "2/5", 2, 5, 0.789412, -0.30},     {"QPSK", "1/2", 1, 2, 0.988858, 1.00},
      {"QPSK", "3/5", 3, 5, 1.188304, 2.23},      {"QPSK", "2/3", 2, 3, 1.322253, 3.10},
      {"QPSK", "3/4", 3, 4, 1.487473, 4.03},      {"QPSK", "4/5", 4, 5, 1.587196, 4.68},
      {"QPSK", "5/6", 5, 6, 1.654663, 5.18},      {"QPSK", "8/9", 8, 9, 1.766451, 6.20},
      {"QPSK", "9/10", 9, 10, 1.788612, 6.42},    {"8PSK", "3/5", 3, 5, 1.779991, 5.50},
      {"8PSK", "2/3", 2, 3, 1.980636, 6.62},      {"8PSK", "3/4", 3, 4, 2.228124, 7.91},
      {"8PSK", "5/6", 5, 6, 2.478562, 9.35},      {"8PSK", "8/9", 8, 9, 2.646012, 10.69},
      {"8PSK", "9/10", 9, 10, 2.679207, 10.98},   {"16APSK", "2/3", 2, 3, 2.637201, 8.97},
      {"16APSK", "3/4", 3, 4, 2.966728, 10.21},   {"16APSK", "4/5", 4, 5, 3.165623, 11.03},
      {"16APSK", "5/6", 5, 6, 3.300184, 11.61},   {"16APSK", "8/9", 8, 9, 3.523143, 12.89},
      {"16APSK", "9/10", 9, 10, 3.567342, 13.13}, {"32APSK", "3/4", 3, 4, 3.703295, 12.73},
      {"32APSK", "4/5", 4, 5, 3.951571, 13.64},   {"32APSK", "5/6", 5, 6, 4.119540, 14.28},
      {"32APSK", "8/9", 8, 9, 4.397854, 15.69},   {"32APSK", "9/10", 9, 10, 4.453027, 16.05},
  };
  ModcodTable t;
  for (const auto& r : rows) {
    t.add({std::string(r.mod) + " " + r.rate, lower(r.mod), "LDPC+BCH, normal FECFRAME 64800", r.p / r.q,
           r.eta, r.es_n0, "ETSI EN 302 307-1 Table 13, ideal, QEF PER 1e-7 (from memory)"});
  }
  return t;
}

ModcodTable ModcodTable::from_gmi_threshold(const std::vector<std::string>& modulations,
                                            const std::vector<double>& code_rates, double gap_db) {
  require_range("gap_db", gap_db, 0.0, 30.0);
  if (modulations.empty()) throw ConfigError("modulations", "[]", "at least one modulation");
  if (code_rates.empty()) throw ConfigError("code_rates", "[]", "at least one code rate");
  ModcodTable t;
  for (const auto& m : modulations) {
    const Constellation c = Constellation::from_name(m);
    for (double r : code_rates) {
      if (!(r > 0.0 && r < 1.0)) throw ConfigError("code_rates", format_number(r), "0 < rate < 1");
      const double eta = r * c.bits_per_symbol();
      const double threshold = bicm_threshold_es_n0_db(c, eta);
      char gap[64];
      std::snprintf(gap, sizeof gap, "%g", gap_db);
      t.add({modulation_display_name(m) + " " + rate_text(r), m,
             std::string("ideal code at the BICM (GMI) threshold + ") + gap + " dB", r, eta,
             threshold + gap_db, std::string("GMI threshold of the constellation + ") + gap + " dB gap"});
    }
  }
  return t;
}

ModcodTable ModcodTable::from_csv(std::string_view text, const std::string& source) {
  std::istringstream in{std::string(text)};
  std::string line;
  std::map<std::string, std::size_t> column;
  std::size_t line_no = 0;
  ModcodTable t;
  while (std::getline(in, line)) {
    ++line_no;
    const auto first = line.find_first_not_of(" \t\r");
    if (first == std::string::npos || line[first] == '#') continue;
    const auto cells = csv_cells(line);
    const std::string where = source + ":" + std::to_string(line_no);
    if (column.empty()) {
      for (std::size_t i = 0; i < cells.size(); ++i) {
        if (column.count(cells[i])) throw InputError(where + ": column '" + cells[i] + "' appears twice");
        column[cells[i]] = i;
      }
      for (const char* c : kRequiredColumns) {
        if (!column.count(c)) {
          throw InputError(where + ": missing column '" + std::string(c) +
                           "'; the header needs name, modulation, rate, bits_per_symbol_info, "
                           "required_es_n0_db (code and source optional)");
        }
      }
      continue;
    }
    auto cell = [&](const char* name) -> std::string {
      const auto it = column.find(name);
      if (it == column.end()) return {};
      if (it->second >= cells.size())
        throw InputError(where + ": no value in column '" + std::string(name) + "'");
      return cells[it->second];
    };
    auto number = [&](const char* name) {
      const std::string s = cell(name);
      const auto v = parse_rate(s);
      if (!v || (s.find('/') != std::string::npos && std::string(name) != "rate")) {
        throw InputError(where + ": column '" + std::string(name) + "' = '" + s + "' is not a number");
      }
      return *v;
    };
    Modcod m;
    m.name = cell("name");
    m.modulation = cell("modulation");
    m.code = cell("code");
    m.rate = number("rate");
    m.spectral_efficiency = number("bits_per_symbol_info");
    m.required_es_n0_db = number("required_es_n0_db");
    m.source = cell("source");
    if (m.source.empty()) m.source = source;
    try {
      t.add(std::move(m));
    } catch (const ConfigError& e) {
      throw InputError(where + ": " + e.what());
    }
  }
  if (column.empty()) throw InputError(source + ": empty MODCOD table (no header line)");
  if (t.empty()) throw InputError(source + ": the MODCOD table has a header but no rows");
  return t;
}

ModcodTable ModcodTable::from_json(std::string_view text, const std::string& source) {
  nlohmann::json doc;
  try {
    doc = nlohmann::json::parse(text);
  } catch (const nlohmann::json::exception& e) {  // parse_error, and out_of_range for 1e999
    throw InputError(source + ": malformed JSON: " + e.what());
  }
  const nlohmann::json* rows = &doc;
  if (doc.is_object()) {
    if (!doc.contains("modcods")) throw InputError(source + ": missing key 'modcods'");
    rows = &doc["modcods"];
  }
  if (!rows->is_array()) throw InputError(source + ": 'modcods' must be an array of rows");
  ModcodTable t;
  for (std::size_t i = 0; i < rows->size(); ++i) {
    const auto& r = (*rows)[i];
    const std::string where = source + ": modcods[" + std::to_string(i) + "]";
    if (!r.is_object()) throw InputError(where + " must be an object");
    auto text_of = [&](const char* key, bool required) -> std::string {
      if (!r.contains(key)) {
        if (required) throw InputError(where + ": missing key '" + std::string(key) + "'");
        return {};
      }
      if (!r[key].is_string()) throw InputError(where + "." + key + " must be a string");
      return r[key].get<std::string>();
    };
    auto number_of = [&](const char* key) {
      if (!r.contains(key)) throw InputError(where + ": missing key '" + std::string(key) + "'");
      const auto& v = r[key];
      if (v.is_number()) return v.get<double>();
      if (std::string(key) == "rate" && v.is_string()) {
        if (const auto p = parse_rate(v.get<std::string>())) return *p;
      }
      throw InputError(where + "." + key + " must be a number");
    };
    Modcod m;
    m.name = text_of("name", true);
    m.modulation = text_of("modulation", true);
    m.code = text_of("code", false);
    m.rate = number_of("rate");
    m.spectral_efficiency = number_of("bits_per_symbol_info");
    m.required_es_n0_db = number_of("required_es_n0_db");
    m.source = text_of("source", false);
    if (m.source.empty()) m.source = source;
    try {
      t.add(std::move(m));
    } catch (const ConfigError& e) {
      throw InputError(source + ": " + e.what());
    }
  }
  if (t.empty()) throw InputError(source + ": the MODCOD table has no rows");
  return t;
}

std::string ModcodTable::to_csv() const {
  auto quote = [](const std::string& s) {
    if (s.find_first_of(",\"") == std::string::npos) return s;
    std::string q = "\"";
    for (char ch : s) q += ch == '"' ? std::string("\"\"") : std::string(1, ch);
    return q + "\"";
  };
  std::string out = "name,modulation,code,rate,bits_per_symbol_info,required_es_n0_db,source\n";
  for (const auto& m : rows_) {
    out += quote(m.name) + "," + quote(m.modulation) + "," + quote(m.code) + "," + rate_text(m.rate) + "," +
           format_number(m.spectral_efficiency) + "," + format_number(m.required_es_n0_db) + "," +
           quote(m.source) + "\n";
  }
  return out;
}

std::string ModcodTable::to_json() const {
  nlohmann::ordered_json rows = nlohmann::ordered_json::array();
  for (const auto& m : rows_) {
    rows.push_back({{"name", m.name},
                    {"modulation", m.modulation},
                    {"code", m.code},
                    {"rate", m.rate},
                    {"bits_per_symbol_info", m.spectral_efficiency},
                    {"required_es_n0_db", m.required_es_n0_db},
                    {"source", m.source}});
  }
  nlohmann::ordered_json doc;
  doc["modcods"] = rows;
  return doc.dump(2) + "\n";
}

// ---------------------------------------------------------------------------------------------
// Choice
// ---------------------------------------------------------------------------------------------

double ModcodChoice::throughput_bps() const noexcept {
  const ModcodMargin* m = best_margin();
  return m ? m->throughput_bps : 0.0;
}

const ModcodMargin* ModcodChoice::best_margin() const noexcept {
  if (!best) return nullptr;
  for (const auto& m : margins)
    if (m.index == *best) return &m;
  return nullptr;
}

ModcodChoice select_modcod(const ModcodTable& table, double link_es_n0_db, double symbol_rate_bd,
                           double implementation_margin_db, double required_margin_db) {
  require_range_open_low("symbol_rate_bd", symbol_rate_bd, 0.0, 1.0e13);
  require_range("implementation_margin_db", implementation_margin_db, -100.0, 100.0);
  require_range("required_margin_db", required_margin_db, -100.0, 100.0);
  ModcodChoice c;
  const bool usable = std::isfinite(link_es_n0_db);
  for (std::size_t i = 0; i < table.size(); ++i) {
    const Modcod& m = table.rows()[i];
    ModcodMargin mm;
    mm.index = i;
    mm.margin_db = link_es_n0_db - m.required_es_n0_db - implementation_margin_db;
    mm.eb_n0_db = link_es_n0_db - linear_to_db(m.spectral_efficiency);
    mm.throughput_bps = symbol_rate_bd * m.spectral_efficiency;
    mm.meets_margin = usable && mm.margin_db >= required_margin_db;
    if (mm.meets_margin) {
      const ModcodMargin* b = c.best ? &c.margins[*c.best] : nullptr;
      if (!b || mm.throughput_bps > b->throughput_bps ||
          (mm.throughput_bps == b->throughput_bps && mm.margin_db > b->margin_db)) {
        c.best = i;
      }
    }
    c.margins.push_back(mm);
  }
  return c;
}

}  // namespace qamsight
