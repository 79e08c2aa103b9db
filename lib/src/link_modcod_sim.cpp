// link: MODCOD tables from our own coded simulations (thresholds read off measured curves).
#include <cctype>
#include <cmath>
#include <cstdio>
#include <limits>

#include "qamsight/fec.hpp"
#include "qamsight/link.hpp"

namespace qamsight {

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

void check(const ModcodSimulationConfig& c) {
  if (c.modulations.empty()) throw ConfigError("modulations", "(none)", "at least one modulation");
  if (c.codes.empty()) throw ConfigError("code", "(none)", "at least one code name");
  for (const auto& m : c.modulations) (void)Constellation::from_name(m);
  for (const auto& code : c.codes) (void)make_code(code);
  if (!(c.target_rate > 0.0 && c.target_rate < 0.5)) {
    throw ConfigError(c.target == ModcodTarget::ber ? "target_ber" : "target_fer", format_number(c.target_rate),
                      "strictly between 0 and 0.5");
  }
  if (c.es_n0_db.size() < 2) throw ConfigError("es_n0_db", std::to_string(c.es_n0_db.size()) + " values", "at least two");
  for (std::size_t i = 0; i < c.es_n0_db.size(); ++i) {
    require_range("es_n0_db", c.es_n0_db[i], -30.0, 100.0);
    if (i > 0 && !(c.es_n0_db[i] > c.es_n0_db[i - 1])) {
      throw ConfigError("es_n0_db", format_number(c.es_n0_db[i]), "a strictly ascending grid");
    }
  }
  if (c.min_errors < 1) throw ConfigError("min_errors", "0", "at least 1");
}

std::string display_name(const Constellation& c) {
  std::string s = c.name();
  for (auto& ch : s) ch = static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
  return s;
}

std::string fixed2(double v) {
  char b[32];
  std::snprintf(b, sizeof b, "%.2f", v);
  return b;
}

}  // namespace

double log_linear_crossing(const std::vector<double>& x, const std::vector<double>& y, double target) {
  for (std::size_t i = 0; i + 1 < x.size() && i + 1 < y.size(); ++i) {
    if (!(y[i] >= target && y[i + 1] < target)) continue;
    if (y[i + 1] <= 0.0) return x[i];
    const double t = (std::log(target) - std::log(y[i])) / (std::log(y[i + 1]) - std::log(y[i]));
    return x[i] + t * (x[i + 1] - x[i]);
  }
  return kNan;
}

ModcodSimulation simulate_modcod_table(const ModcodSimulationConfig& config,
                                       const std::function<void(const std::string&)>& progress) {
  check(config);
  ModcodSimulation out;
  out.config = config;
  const bool fer = config.target == ModcodTarget::fer;
  const auto executor = make_thread_executor(config.threads);  // one pool for all points
  for (const auto& mod : config.modulations) {
    const Constellation constellation = Constellation::from_name(mod);
    for (const auto& code_name : config.codes) {
      const auto code = make_code(code_name);
      SweepConfig sweep;
      sweep.modulations = {constellation.name()};
      sweep.snr_kind = SnrKind::es_n0;
      sweep.confidence = config.confidence;
      sweep.seed = config.seed;
      sweep.threads = config.threads;
      sweep.link = config.link;
      sweep.link.code = code_name;
      const double budget = std::ceil(30.0 / config.target_rate);
      if (fer) {
        sweep.stop.min_bit_errors = std::numeric_limits<std::uint64_t>::max();
        sweep.stop.min_frame_errors = config.min_errors;
        sweep.stop.max_bits = config.max_bits ? config.max_bits
                                              : static_cast<std::uint64_t>(budget) * code->info_bits();
      } else {
        sweep.stop.min_bit_errors = config.min_errors;
        sweep.stop.max_bits = config.max_bits ? config.max_bits : static_cast<std::uint64_t>(budget);
      }
      ModcodSimulationRow row;
      row.modulation = constellation.name();
      row.code = code_name;
      row.code_rate = code->rate();
      row.spectral_efficiency = information_bits_per_symbol(sweep.link, constellation);
      std::vector<double> xs, rate, low, high, estimate;
      SweepHooks hooks;
      hooks.executor = executor.get();
      for (double es : config.es_n0_db) {
        sweep.snr_db = {es};
        const SweepResult r = run_sweep(sweep, hooks);
        const PointResult& p = r.points.front();
        const double v = fer ? p.fer : p.ber, lo = fer ? p.fer_low : p.ber_low, hi = fer ? p.fer_high : p.ber_high;
        const std::uint64_t errors = fer ? p.counts.frame_errors : p.counts.bit_errors;
        xs.push_back(es);
        rate.push_back(v);
        low.push_back(lo);
        high.push_back(hi);
        estimate.push_back(errors > 0 ? v : hi);  // a zero-error point enters with its upper bound
        row.curve.push_back(p);
        if (progress) {
          char line[256];
          std::snprintf(line, sizeof line, "%s %s Es/N0 %.2f dB: %s %.3g [%.3g, %.3g] (%llu errors)",
                        row.modulation.c_str(), code_name.c_str(), es, fer ? "FER" : "BER", v, lo, hi,
                        static_cast<unsigned long long>(errors));
          progress(line);
        }
        if (hi < config.target_rate) break;  // confidently below the target: the curve is done
      }
      row.required_es_n0_db = log_linear_crossing(xs, estimate, config.target_rate);
      row.required_low_db = log_linear_crossing(xs, low, config.target_rate);
      row.required_high_db = log_linear_crossing(xs, high, config.target_rate);
      row.available = std::isfinite(row.required_es_n0_db);
      if (!row.available) {
        row.note = rate.front() < config.target_rate
                       ? "the first grid point is already below the target: start the grid lower"
                       : "no grid point is below the target: extend the grid upwards";
      } else if (!std::isfinite(row.required_low_db)) {
        row.note = "the interval's lower end reaches below the first grid point";
      }
      if (row.available) {
        char src[320];
        std::snprintf(src, sizeof src,
                      "qamsight coded simulation: %s %.3g, seed %llu, %.0f%% interval %s to %s dB Es/N0",
                      fer ? "FER" : "BER", config.target_rate, static_cast<unsigned long long>(config.seed),
                      100.0 * config.confidence,
                      std::isfinite(row.required_low_db) ? fixed2(row.required_low_db).c_str() : "below grid",
                      std::isfinite(row.required_high_db) ? fixed2(row.required_high_db).c_str() : "above grid");
        Modcod m;
        m.name = display_name(constellation) + " " + code_name;
        m.modulation = constellation.name();
        m.code = code_name;
        m.rate = row.code_rate;
        m.spectral_efficiency = row.spectral_efficiency;
        m.required_es_n0_db = row.required_es_n0_db;
        m.source = src;
        try {
          out.table.add(std::move(m));
        } catch (const ConfigError& e) {  // e.g. a threshold below the Shannon bound
          row.available = false;
          row.note = std::string("not tabled: ") + e.what();
        }
      }
      out.rows.push_back(std::move(row));
    }
  }
  return out;
}

}  // namespace qamsight
