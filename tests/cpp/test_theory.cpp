// Tests of the theory module against the mpmath table, handbook values and exact identities.
#include <catch2/catch.hpp>
#include <cmath>
#include <functional>
#include <limits>
#include <numbers>
#include <string>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/theory.hpp"
#include "reference_tables.hpp"

namespace th = qamsight::theory;

namespace {

// Analytic functions in double precision against a 40-digit oracle: 1e-9 relative leaves room
// for the dB -> linear conversion (whose rounding is amplified by up to ~700 in the deepest
// tails) and for the quadrature and root tolerances, which are far tighter. Values in dB
// (and q_inverse, capacity) may be 0, so they get the same bound on max(|expected|, 1).
constexpr double kTableRel = 1e-9;

void check(double actual, double expected, bool scale_free, const std::string& what) {
  INFO(what);
  const double scale = scale_free ? std::fabs(expected) : std::max(std::fabs(expected), 1.0);
  INFO("actual " << actual << ", expected " << expected);
  CHECK(std::fabs(actual - expected) <= kTableRel * scale);
}

// The order M of a modulation name like "16qam" or "8psk".
unsigned order_of(const std::string& name, const std::string& suffix) {
  REQUIRE(name.size() > suffix.size());
  REQUIRE(name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0);
  return static_cast<unsigned>(std::stoul(name.substr(0, name.size() - suffix.size())));
}

bool ends_with(const std::string& s, const std::string& suffix) {
  return s.size() >= suffix.size() &&
         s.compare(s.size() - suffix.size(), suffix.size(), suffix) == 0;
}

double log2_of(unsigned order) { return std::log2(static_cast<double>(order)); }

// Evaluates one table row with the library; `probability` tells the check which scale to use.
double evaluate(const std::string& function, const std::string& modulation, const std::string& kind,
                double arg, bool& probability) {
  probability = function == "ber" || function == "ser" || function == "q_function";
  if (function == "ber" || function == "ser") {
    const bool ber = function == "ber";
    if (kind == "eb_n0" && th::has_reference(modulation)) {
      return ber ? th::ber_for(modulation, arg) : th::ser_for(modulation, arg);
    }
    if (ends_with(modulation, "psk")) {
      REQUIRE(kind == "es_n0");
      const unsigned m = order_of(modulation, "psk");
      return ber ? th::ber_psk_gray(m, arg) : th::ser_psk(m, arg);
    }
    const unsigned m = order_of(modulation, "qam");
    const double bits = log2_of(m);
    if (kind == "eb_n0") {
      return ber ? th::ber_square_qam(m, arg)
                 : th::ser_square_qam(m, th::es_n0_db_from_eb_n0_db(arg, bits));
    }
    REQUIRE(kind == "es_n0");
    return ber ? th::ber_square_qam(m, th::eb_n0_db_from_es_n0_db(arg, bits))
               : th::ser_square_qam(m, arg);
  }
  if (function == "required_eb_n0_db") return th::required_eb_n0_db(modulation, arg);
  if (function == "required_eb_n0_db_for_ser") {
    return th::required_eb_n0_db_for_ser(modulation, arg);
  }
  if (function == "q_function") return th::q_function(arg);
  if (function == "q_inverse") return th::q_inverse(arg);
  if (function == "shannon_min_eb_n0_db") return th::shannon_min_eb_n0_db(arg);
  if (function == "shannon_capacity") return th::shannon_capacity(arg);
  FAIL("unknown function in theory_table.csv: " << function);
  return 0.0;
}

template <class F>
std::string thrown_parameter(F&& f) {
  try {
    f();
  } catch (const qamsight::ConfigError& e) {
    return e.parameter();
  }
  return "<nothing thrown>";
}

}  // namespace

TEST_CASE("theory: every row of the mpmath reference table", "[theory]") {
  // tests/reference/theory_table.csv, written by make_theory_table.py with mpmath at 40 digits by
  // methods other than the library's: per-rail PAM decision-region enumeration with Gray Hamming
  // distances (square QAM BER), the Proakis closed form (QAM SER, Digital Communications 4th ed.
  // sec. 5.2-9), integration of the Proakis phase pdf over every sector (PSK SER and Gray BER,
  // eqs. 5.2-56/57), root finding on those curves, and the Shannon capacity equation.
  const auto rows =
      qamsight::test::read_csv(qamsight::test::source_path("tests/reference/theory_table.csv"));
  REQUIRE(rows.size() > 300);
  const std::vector<std::string> header = {"function", "modulation", "snr_kind", "snr_db", "value"};
  REQUIRE(rows[0] == header);
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const auto& r = rows[i];
    REQUIRE(r.size() == 5);
    const double arg = std::stod(r[3]);
    const double expected = std::stod(r[4]);
    bool probability = false;
    const double actual = evaluate(r[0], r[1], r[2], arg, probability);
    check(actual, expected, probability,
          "row " + std::to_string(i + 1) + ": " + r[0] + " " + r[1] + " " + r[2] + " " + r[3]);
  }
}

TEST_CASE("theory: QPSK reaches BER 1e-5 near Eb/N0 = 9.6 dB", "[theory]") {
  // 9.5879 dB: REFERENCES.md sec. 1.6 [COMPUTED]; the "9.6 dB" of the textbooks (Sklar,
  // Digital Communications 2nd ed.; Proakis) is from memory.
  const double x = th::required_eb_n0_db("qpsk", 1e-5);
  CHECK(std::fabs(x - 9.5879) <= 5e-5);
  CHECK(std::fabs(x - 9.6) <= 0.05);
  CHECK(std::fabs(th::required_eb_n0_db("bpsk", 1e-5) - x) <= 1e-9);
  // At exactly 9.6 dB the BER is 9.736e-6 (REFERENCES.md sec. 1.6 [COMPUTED]).
  CHECK(std::fabs(th::ber_for("qpsk", 9.6) - 9.736e-6) <= 0.0005e-6);
  // 1e-6 at 10.5298 dB (same section).
  CHECK(std::fabs(th::required_eb_n0_db("qpsk", 1e-6) - 10.5298) <= 5e-5);
}

TEST_CASE("theory: Gray QPSK has the BPSK bit error rate", "[theory]") {
  // Gray QPSK is two independent BPSK rails at the same Eb/N0 (Proakis, sec. 5.2-9), so the
  // Cho & Yoon sum for M = 4 must reduce to Q(sqrt(2 Eb/N0)) at every SNR, tails included.
  for (double eb = -30.0; eb <= 28.5; eb += 0.5) {
    check(th::ber_for("qpsk", eb), th::ber_bpsk(eb), true, "qpsk vs bpsk at " + std::to_string(eb));
    check(th::ber_for("4qam", eb), th::ber_bpsk(eb), true, "4qam vs bpsk at " + std::to_string(eb));
    // Independent of the library's erfc call: Q via erfc of x / sqrt(2) in q_function.
    check(th::ber_bpsk(eb), th::q_function(std::sqrt(2.0 * qamsight::db_to_linear(eb))), true,
          "bpsk vs Q at " + std::to_string(eb));
  }
}

TEST_CASE("theory: 4-PSK and 2-PSK agree with square 4-QAM and BPSK", "[theory]") {
  // Identities: 4-PSK is 4-QAM rotated by 45 degrees (REFERENCES.md sec. 2: "for M = 4 they
  // reproduce the QAM formula of sec. 1.2 exactly"), and 2-PSK is BPSK. The PSK side goes through
  // the Craig-integral quadrature, the QAM side through erfc, so this checks the quadrature
  // over the whole range, from SER near 1 down to the deep tail (1e-300 needs about 28.4 dB
  // for BPSK Eb/N0, i.e. 31.4 dB Es/N0 for 4-PSK).
  for (double es = -30.0; es <= 31.0; es += 0.25) {
    const std::string at = " at Es/N0 " + std::to_string(es);
    check(th::ser_psk(4, es), th::ser_square_qam(4, es), true, "4-PSK SER" + at);
    check(th::ber_psk_gray(4, es), th::ber_square_qam(4, es - 10.0 * std::log10(2.0)), true,
          "4-PSK BER" + at);
    check(th::ser_psk(2, es), th::q_function(std::sqrt(2.0 * qamsight::db_to_linear(es))), true,
          "2-PSK SER" + at);
    check(th::ber_psk_gray(2, es), th::ser_psk(2, es), true, "2-PSK BER" + at);
  }
}

TEST_CASE("theory: Shannon limit", "[theory]") {
  // ln 2 = -1.5917 dB as the spectral efficiency goes to 0 (Shannon 1948; REFERENCES.md sec. 8).
  const double limit = 10.0 * std::log10(std::numbers::ln2);
  CHECK(std::fabs(th::shannon_min_eb_n0_db(0.0) - (-1.5917)) <= 5e-5);
  CHECK(std::fabs(th::shannon_min_eb_n0_db(1e-9) - limit) <= 1e-8);
  // eta = 1 needs exactly Eb/N0 = 1 (0 dB), eta = 2 needs 3/2 (REFERENCES.md sec. 8).
  CHECK(std::fabs(th::shannon_min_eb_n0_db(1.0)) <= 1e-14);
  CHECK(std::fabs(th::shannon_min_eb_n0_db(2.0) - 10.0 * std::log10(1.5)) <= 1e-13);
  // The bound rises with eta, and no modulation beats it: at the Eb/N0 where each reference curve
  // reaches BER 1e-6, its own bits per symbol must be achievable (common practice as a sanity
  // check; it follows from the coding theorem).
  double previous = limit;
  for (double eta = 0.01; eta <= 30.0; eta *= 1.5) {
    const double v = th::shannon_min_eb_n0_db(eta);
    CHECK(v > previous);
    previous = v;
  }
  const std::vector<std::pair<std::string, double>> curves = {
      {"bpsk", 1},  {"qpsk", 2},   {"8psk", 3},    {"16qam", 4},
      {"64qam", 6}, {"256qam", 8}, {"1024qam", 10}};
  for (const auto& [name, bits] : curves) {
    INFO(name);
    CHECK(th::required_eb_n0_db(name, 1e-6) > th::shannon_min_eb_n0_db(bits));
  }
  // Capacity: log2(1 + 3) = 2 at SNR 4.7712 dB (REFERENCES.md sec. 8, eta = 2).
  CHECK(std::fabs(th::shannon_capacity(10.0 * std::log10(3.0)) - 2.0) <= 1e-14);
}

TEST_CASE("theory: error rates stay below their chance level and fall with SNR", "[theory]") {
  // Every BER of a Gray-labelled constellation is below 1/2 at any finite SNR and strictly
  // decreasing until it underflows; SER is below 1 - 1/M (common practice; both follow from the
  // decision regions).
  const std::vector<std::pair<std::string, double>> curves = {
      {"bpsk", 2}, {"qpsk", 4}, {"4qam", 4}, {"8psk", 8}, {"16qam", 16}, {"64qam", 64},
      {"256qam", 256}, {"1024qam", 1024}};
  for (const auto& [name, order] : curves) {
    double last_ber = 0.5, last_ser = 1.0 - 1.0 / order;
    for (double eb = -30.0; eb <= 50.0; eb += 0.5) {
      INFO(name << " at Eb/N0 " << eb);
      const double ber = th::ber_for(name, eb);
      const double ser = th::ser_for(name, eb);
      CHECK(ber >= 0.0);
      CHECK(ber < 0.5);
      CHECK(ser < 1.0 - 1.0 / order);
      CHECK(ser >= ber);  // a bit error needs a symbol error
      if (last_ber > 0.0) CHECK(ber < last_ber);
      if (last_ser > 0.0) CHECK(ser < last_ser);
      last_ber = ber;
      last_ser = ser;
    }
  }
  // Higher orders are worse at the same Eb/N0 (common practice for square QAM and Gray PSK).
  for (double eb = 0.0; eb <= 20.0; eb += 1.0) {
    CHECK(th::ber_for("16qam", eb) > th::ber_for("qpsk", eb));
    CHECK(th::ber_for("64qam", eb) > th::ber_for("16qam", eb));
    CHECK(th::ber_for("256qam", eb) > th::ber_for("64qam", eb));
    CHECK(th::ber_for("1024qam", eb) > th::ber_for("256qam", eb));
    CHECK(th::ber_for("8psk", eb) > th::ber_for("qpsk", eb));
  }
}

TEST_CASE("theory: round trips of the inverses", "[theory]") {
  for (double p : {0.75, 0.5, 0.1, 1e-3, 1e-9, 1e-30, 1e-100, 1e-300}) {
    INFO("p = " << p);
    check(th::q_function(th::q_inverse(p)), p, true, "Q(Q^-1(p))");
  }
  for (double target : {1e-2, 1e-4, 1e-7, 1e-10, 1e-20, 1e-300}) {
    for (const char* name : {"bpsk", "8psk", "64qam", "1024qam"}) {
      const std::string what = std::string(name) + " at " + std::to_string(target);
      check(th::ber_for(name, th::required_eb_n0_db(name, target)), target, true, "BER " + what);
      check(th::ser_for(name, th::required_eb_n0_db_for_ser(name, target)), target, true,
            "SER " + what);
    }
  }
  CHECK(th::es_n0_db_from_eb_n0_db(10.0, 4.0, 0.5) == Approx(10.0 + 10.0 * std::log10(2.0)));
  CHECK(th::eb_n0_db_from_es_n0_db(th::es_n0_db_from_eb_n0_db(7.0, 6.0, 0.75), 6.0, 0.75) ==
        Approx(7.0).epsilon(1e-15));
}

TEST_CASE("theory: misuse throws ConfigError naming the parameter", "[theory]") {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  CHECK(thrown_parameter([] { th::ber_square_qam(8, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ber_square_qam(2, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ber_square_qam(0, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ber_square_qam(1u << 22, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ser_square_qam(32, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ser_psk(6, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ser_psk(1, 10.0); }) == "order");
  CHECK(thrown_parameter([] { th::ber_psk_gray(2048, 10.0); }) == "order");
  CHECK(thrown_parameter([&] { th::ber_for("qpsk", nan); }) == "eb_n0_db");
  CHECK(thrown_parameter([&] { th::ser_for("8psk", inf); }) == "eb_n0_db");
  CHECK(thrown_parameter([&] { th::ber_bpsk(-inf); }) == "eb_n0_db");
  CHECK(thrown_parameter([&] { th::ber_square_qam(16, nan); }) == "eb_n0_db");
  CHECK(thrown_parameter([&] { th::ser_square_qam(16, nan); }) == "es_n0_db");
  CHECK(thrown_parameter([&] { th::ser_psk(8, nan); }) == "es_n0_db");
  CHECK(thrown_parameter([&] { th::ber_psk_gray(8, inf); }) == "es_n0_db");
  CHECK(thrown_parameter([] { th::ber_for("17qam", 10.0); }) == "modulation");
  CHECK(thrown_parameter([] { th::required_eb_n0_db("qpsk", 0.0); }) == "target_ber");
  CHECK(thrown_parameter([] { th::required_eb_n0_db("qpsk", 0.9); }) == "target_ber");
  CHECK(thrown_parameter([] { th::required_eb_n0_db("qpsk", -1e-3); }) == "target_ber");
  CHECK(thrown_parameter([] { th::required_eb_n0_db("qpsk", 1e-301); }) == "target_ber");
  CHECK(thrown_parameter([&] { th::required_eb_n0_db("8psk", nan); }) == "target_ber");
  CHECK(thrown_parameter([] { th::required_eb_n0_db_for_ser("16qam", 0.0); }) == "target_ser");
  CHECK(thrown_parameter([] { th::required_eb_n0_db_for_ser("bpsk", 0.5); }) == "target_ser");
  CHECK(thrown_parameter([] { th::required_eb_n0_db("ofdm", 1e-3); }) == "modulation");
  CHECK(thrown_parameter([] { th::q_inverse(0.0); }) == "p");
  CHECK(thrown_parameter([] { th::q_inverse(1.0); }) == "p");
  CHECK(thrown_parameter([] { th::shannon_min_eb_n0_db(-1.0); }) == "spectral_efficiency");
  CHECK(thrown_parameter([&] { th::shannon_capacity(nan); }) == "snr_db");
  CHECK(thrown_parameter([] { th::es_n0_db_from_eb_n0_db(3.0, 0.0); }) == "bits_per_symbol");
  CHECK(thrown_parameter([] { th::es_n0_db_from_eb_n0_db(3.0, 2.0, 1.5); }) == "code_rate");
  CHECK(th::has_reference("1024qam"));
  CHECK(th::has_reference("4qam"));
  CHECK_FALSE(th::has_reference("32apsk"));
  CHECK_FALSE(th::has_reference("QPSK"));
}
