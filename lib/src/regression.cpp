// regression: theory and baseline checks with Holm correction, implementation loss, JUnit XML.
#include "qamsight/regression.hpp"

#include <algorithm>
#include <boost/math/distributions/binomial.hpp>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>

#include "qamsight/theory.hpp"

namespace qamsight {

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

void validate(const GateConfig& c) {
  if (!(c.confidence > 0.0 && c.confidence < 1.0)) {
    throw ConfigError("confidence", format_number(c.confidence), "strictly between 0 and 1");
  }
  if (!(c.target_ber > 0.0 && c.target_ber < 0.5)) {
    throw ConfigError("target_ber", format_number(c.target_ber), "strictly between 0 and 0.5");
  }
}

// Two-sided central exact binomial p-value, the test dual to the Clopper-Pearson interval.
double central_p_value(std::uint64_t k, std::uint64_t n, double p0) {
  if (p0 <= 0.0) return k == 0 ? 1.0 : 0.0;
  if (p0 >= 1.0) return k == n ? 1.0 : 0.0;
  const boost::math::binomial_distribution<double> d(static_cast<double>(n), p0);
  const double lower = boost::math::cdf(d, static_cast<double>(k));
  const double upper = k == 0 ? 1.0 : boost::math::cdf(boost::math::complement(d, static_cast<double>(k) - 1.0));
  return std::min(1.0, 2.0 * std::min(lower, upper));
}

// Orders p-values ascending (stable), the order Holm's procedure walks.
std::vector<std::size_t> ascending(const std::vector<double>& p) {
  std::vector<std::size_t> idx(p.size());
  std::iota(idx.begin(), idx.end(), std::size_t{0});
  std::stable_sort(idx.begin(), idx.end(), [&](auto a, auto b) { return p[a] < p[b]; });
  return idx;
}

// Assigns each tested row its level (Holm-adjusted or not) and failure flag.
void apply_holm(std::vector<GateRow>& rows, const GateConfig& c) {
  const double alpha = 1.0 - c.confidence;
  std::vector<std::size_t> tested;
  std::vector<double> p;
  for (std::size_t i = 0; i < rows.size(); ++i) {
    if (rows[i].tested) {
      tested.push_back(i);
      p.push_back(rows[i].p_value);
    }
  }
  const std::vector<bool> reject = holm_reject(p, alpha);
  const auto order = ascending(p);
  for (std::size_t r = 0; r < order.size(); ++r) {
    auto& row = rows[tested[order[r]]];
    row.alpha = c.holm ? alpha / static_cast<double>(order.size() - r) : alpha;
    row.failed = c.holm ? reject[order[r]] : row.p_value <= alpha;
  }
}

std::vector<std::string> modulations_in_order(const std::vector<PointResult>& pts) {
  std::vector<std::string> out;
  for (const auto& p : pts)
    if (std::find(out.begin(), out.end(), p.spec.modulation) == out.end()) out.push_back(p.spec.modulation);
  return out;
}

std::vector<PointResult> curve_of(const std::vector<PointResult>& pts, const std::string& mod) {
  std::vector<PointResult> c;
  for (const auto& p : pts)
    if (p.spec.modulation == mod) c.push_back(p);
  std::sort(c.begin(), c.end(), [](const auto& a, const auto& b) { return a.spec.eb_n0_db < b.spec.eb_n0_db; });
  return c;
}

}  // namespace

std::vector<bool> holm_reject(const std::vector<double>& p, double alpha) {
  std::vector<bool> reject(p.size(), false);
  const auto order = ascending(p);
  for (std::size_t r = 0; r < order.size(); ++r) {
    if (!(p[order[r]] <= alpha / static_cast<double>(order.size() - r))) break;
    reject[order[r]] = true;
  }
  return reject;
}

double eb_n0_at_ber(const std::vector<PointResult>& curve, double target) {
  std::vector<const PointResult*> pts;
  for (const auto& p : curve)
    if (p.counts.bit_errors > 0 && p.ber > 0) pts.push_back(&p);
  std::sort(pts.begin(), pts.end(), [](auto a, auto b) { return a->spec.eb_n0_db < b->spec.eb_n0_db; });
  for (std::size_t i = 0; i + 1 < pts.size(); ++i) {
    const double b0 = pts[i]->ber, b1 = pts[i + 1]->ber;
    if ((b0 >= target && b1 <= target) && b0 != b1) {
      const double x0 = pts[i]->spec.eb_n0_db, x1 = pts[i + 1]->spec.eb_n0_db;
      const double t = (std::log(target) - std::log(b0)) / (std::log(b1) - std::log(b0));
      return x0 + t * (x1 - x0);
    }
    if (b0 == target) return pts[i]->spec.eb_n0_db;
  }
  if (!pts.empty() && pts.back()->ber == target) return pts.back()->spec.eb_n0_db;
  return kNan;
}

GateReport check_against_theory(const SweepResult& result, const GateConfig& config) {
  validate(config);
  GateReport rep;
  rep.kind = "theory";
  rep.config = config;
  for (const auto& p : result.points) {
    GateRow row;
    row.point = p;
    if (!p.code.empty()) {
      row.note = "coded link: no AWGN reference";
    } else if (!std::isfinite(p.ber_theory) || p.counts.bits == 0) {
      row.note = "no AWGN reference for this modulation";
    } else {
      row.tested = true;
      row.reference_ber = p.ber_theory;
      row.p_value = central_p_value(p.counts.bit_errors, p.counts.bits, p.ber_theory);
    }
    rep.rows.push_back(std::move(row));
  }
  apply_holm(rep.rows, config);
  for (auto& row : rep.rows) {
    if (!row.tested) continue;
    const Interval iv = clopper_pearson(row.point.counts.bit_errors, row.point.counts.bits, 1.0 - row.alpha);
    row.interval_low = iv.low;
    row.interval_high = iv.high;
    if (row.failed) {
      row.note = row.point.ber > row.reference_ber ? "BER above theory" : "BER below theory";
      rep.pass = false;
    }
  }
  for (const auto& mod : modulations_in_order(result.points)) {
    ImplementationLoss il;
    il.modulation = mod;
    il.target_ber = config.target_ber;
    if (!result.config.link.code.empty()) {
      il.note = "coded link: no AWGN reference";
    } else if (!theory::has_reference(mod)) {
      il.note = "no AWGN reference";
    } else {
      il.measured_eb_n0_db = eb_n0_at_ber(curve_of(result.points, mod), config.target_ber);
      il.reference_eb_n0_db = theory::required_eb_n0_db(mod, config.target_ber);
      il.available = std::isfinite(il.measured_eb_n0_db);
      il.loss_db = il.measured_eb_n0_db - il.reference_eb_n0_db;
      if (!il.available) il.note = "measured points do not bracket the target BER";
    }
    rep.losses.push_back(il);
  }
  return rep;
}

GateReport check_against_baseline(const SweepResult& result, const SweepResult& baseline,
                                  const GateConfig& config) {
  validate(config);
  GateReport rep;
  rep.kind = "baseline";
  rep.config = config;
  auto key_snr = [](const PointResult& p, SnrKind k) { return k == SnrKind::eb_n0 ? p.spec.eb_n0_db : p.spec.es_n0_db; };
  for (const auto& p : result.points) {
    GateRow row;
    row.point = p;
    const PointResult* match = nullptr;
    for (const auto& b : baseline.points) {
      if (b.spec.modulation == p.spec.modulation && b.code == p.code &&
          std::abs(key_snr(b, result.config.snr_kind) - key_snr(p, result.config.snr_kind)) < 1e-6) {
        match = &b;
        break;
      }
    }
    if (!match) {
      row.note = "no baseline point at this modulation and SNR";
    } else {
      row.tested = true;
      row.reference_ber = match->ber;
      row.p_value = rate_increase_p_value(p.counts.bit_errors, p.counts.bits, match->counts.bit_errors, match->counts.bits);
    }
    rep.rows.push_back(std::move(row));
  }
  apply_holm(rep.rows, config);
  for (auto& row : rep.rows) {
    if (row.failed) {
      row.note = "BER significantly above baseline";
      rep.pass = false;
    }
  }
  for (const auto& mod : modulations_in_order(result.points)) {
    ImplementationLoss il;
    il.modulation = mod;
    il.target_ber = config.target_ber;
    il.measured_eb_n0_db = eb_n0_at_ber(curve_of(result.points, mod), config.target_ber);
    il.reference_eb_n0_db = eb_n0_at_ber(curve_of(baseline.points, mod), config.target_ber);
    il.available = std::isfinite(il.measured_eb_n0_db) && std::isfinite(il.reference_eb_n0_db);
    il.loss_db = il.measured_eb_n0_db - il.reference_eb_n0_db;
    if (!il.available) il.note = "curves do not both bracket the target BER";
    rep.losses.push_back(il);
  }
  return rep;
}

namespace {
std::string xml_escape(const std::string& s) {
  std::string o;
  for (char c : s) {
    switch (c) {
      case '<': o += "&lt;"; break;
      case '>': o += "&gt;"; break;
      case '&': o += "&amp;"; break;
      case '"': o += "&quot;"; break;
      default: o += c;
    }
  }
  return o;
}
}  // namespace

std::string gate_junit_xml(const GateReport& rep) {
  std::size_t failures = 0, skipped = 0;
  for (const auto& r : rep.rows) {
    failures += r.failed;
    skipped += !r.tested;
  }
  std::string x = "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n";
  x += "<testsuite name=\"qamsight check " + rep.kind + "\" tests=\"" + std::to_string(rep.rows.size()) +
       "\" failures=\"" + std::to_string(failures) + "\" skipped=\"" + std::to_string(skipped) + "\">\n";
  for (const auto& r : rep.rows) {
    const std::string name = r.point.spec.modulation + " Eb/N0 " + format_number(r.point.spec.eb_n0_db) + " dB";
    x += "  <testcase classname=\"qamsight.check." + rep.kind + "\" name=\"" + xml_escape(name) + "\">";
    const std::string detail = "BER " + format_number(r.point.ber) + " (" + std::to_string(r.point.counts.bit_errors) +
                               "/" + std::to_string(r.point.counts.bits) + "), reference " +
                               format_number(r.reference_ber) + ", p " + format_number(r.p_value) + ", alpha " +
                               format_number(r.alpha);
    if (!r.tested) {
      x += "<skipped message=\"" + xml_escape(r.note) + "\"/>";
    } else if (r.failed) {
      x += "<failure message=\"" + xml_escape(r.note) + "\">" + xml_escape(detail) + "</failure>";
    } else {
      x += "<system-out>" + xml_escape(detail) + "</system-out>";
    }
    x += "</testcase>\n";
  }
  x += "</testsuite>\n";
  return x;
}

}  // namespace qamsight
