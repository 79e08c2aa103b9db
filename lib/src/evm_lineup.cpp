// evm_lineup: reads and checks an EVM line-up written in TOML (schema below).
//
// Schema (also in docs/evm-lineup.md). Keys are lower case; every key not listed is an error;
// "opt" keys may be left out; numbers may be integers or floats. Every table may carry
// `part = "..."`, a part name shown beside its contributions.
//
//   name = "..."                    opt, string
//   modulation = "16qam"            bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam
//   symbol_rate_hz = 2e6            one of symbol_rate_hz (0, 1e12] / symbol_rate_mbd (0, 1e6]
//   carrier_frequency_hz = 1.4e9    opt (0, 1e13], for the RMS jitter of the phase noise
//   [pulse]                         opt; without it the symbol-rate model (no filters)
//   samples_per_symbol = 4          integer 1 to 64
//   roll_off = 0.25                 opt (0, 1], default 0.25
//   span_symbols = 12               opt, even integer 4 to 256, span * roll_off >= 1, default 12
//   [noise]                         opt; none: no thermal noise
//   snr_db = 25                     [-20, 150]: Es/N0 of the received signal; or instead
//   signal_dbm = -80                [-200, 100] together with
//   noise_figure_db = 4             [0, 60], and opt noise_bandwidth_hz (0, 1e13] (default Rs)
//   [phase_noise]                   opt; at least one of linewidth_hz and mask / mask_file
//   linewidth_hz = 20               opt [0, 0.1 fs]: Wiener phase noise, full 3-dB width
//   mask = [[1e3, -80], ...]        opt: [offset_hz, dbc_hz] pairs, offsets increasing; or
//   mask_file = "pn.csv"            opt: CSV of offset_hz,dbc_hz (relative to this file)
//   mask_offset_db = 0              opt [-150, 100]: added to every mask level
//   [tracker]                       opt
//   mode = "auto"                   opt "auto" | "on" | "off"
//   bandwidth = 0.01                opt (0, 0.1]: loop bandwidth B_L T
//   pilot_period = 0                opt integer 0 to 1048576
//   [iq]                            opt
//   gain_db = 0.2                   opt [-10, 10]
//   phase_deg = 1.0                 opt [-45, 45]
//   dc_offset = [0.003, 0.0]        opt [re, im] relative to the RMS amplitude, |.| <= 10; or
//   dc_leak_dbc = -45               opt [-200, 20]: a real offset of that power relative to the signal
//   [amplifier]                     opt
//   model = "saleh"                 "saleh" | "rapp"
//   input_backoff_db = 8            [-20, 40]
//   smoothness = 2                  opt (rapp only) [0.1, 100], default 2
//   [adc]                           opt
//   bits = 10                       integer 1 to 24
//   loading_db = 12                 opt [-20, 40], default 12: full scale / per-rail RMS
//   [carrier]                       opt
//   frequency_offset_hz = 200       opt, |.| <= fs/2
//   rotation_deg = 30               opt [-360, 360]
//   [measurement]                   opt
//   remove_frequency = true         opt boolean
//   block_symbols = 4096            opt integer 16 to 4194304
//   [requirement]                   opt
//   limit = "8%"                    one of limit ("8%", "-22dB") / table (evm_limits names)
//   rate = "3/4"                    with a table that has code rates
//   margin_db = 1.0                 opt [0, 60]
#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

#include "qamsight/evm_budget.hpp"
#include "qamsight/evm_limits.hpp"

#include "toml_names.hpp"

namespace qamsight {

namespace {

using detail::toml_number;
using detail::toml_type_name;

// Reads the keys of one table and remembers them, so finish() can reject the others. Messages
// name the source, the line and the dotted key.
class Keys {
 public:
  Keys(const toml::table& t, std::string path, const std::string& source) : t_(t), path_(std::move(path)), source_(source) {}

  std::string key(std::string_view k) const { return path_.empty() ? std::string(k) : path_ + "." + std::string(k); }
  std::string at(const toml::node* n) const {
    const auto line = n ? n->source().begin.line : 0;
    return line > 0 ? source_ + ":" + std::to_string(line) : source_;
  }
  [[noreturn]] void fail(const toml::node* n, const std::string& msg) const { throw InputError(at(n) + ": " + msg); }
  const toml::node* node(std::string_view k) {
    used_.insert(std::string(k));
    return t_.get(k);
  }
  bool has(std::string_view k) const { return t_.contains(k); }
  const toml::node* self() const { return &t_; }

  std::optional<double> number(std::string_view k, double lo, double hi, bool open_low = false) {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_number()) fail(n, key(k) + " must be a number, not " + toml_type_name(*n));
    const double v = toml_number(*n);
    if (!std::isfinite(v) || (open_low ? v <= lo : v < lo) || v > hi) {
      fail(n, key(k) + " = " + format_number(v) + " is not allowed; allowed: " +
                  (open_low ? "greater than " + format_number(lo) + " and at most " : format_number(lo) + " to ") +
                  format_number(hi));
    }
    return v;
  }
  double required_number(std::string_view k, double lo, double hi, bool open_low = false) {
    if (!has(k)) missing(k);
    return *number(k, lo, hi, open_low);
  }
  std::optional<long long> integer(std::string_view k, long long lo, long long hi) {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_integer()) fail(n, key(k) + " must be an integer, not " + toml_type_name(*n));
    const long long v = n->value<long long>().value();
    if (v < lo || v > hi) {
      fail(n, key(k) + " = " + std::to_string(v) + " is not allowed; allowed: " + std::to_string(lo) + " to " +
                  std::to_string(hi));
    }
    return v;
  }
  std::optional<bool> boolean(std::string_view k) {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_boolean()) fail(n, key(k) + " must be a boolean, not " + toml_type_name(*n));
    return n->value<bool>().value();
  }
  std::optional<std::string> string(std::string_view k) {
    const toml::node* n = node(k);
    if (!n) return std::nullopt;
    if (!n->is_string()) fail(n, key(k) + " must be a string, not " + toml_type_name(*n));
    return n->value<std::string>().value();
  }
  std::optional<std::string> choice(std::string_view k, const std::vector<std::string>& allowed) {
    const auto s = string(k);
    if (!s) return s;
    if (std::find(allowed.begin(), allowed.end(), *s) == allowed.end()) {
      std::string list;
      for (const auto& a : allowed) list += (list.empty() ? "'" : ", '") + a + "'";
      fail(t_.get(k), key(k) + " = '" + *s + "' is not allowed; allowed: " + list);
    }
    return s;
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
  [[noreturn]] void missing(std::string_view k) const {
    fail(&t_, "missing required key '" + key(k) + "'" + (path_.empty() ? "" : " in [" + path_ + "]"));
  }
  /// At most one of the keys; returns its index or -1.
  int at_most_one(const std::vector<std::string>& keys) const {
    int found = -1;
    for (std::size_t i = 0; i < keys.size(); ++i) {
      if (!has(keys[i])) continue;
      if (found >= 0) {
        fail(t_.get(keys[i]), key(keys[static_cast<std::size_t>(found)]) + " and " + key(keys[i]) +
                                  " conflict; give only one of them");
      }
      found = static_cast<int>(i);
    }
    return found;
  }
  void finish() const {
    for (const auto& [k, v] : t_) {
      if (used_.count(std::string(k.str()))) continue;
      std::string list;
      for (const auto& n : used_) list += (list.empty() ? "" : ", ") + n;
      fail(&v, "unknown key '" + key(k.str()) + "'; allowed " +
                   (path_.empty() ? std::string("at the top level") : "in [" + path_ + "]") + ": " + list);
    }
  }
  /// Reads `part` into the parts map for each contribution key.
  void part(EvmLineup& l, std::initializer_list<const char*> contribution_keys) {
    if (const auto p = string("part")) {
      for (const char* c : contribution_keys) l.parts[c] = *p;
    }
  }

 private:
  const toml::table& t_;
  std::string path_;
  const std::string& source_;
  std::set<std::string> used_;
};

PhaseNoiseMask read_mask(Keys& k, const toml::array& a) {
  const toml::node* where = k.node("mask");
  std::vector<PhaseNoisePoint> pts;
  for (const auto& item : a) {
    const toml::array* pair = item.as_array();
    if (!pair || pair->size() != 2 || !(*pair)[0].is_number() || !(*pair)[1].is_number()) {
      k.fail(&item, k.key("mask") + " entries must be [offset_hz, dbc_hz] pairs of numbers");
    }
    pts.push_back({toml_number((*pair)[0]), toml_number((*pair)[1])});
  }
  try {
    return PhaseNoiseMask(std::move(pts));
  } catch (const ConfigError& e) {
    k.fail(where, k.key("mask") + ": " + e.what());
  }
}

}  // namespace

EvmLineupFile parse_evm_lineup(std::string_view text, const std::string& source, const std::string& base_dir) {
  toml::table root;
  try {
    root = toml::parse(text, std::string_view(source));
  } catch (const toml::parse_error& e) {
    const auto& b = e.source().begin;
    throw InputError(source + ":" + std::to_string(b.line) + ":" + std::to_string(b.column) +
                     ": TOML syntax error: " + std::string(e.description()));
  }
  EvmLineupFile out;
  out.source = source;
  EvmLineup& l = out.lineup;
  Keys top(root, "", source);
  if (const auto s = top.string("name")) l.name = *s;
  {
    const auto m = top.choice("modulation", Constellation::builtin_names());
    if (!m) top.missing("modulation");
    l.modulation = *m;
  }
  switch (top.at_most_one({"symbol_rate_hz", "symbol_rate_mbd"})) {
    case 0:
      l.symbol_rate_hz = *top.number("symbol_rate_hz", 0.0, 1e12, true);
      break;
    case 1:
      l.symbol_rate_hz = 1e6 * *top.number("symbol_rate_mbd", 0.0, 1e6, true);
      break;
    default:
      top.missing("symbol_rate_hz");
  }
  if (const auto f = top.number("carrier_frequency_hz", 0.0, 1e13, true)) l.carrier_frequency_hz = *f;

  // Locations of keys whose checks need the whole line-up (for validate()'s messages).
  std::vector<std::pair<std::string, std::string>> where;  // (parameter of validate, "file:line: key")
  const auto remember = [&](Keys& k, const char* key, const std::string& parameter) {
    if (k.has(key)) where.emplace_back(parameter, k.at(k.node(key)) + ": " + k.key(key));
  };

  if (const toml::table* t = top.table("pulse")) {
    Keys k(*t, "pulse", source);
    if (!k.has("samples_per_symbol")) k.missing("samples_per_symbol");
    l.pulse.samples_per_symbol = static_cast<int>(*k.integer("samples_per_symbol", 1, 64));
    if (const auto r = k.number("roll_off", 0.0, 1.0, true)) l.pulse.roll_off = *r;
    if (const auto s = k.integer("span_symbols", 4, 256)) l.pulse.span_symbols = static_cast<int>(*s);
    remember(k, "roll_off", "roll_off");
    remember(k, "span_symbols", "span_symbols");
    remember(k, "samples_per_symbol", "samples_per_symbol");
    k.finish();
  } else {
    l.pulse.samples_per_symbol = 1;
  }
  if (const toml::table* t = top.table("noise")) {
    Keys k(*t, "noise", source);
    k.part(l, {"awgn"});
    if (k.has("snr_db")) {
      for (const char* other : {"signal_dbm", "noise_figure_db", "noise_bandwidth_hz"}) {
        if (k.has(other)) k.fail(t->get(other), k.key("snr_db") + " and " + k.key(other) + " conflict; give the SNR or the noise figure");
      }
      l.snr_db = *k.number("snr_db", -20.0, 150.0);
    } else if (k.has("signal_dbm") || k.has("noise_figure_db")) {
      ReceiverNoiseSpec n;
      n.signal_dbm = k.required_number("signal_dbm", -200.0, 100.0);
      n.noise_figure_db = k.required_number("noise_figure_db", 0.0, 60.0);
      if (const auto b = k.number("noise_bandwidth_hz", 0.0, 1e13, true)) n.noise_bandwidth_hz = *b;
      l.noise = n;
      remember(k, "signal_dbm", "signal_dbm");
    } else {
      k.fail(t, "[noise] needs snr_db, or signal_dbm with noise_figure_db");
    }
    k.finish();
  }
  if (const toml::table* t = top.table("phase_noise")) {
    Keys k(*t, "phase_noise", source);
    k.part(l, {"phase_noise"});
    if (const auto w = k.number("linewidth_hz", 0.0, 1e12)) l.phase_noise_linewidth_hz = *w;
    remember(k, "linewidth_hz", "phase_noise_linewidth_hz");
    const int m = k.at_most_one({"mask", "mask_file"});
    if (m == 0) {
      const toml::array* a = k.array("mask");
      l.phase_noise_mask = std::make_shared<const PhaseNoiseMask>(read_mask(k, *a));
      remember(k, "mask", "phase noise mask first offset");
    } else if (m == 1) {
      const std::string file = *k.string("mask_file");
      const std::filesystem::path p = std::filesystem::path(file).is_absolute() ? std::filesystem::path(file)
                                                                                : std::filesystem::path(base_dir) / file;
      try {
        l.phase_noise_mask = std::make_shared<const PhaseNoiseMask>(PhaseNoiseMask::from_csv(p.string()));
      } catch (const InputError& e) {
        k.fail(t->get("mask_file"), k.key("mask_file") + ": " + e.what());
      }
      remember(k, "mask_file", "phase noise mask first offset");
    }
    if (const auto o = k.number("mask_offset_db", -150.0, 100.0)) {
      if (!l.phase_noise_mask) k.fail(t->get("mask_offset_db"), k.key("mask_offset_db") + " needs a mask or mask_file");
      l.phase_noise_mask_offset_db = *o;
    }
    if (l.phase_noise_linewidth_hz == 0.0 && !l.phase_noise_mask) {
      k.fail(t, "[phase_noise] needs linewidth_hz > 0, mask or mask_file");
    }
    k.finish();
  }
  if (const toml::table* t = top.table("tracker")) {
    Keys k(*t, "tracker", source);
    k.part(l, {"tracker_jitter"});
    if (const auto m = k.choice("mode", {"auto", "on", "off"})) {
      l.tracker = *m == "on" ? TrackerMode::on : (*m == "off" ? TrackerMode::off : TrackerMode::automatic);
    }
    if (const auto b = k.number("bandwidth", 0.0, 0.1, true)) l.tracker_bandwidth = *b;
    if (const auto p = k.integer("pilot_period", 0, 1048576)) l.pilot_period = static_cast<std::size_t>(*p);
    k.finish();
  }
  if (const toml::table* t = top.table("iq")) {
    Keys k(*t, "iq", source);
    k.part(l, {"iq_imbalance", "dc_offset"});
    if (const auto g = k.number("gain_db", -10.0, 10.0)) l.iq_gain_db = *g;
    if (const auto p = k.number("phase_deg", -45.0, 45.0)) l.iq_phase_deg = *p;
    const int d = k.at_most_one({"dc_offset", "dc_leak_dbc"});
    if (d == 0) {
      const toml::array* a = k.array("dc_offset");
      const toml::node* n = t->get("dc_offset");
      if (a->size() != 2 || !(*a)[0].is_number() || !(*a)[1].is_number()) {
        k.fail(n, k.key("dc_offset") + " must be [re, im] (two numbers)");
      }
      l.dc_offset = cf64(toml_number((*a)[0]), toml_number((*a)[1]));
      if (!(std::abs(l.dc_offset) <= 10.0)) {
        k.fail(n, k.key("dc_offset") + " = |" + format_number(std::abs(l.dc_offset)) + "| is not allowed; allowed: magnitude at most 10");
      }
    } else if (d == 1) {
      l.dc_offset = cf64(std::pow(10.0, *k.number("dc_leak_dbc", -200.0, 20.0) / 20.0), 0.0);
    }
    k.finish();
  }
  if (const toml::table* t = top.table("amplifier")) {
    Keys k(*t, "amplifier", source);
    k.part(l, {"amplifier"});
    const auto m = k.choice("model", {"saleh", "rapp"});
    if (!m) k.missing("model");
    l.amplifier = *m == "saleh" ? AmplifierKind::saleh : AmplifierKind::rapp;
    l.input_backoff_db = k.required_number("input_backoff_db", -20.0, 40.0);
    if (k.has("smoothness") && *m != "rapp") k.fail(t->get("smoothness"), k.key("smoothness") + " is used by model = 'rapp' only");
    if (const auto p = k.number("smoothness", 0.1, 100.0)) l.rapp_smoothness = *p;
    k.finish();
  }
  if (const toml::table* t = top.table("adc")) {
    Keys k(*t, "adc", source);
    k.part(l, {"adc_quantisation", "adc_clipping"});
    if (!k.has("bits")) k.missing("bits");
    l.adc_bits = static_cast<unsigned>(*k.integer("bits", 1, 24));
    if (const auto v = k.number("loading_db", -20.0, 40.0)) l.adc_loading_db = *v;
    k.finish();
  }
  if (const toml::table* t = top.table("carrier")) {
    Keys k(*t, "carrier", source);
    k.part(l, {"frequency_offset"});
    if (const auto f = k.number("frequency_offset_hz", -1e12, 1e12)) l.cfo_hz = *f;
    remember(k, "frequency_offset_hz", "cfo_hz");
    if (const auto r = k.number("rotation_deg", -360.0, 360.0)) l.phase_deg = *r;
    k.finish();
  }
  if (const toml::table* t = top.table("measurement")) {
    Keys k(*t, "measurement", source);
    if (const auto b = k.boolean("remove_frequency")) l.measurement_removes_frequency = *b;
    if (const auto n = k.integer("block_symbols", 16, 4194304)) l.measurement_symbols = static_cast<std::size_t>(*n);
    k.finish();
  }
  if (const toml::table* t = top.table("requirement")) {
    Keys k(*t, "requirement", source);
    EvmRequirement& r = out.requirement;
    const int which = k.at_most_one({"limit", "table"});
    if (which < 0) k.fail(t, "[requirement] needs limit (\"8%\", \"-22dB\") or table");
    if (which == 0) {
      r.limit = *k.string("limit");
      try {
        (void)parse_evm_limit(r.limit);
      } catch (const ConfigError& e) {
        k.fail(t->get("limit"), k.key("limit") + " = '" + r.limit + "' is not allowed; allowed: " + e.allowed());
      }
      if (k.has("rate")) k.fail(t->get("rate"), k.key("rate") + " is used with table only");
    } else {
      r.table = *k.string("table");
      if (const auto rate = k.string("rate")) r.rate = *rate;
      try {
        (void)evm_limit_from_table(r.table, l.modulation, r.rate);
      } catch (const ConfigError& e) {
        const bool rate_problem = e.parameter() == "rate";
        const std::string key = rate_problem ? "rate" : "table";
        const toml::node* n = t->get(rate_problem && k.has("rate") ? "rate" : "table");
        k.fail(n, k.key(key) + ": " + e.what());
      }
    }
    if (const auto m = k.number("margin_db", 0.0, 60.0)) r.margin_db = *m;
    k.finish();
  }
  top.finish();
  try {
    validate(l);
  } catch (const ConfigError& e) {
    for (const auto& [parameter, location] : where) {
      if (parameter == e.parameter()) throw InputError(location + ": " + e.what());
    }
    // span * roll_off >= 1 fails on the span's default when only the roll-off was given.
    for (const auto& [parameter, location] : where) {
      if (e.parameter() == "span_symbols" && parameter == "roll_off") throw InputError(location + ": " + e.what());
    }
    throw InputError(source + ": " + e.what());
  }
  return out;
}

EvmLineupFile load_evm_lineup(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path + ": cannot read the line-up file");
  std::stringstream ss;
  ss << in.rdbuf();
  const std::string base = std::filesystem::path(path).parent_path().string();
  return parse_evm_lineup(ss.str(), path, base.empty() ? "." : base);
}

}  // namespace qamsight
