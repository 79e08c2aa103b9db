// Tests of information: Gauss-Hermite rules, CM/BICM capacities vs SciPy integrals, thresholds, GMI.
#include <boost/math/special_functions/gamma.hpp>
#include <boost/math/special_functions/hermite.hpp>
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <map>
#include <numbers>
#include <string>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/information.hpp"
#include "qamsight/llr.hpp"
#include "reference_tables.hpp"

using namespace qamsight;
using qamsight::test::check_close;

namespace {

const double kHalfDb = 10.0 * std::log10(2.0);

Constellation custom_copy(const Constellation& c, cf64 rotation = cf64(1.0, 0.0)) {
  std::vector<cf64> pts;
  for (const cf64& p : c.points()) pts.push_back(p * rotation);
  std::vector<std::uint32_t> labels(c.order());
  for (std::uint32_t l = 0; l < c.order(); ++l) labels[l] = l;
  return Constellation::custom("copy of " + c.name(), pts, labels);
}

// Gray 4-PAM on the real axis: levels -3, -1, 1, 3 labelled gray(i) = 00, 01, 11, 10.
Constellation pam4(cf64 rotation = cf64(1.0, 0.0)) {
  std::vector<cf64> pts;
  for (double a : {-3.0, -1.0, 1.0, 3.0}) pts.push_back(a * rotation);
  return Constellation::custom("pam4", pts, {0, 1, 3, 2});
}

struct Row {
  std::string kind, constellation;
  double es_n0_db, value;
};

std::vector<Row> capacity_table() {
  const auto rows = test::read_csv(test::source_path("tests/reference/capacity_table.csv"));
  REQUIRE(rows.size() > 1);
  REQUIRE(rows[0] == std::vector<std::string>{"kind", "constellation", "es_n0_db", "value"});
  std::vector<Row> out;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    REQUIRE(rows[i].size() == 4);
    out.push_back({rows[i][0], rows[i][1], std::stod(rows[i][2]), std::stod(rows[i][3])});
  }
  return out;
}

double rate_of(const InformationRates& r, const std::string& kind) { return kind == "cm" ? r.cm : r.bicm; }

double shannon(double es_n0_db) { return std::log2(1.0 + db_to_linear(es_n0_db)); }

}  // namespace

TEST_CASE("Gauss-Hermite rules: closed-form 3-node rule, Hermite roots and weights, moments", "[information]") {
  // 3 nodes: roots of H3(t) = 8t^3 - 12t are 0, +-sqrt(3/2), weights 2 sqrt(pi)/3 and sqrt(pi)/6
  // (from the weight formula below).
  const auto r3 = gauss_hermite_rule(3);
  const double sp = std::sqrt(std::numbers::pi);
  check_close(r3.nodes[0], -std::sqrt(1.5), 1e-14);
  CHECK(std::abs(r3.nodes[1]) < 1e-14);
  check_close(r3.nodes[2], std::sqrt(1.5), 1e-14);
  check_close(r3.weights[0], sp / 6.0, 1e-13);
  check_close(r3.weights[1], 2.0 * sp / 3.0, 1e-13);
  check_close(r3.weights[2], sp / 6.0, 1e-13);
  // 20 and 60 nodes: nodes are roots of H_n (Boost.Math hermite) and the weights follow
  // w_i = 2^(n-1) n! sqrt(pi) / (n^2 H_(n-1)(t_i)^2) (Abramowitz & Stegun 25.4.46, equation
  // number from memory), evaluated in logs.
  for (unsigned n : {20u, 60u}) {
    const auto r = gauss_hermite_rule(n);
    REQUIRE(r.nodes.size() == n);
    for (unsigned i = 0; i < n; ++i) {
      const double t = r.nodes[i];
      // H_n(t) relative to the size of its terms: |H_n(t)| / |H_(n-1)(t) * 2n| is tiny at a root.
      const double hn = boost::math::hermite(n, t), hn1 = boost::math::hermite(n - 1, t);
      CHECK(std::abs(hn) <= 1e-10 * std::abs(2.0 * n * hn1));
      const double log_w = (n - 1.0) * std::log(2.0) + std::lgamma(n + 1.0) + 0.5 * std::log(std::numbers::pi) -
                           2.0 * std::log(double(n)) - 2.0 * std::log(std::abs(hn1));
      // Golub-Welsch weights are accurate in absolute terms (about 1e-16 of the total), not
      // relative to the tiny outer weights; that is what integration needs.
      check_close(r.weights[i], std::exp(log_w), 1e-9, 1e-14);
      if (i > 0) CHECK(r.nodes[i] > r.nodes[i - 1]);
    }
    // Moments int t^(2m) e^(-t^2) dt = Gamma(m + 1/2) are exact for 2m < 2n.
    for (unsigned m = 0; m < 12; ++m) {
      double s = 0.0;
      for (unsigned i = 0; i < n; ++i) s += r.weights[i] * std::pow(r.nodes[i], 2.0 * m);
      check_close(s, boost::math::tgamma(m + 0.5), 1e-11);
    }
  }
  CHECK_THROWS_AS(gauss_hermite_rule(0), ConfigError);
  CHECK_THROWS_AS(gauss_hermite_rule(1001), ConfigError);
}

TEST_CASE("capacities match direct SciPy integration of the definitions", "[information]") {
  // tests/reference/capacity_table.csv from make_capacity_table.py: h(Y) - h(Y|X) and
  // sum_i I(b_i; Y) integrated with scipy.integrate.quad (accurate to about 1e-11 bit).
  // One-dimensional paths (BPSK, real-axis PAM, square QAM through the per-axis reduction)
  // are held to 1e-9 bit, the two-dimensional product rule to 1e-6 bit.
  const auto table = capacity_table();
  REQUIRE(table.size() >= 80);
  const auto bpsk = Constellation::bpsk();
  const auto pam = pam4(), pam_rotated = pam4(std::polar(1.0, 0.7));
  const auto qpsk = Constellation::from_name("qpsk"), qam16 = Constellation::from_name("16qam");
  const auto qam64 = Constellation::from_name("64qam"), qam1024 = Constellation::from_name("1024qam");
  const auto psk8 = Constellation::from_name("8psk");
  const auto qpsk_2d = custom_copy(qpsk), qam16_2d = custom_copy(qam16);
  std::map<std::string, int> counted;
  double worst_1d = 0.0, worst_2d = 0.0;
  auto check = [&](const Constellation& c, double db, double factor, const Row& row, bool two_d) {
    const double v = rate_of(information_rates(c, db), row.kind) / factor;
    INFO(c.name() << " " << row.kind << " at " << db << " dB: " << v << " vs SciPy " << row.value);
    const double err = std::abs(v - row.value);
    (two_d ? worst_2d : worst_1d) = std::max(two_d ? worst_2d : worst_1d, err);
    CHECK(err <= (two_d ? 1e-6 : 1e-9));
    ++counted[row.constellation];
  };
  for (const Row& row : table) {
    if (row.constellation == "bpsk") {
      check(bpsk, row.es_n0_db, 1.0, row, false);
    } else if (row.constellation == "pam4") {
      check(pam, row.es_n0_db, 1.0, row, false);
      check(pam_rotated, row.es_n0_db, 1.0, row, true);  // rotation invariance of circular noise
    } else if (row.constellation == "pam8") {
      // 64-QAM = two Gray 8-PAM axes, each at Es/N0 - 3.01 dB (per-axis reduction, information.hpp).
      check(qam64, row.es_n0_db + kHalfDb, 2.0, row, false);
    } else if (row.constellation == "pam32") {
      check(qam1024, row.es_n0_db + kHalfDb, 2.0, row, false);
    } else if (row.constellation == "qpsk") {
      check(qpsk, row.es_n0_db, 1.0, row, false);
      check(qpsk_2d, row.es_n0_db, 1.0, row, true);
    } else if (row.constellation == "16qam") {
      check(qam16, row.es_n0_db, 1.0, row, false);
      check(qam16_2d, row.es_n0_db, 1.0, row, true);
    } else if (row.constellation == "8psk") {
      check(psk8, row.es_n0_db, 1.0, row, true);
    }
  }
  // Measured: 1.6e-11 bit (one-dimensional paths) and 9.8e-8 bit (two-dimensional).
  INFO("largest deviation from SciPy: one-dimensional paths " << worst_1d << ", two-dimensional " << worst_2d);
  CHECK(worst_1d < 1e-9);
  for (const char* name : {"bpsk", "pam4", "pam8", "pam32", "qpsk", "16qam", "8psk"}) CHECK(counted[name] >= 8);
}

TEST_CASE("0 < BICM <= CM <= min(log2 M, Shannon) on -10..40 dB", "[information]") {
  // Chain rule (BICM <= CM, equality for a single bit or independent bits), the input alphabet
  // (CM <= log2 M) and Shannon's AWGN capacity log2(1 + Es/N0) (C. E. Shannon, 1948), which
  // any input distribution respects. The margins allow only for rounding.
  for (const auto& name : Constellation::builtin_names()) {
    const auto c = Constellation::from_name(name);
    const double k = c.bits_per_symbol();
    double previous_cm = 0.0, previous_bicm = 0.0;
    for (double db = -10.0; db <= 40.0; db += 2.5) {
      const auto r = information_rates(c, db);
      INFO(name << " at " << db << " dB: CM " << r.cm << ", BICM " << r.bicm);
      CHECK(r.bicm > 0.0);
      CHECK(r.bicm <= r.cm + 1e-12);
      CHECK(r.cm <= k);
      CHECK(r.cm < shannon(db));
      // Both grow with SNR (more SNR is never worse: the noise can be degraded further).
      CHECK(r.cm >= previous_cm);
      CHECK(r.bicm >= previous_bicm);
      previous_cm = r.cm;
      previous_bicm = r.bicm;
    }
  }
}

TEST_CASE("capacities reach log2 M at high SNR", "[information]") {
  // Within 1e-3 bit of log2 M where symbol errors are rare: the SNRs are a few dB above the
  // Es/N0 that the exact SER tables give for SER 1e-6 (REFERENCES.md sec. 1.5 and 2 list Eb/N0;
  // e.g. 1024-QAM 29.3 dB + 10 dB = 39.3 dB Es/N0).
  const std::map<std::string, double> snr = {{"bpsk", 12.0}, {"qpsk", 15.0}, {"8psk", 21.0}, {"16qam", 21.0},
                                             {"64qam", 28.0}, {"256qam", 34.0}, {"1024qam", 40.0}};
  for (const auto& [name, db] : snr) {
    const auto c = Constellation::from_name(name);
    const auto r = information_rates(c, db);
    INFO(name << " at " << db << " dB: CM " << r.cm << " BICM " << r.bicm);
    CHECK(r.cm >= c.bits_per_symbol() - 1e-3);
    CHECK(r.bicm >= c.bits_per_symbol() - 1e-3);
    // And exactly log2 M once every other point's term underflows.
    CHECK(information_rates(c, 120.0).cm == double(c.bits_per_symbol()));
  }
}

TEST_CASE("QPSK CM = BICM = 2 x BPSK capacity at Es/N0 - 3.01 dB", "[information]") {
  // QPSK is two BPSK axes with amplitude 1/sqrt 2 and noise N0/2 each; scaling by sqrt 2 makes
  // each a unit-amplitude BPSK with noise N0 (twice the variance), i.e. Es/N0 - 10 log10 2.
  // Each bit rides on one axis only, so BICM loses nothing: exact identities.
  const auto qpsk = Constellation::from_name("qpsk"), bpsk = Constellation::bpsk();
  for (double db = -10.0; db <= 30.0; db += 1.0) {
    const auto q = information_rates(qpsk, db);
    const double b = cm_capacity(bpsk, db - kHalfDb);
    check_close(q.cm, 2.0 * b, 1e-12, 1e-14);
    check_close(q.bicm, q.cm, 1e-12, 1e-14);
  }
}

TEST_CASE("per-axis square-QAM path equals the two-dimensional rule", "[information]") {
  // The custom copy (same points and labels, family custom) goes through the 2-D product rule.
  for (const char* name : {"16qam", "64qam"}) {
    const auto c = Constellation::from_name(name);
    const auto copy = custom_copy(c);
    for (double db : {-5.0, 5.0, 12.0, 20.0}) {
      const auto a = information_rates(c, db), b = information_rates(copy, db);
      INFO(name << " at " << db << " dB");
      CHECK(std::abs(a.cm - b.cm) <= 1e-6);
      CHECK(std::abs(a.bicm - b.bicm) <= 1e-6);
    }
  }
}

TEST_CASE("thresholds: capacity at the threshold equals the rate, above the Shannon bound", "[information]") {
  struct Case {
    const char* name;
    double rate;
  };
  for (const Case& t : {Case{"bpsk", 0.5}, Case{"qpsk", 1.0}, Case{"qpsk", 1.9}, Case{"8psk", 2.0},
                        Case{"16qam", 0.5}, Case{"16qam", 3.0}, Case{"64qam", 4.5}, Case{"256qam", 7.0},
                        Case{"1024qam", 9.0}, Case{"1024qam", 0.01}}) {
    const auto c = Constellation::from_name(t.name);
    const double tb = bicm_threshold_es_n0_db(c, t.rate), tc = cm_threshold_es_n0_db(c, t.rate);
    INFO(t.name << " rate " << t.rate << ": BICM threshold " << tb << " dB, CM " << tc << " dB");
    CHECK(std::abs(bicm_capacity(c, tb) - t.rate) <= 1e-9);
    CHECK(std::abs(cm_capacity(c, tc) - t.rate) <= 1e-9);
    // Shannon: log2(1 + SNR) >= C = R, so SNR >= 2^R - 1 (REFERENCES.md sec. 8); CM >= BICM.
    const double bound = 10.0 * std::log10(std::expm1(t.rate * std::numbers::ln2));
    CHECK(tc >= bound);
    CHECK(tb >= tc - 1e-8);
  }
  CHECK_THROWS_AS(bicm_threshold_es_n0_db(Constellation::bpsk(), 0.0), ConfigError);
  CHECK_THROWS_AS(bicm_threshold_es_n0_db(Constellation::bpsk(), 1.0), ConfigError);
  CHECK_THROWS_AS(cm_threshold_es_n0_db(Constellation::from_name("16qam"), 4.5), ConfigError);
  CHECK_THROWS_AS(cm_threshold_es_n0_db(Constellation::from_name("16qam"), std::nan("")), ConfigError);
}

TEST_CASE("thresholds invert the SciPy capacities", "[information]") {
  // For table rows below saturation, the threshold of the tabulated rate is the row's Es/N0.
  // The slope there is >= 0.002 bit/dB, so 1e-9 bit of table or quadrature error moves the
  // threshold by < 1e-6 dB.
  const auto table = capacity_table();
  std::size_t n = 0;
  for (const Row& row : table) {
    Constellation c = Constellation::bpsk();
    double factor = 1.0, offset = 0.0;
    if (row.constellation == "bpsk") {
    } else if (row.constellation == "pam4") {
      c = pam4();
    } else if (row.constellation == "pam32") {
      c = Constellation::from_name("1024qam");
      factor = 2.0;
      offset = kHalfDb;
    } else {
      continue;
    }
    if (row.value > c.bits_per_symbol() / factor - 0.05) continue;
    const double rate = factor * row.value;
    const double db = row.kind == "cm" ? cm_threshold_es_n0_db(c, rate) : bicm_threshold_es_n0_db(c, rate);
    INFO(row.constellation << " " << row.kind << " rate " << rate);
    CHECK(std::abs(db - (row.es_n0_db + offset)) <= 1e-6);
    ++n;
  }
  CHECK(n >= 20);
  // Rate 1/2 BPSK needs Eb/N0 = 0.187 dB, i.e. Es/N0 = -2.82 dB (a widely quoted value, from
  // memory; only a loose sanity check here).
  const double es = bicm_threshold_es_n0_db(Constellation::bpsk(), 0.5);
  CHECK(std::abs(es + kHalfDb - 0.187) < 0.01);
  // QPSK at 1 bit/symbol is BPSK at 1/2 bit, 3.01 dB higher.
  CHECK(std::abs(bicm_threshold_es_n0_db(Constellation::from_name("qpsk"), 1.0) - (es + kHalfDb)) < 1e-8);
}

TEST_CASE("GMI accumulator: known values, interval, merging", "[information]") {
  GmiAccumulator a(2);
  // Symbol 1: bits (0, 1) with LLRs (+ln 3, -ln 3): each bit gives 1 - log2(1 + 1/3) = log2 3 - 1.
  // Symbol 2: LLRs 0: each bit gives 1 - log2 2 = 0. Symbol 3: certain and right: 1 per bit.
  const float l3 = static_cast<float>(std::log(3.0));
  const std::vector<float> llr = {l3, -l3, 0.0f, 0.0f, llr_limit, -llr_limit};
  const std::vector<std::uint8_t> bits = {0, 1, 1, 0, 0, 1};
  a.add(llr, bits);
  const double g1 = 2.0 * (std::log2(3.0) - 1.0), g2 = 0.0, g3 = 2.0;
  const double mean = (g1 + g2 + g3) / 3.0;
  const double var = ((g1 - mean) * (g1 - mean) + (g2 - mean) * (g2 - mean) + (g3 - mean) * (g3 - mean)) / 2.0;
  const auto e = a.estimate(0.999);
  CHECK(e.symbols == 3);
  check_close(e.value, mean, 1e-6);
  check_close(e.standard_error, std::sqrt(var / 3.0), 1e-6);
  // z = 3.2905267 for two-sided 99.9 % (normal quantile, scipy.stats.norm.ppf(0.9995)).
  check_close(e.high - e.value, 3.2905267 * e.standard_error, 1e-7);
  check_close(e.value - e.low, 3.2905267 * e.standard_error, 1e-7);
  // A confidently wrong bit costs |LLR| / ln 2 bits.
  GmiAccumulator w(1);
  const std::vector<float> wrong = {100.0f};
  const std::vector<std::uint8_t> one = {1};
  w.add(wrong, one);
  check_close(w.estimate(0.9).value, 1.0 - (100.0 + std::log1p(std::exp(-100.0))) / std::numbers::ln2, 1e-12);
  CHECK(std::isnan(w.estimate(0.9).low));
  CHECK(std::isnan(GmiAccumulator(3).estimate(0.9).value));
  // Merging two halves gives the statistics of the whole.
  RandomStream rng(5, 1, Substream::user);
  std::vector<float> big(2000);
  std::vector<std::uint8_t> big_bits(2000);
  rng.fill_gaussian(big);
  rng.fill_bits(big_bits);
  for (auto& v : big) v *= 4.0f;
  GmiAccumulator whole(4), first(4), second(4);
  whole.add(big, big_bits);
  first.add(std::span<const float>(big).first(800), std::span<const std::uint8_t>(big_bits).first(800));
  second.add(std::span<const float>(big).subspan(800), std::span<const std::uint8_t>(big_bits).subspan(800));
  first += second;
  CHECK(first.symbols() == whole.symbols());
  check_close(first.estimate(0.95).value, whole.estimate(0.95).value, 1e-12);
  check_close(first.estimate(0.95).standard_error, whole.estimate(0.95).standard_error, 1e-10);
  CHECK_THROWS_AS(a.estimate(1.0), ConfigError);
  CHECK_THROWS_AS(GmiAccumulator(0), ConfigError);
}

TEST_CASE("Monte Carlo GMI with exact LLRs estimates the BICM capacity", "[information]") {
  // With exact LLRs E[g] = BICM capacity, so the 99.9 % CLT interval must cover the quadrature
  // value (false alarm about 0.1 % per point, fixed seeds; 2e5 symbols give half-widths ~0.01).
  struct P {
    const char* name;
    double db;
  };
  for (const P& p : {P{"qpsk", 0.0}, P{"16qam", 6.0}, P{"64qam", 12.0}, P{"8psk", 5.0}}) {
    const auto c = Constellation::from_name(p.name);
    const double cap = bicm_capacity(c, p.db);
    const auto e = gmi_monte_carlo(c, p.db, 200000, 2024, LlrMethod::exact, 0.999);
    INFO(p.name << " at " << p.db << " dB: BICM " << cap << ", GMI " << e.value << " [" << e.low << ", " << e.high << "]");
    CHECK(e.symbols == 200000);
    CHECK(e.low <= cap);
    CHECK(cap <= e.high);
    CHECK(e.high - e.low < 0.03);
  }
  // Reproducible: the same seed gives the same numbers.
  const auto c = Constellation::from_name("16qam");
  CHECK(gmi_monte_carlo(c, 3.0, 5000, 9, LlrMethod::exact, 0.9).value ==
        gmi_monte_carlo(c, 3.0, 5000, 9, LlrMethod::exact, 0.9).value);
  CHECK_THROWS_AS(gmi_monte_carlo(c, 3.0, 1, 9, LlrMethod::exact, 0.9), ConfigError);
  CHECK_THROWS_AS(gmi_monte_carlo(c, 3.0, 100, 9, LlrMethod::exact, 0.0), ConfigError);
}

TEST_CASE("Monte Carlo GMI with max-log LLRs is at most the BICM capacity", "[information]") {
  // Max-log LLRs imply a posterior other than P(b|y), so E[g] = 1 - cross-entropy <= 1 - H(b|y)
  // per bit: the interval may not lie above the capacity (0.1 % false alarm per point), and at
  // low SNR, where max-log is far from exact (about 0.035 bit, ~10 standard errors, at the points
  // below), it lies entirely below.
  struct P {
    const char* name;
    double db;
    bool clearly_below;
  };
  for (const P& p : {P{"16qam", 0.0, true}, P{"256qam", -5.0, true}, P{"16qam", 6.0, false}, P{"64qam", 12.0, false}}) {
    const auto c = Constellation::from_name(p.name);
    const double cap = bicm_capacity(c, p.db);
    const auto m = gmi_monte_carlo(c, p.db, 200000, 77, LlrMethod::max_log, 0.999);
    INFO(p.name << " at " << p.db << " dB: BICM " << cap << ", max-log GMI " << m.value << " [" << m.low << ", "
                << m.high << "]");
    CHECK(m.low <= cap);
    if (p.clearly_below) CHECK(m.high < cap);
  }
  // Paired on the same samples, the max-log deficit is significant even where it is small:
  // the per-symbol difference g_exact - g_maxlog has a positive mean (99.9 % one-sided CLT bound).
  const auto c = Constellation::from_name("16qam");
  const double db = 6.0, n0 = 1.0 / db_to_linear(db);
  const std::size_t n = 100000;
  RandomStream lab_rng(31, 0, Substream::payload), noise_rng(31, 0, Substream::awgn);
  std::vector<std::uint32_t> labels(n);
  lab_rng.fill_labels(labels, 4);
  std::vector<cf32> y(n);
  c.map_labels(labels, y);
  AwgnChannel(AwgnConfig{db, 1.0}).process(noise_rng, y, y);
  std::vector<float> le(4 * n), lm(4 * n);
  LlrDemapper(c, LlrMethod::exact).process(y, n0, le);
  LlrDemapper(c, LlrMethod::max_log).process(y, n0, lm);
  std::vector<std::uint8_t> bits(4 * n);
  c.labels_to_bits(labels, bits);
  auto g = [&](const std::vector<float>& l, std::size_t s) {
    double v = 0.0;
    for (unsigned i = 0; i < 4; ++i) {
      const double x = bits[4 * s + i] ? l[4 * s + i] : -l[4 * s + i];  // -(1 - 2b) L
      v += 1.0 - (std::max(x, 0.0) + std::log1p(std::exp(-std::abs(x)))) / std::numbers::ln2;
    }
    return v;
  };
  double sum = 0.0, sum2 = 0.0;
  for (std::size_t s = 0; s < n; ++s) {
    const double d = g(le, s) - g(lm, s);
    sum += d;
    sum2 += d * d;
  }
  const double mean = sum / n, sd = std::sqrt((sum2 - n * mean * mean) / (n - 1.0));
  INFO("paired max-log deficit " << mean << " +- " << sd / std::sqrt(double(n)));
  CHECK(mean - 3.0902 * sd / std::sqrt(double(n)) > 0.0);  // z(0.999) = 3.0902
}
