// Tests of evm: data-aided EVM/MER in AWGN against chi-square intervals, decision-directed bias
// against the integrated reference table, carrier-offset removal, peak normalisation, misuse.
#include <boost/math/distributions/chi_squared.hpp>
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <map>
#include <numbers>
#include <string>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/evm.hpp"
#include "qamsight/modem.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

namespace {

constexpr double kZ999 = 3.290526731491926;  // two-sided 99.9 % normal quantile

struct Capture {
  std::vector<cf32> sent, noise;
};

// Random symbols of `c` and circular Gaussian noise of total variance n0 (AwgnChannel's
// convention: N0 = 1 / (Es/N0) for unit-energy symbols), from fixed streams.
Capture make_capture(const Constellation& c, std::size_t n, double es_n0_db, std::uint64_t seed) {
  Capture cap;
  std::vector<std::uint32_t> labels(n);
  RandomStream(seed, 1, Substream::payload).fill_labels(labels, c.bits_per_symbol());
  cap.sent.resize(n);
  c.map_labels(labels, cap.sent);
  cap.noise.resize(n);
  RandomStream(seed, 1, Substream::awgn).fill_complex_gaussian(cap.noise, db_to_linear(-es_n0_db));
  return cap;
}

// 99.9 % interval of the data-aided RMS EVM (ratio) in AWGN: with N0 the noise variance and n
// symbols, 2 n EVM^2 / N0 is chi-square with 2 n degrees of freedom (sum of 2n squared
// Gaussians of variance N0/2, unit-energy constellation). The least-squares fit of a complex
// gain removes exactly 2 of them, the frequency fit about one more, so nu = 2n - 3 with all
// removals on (the expected EVM^2 is N0 nu / 2n).
std::pair<double, double> chi_square_interval(double n0, std::size_t n, double nu) {
  const boost::math::chi_squared dist(nu);
  const double lo = boost::math::quantile(dist, 0.0005), hi = boost::math::quantile(dist, 0.9995);
  const double s = n0 / (2.0 * static_cast<double>(n));
  return {std::sqrt(s * lo), std::sqrt(s * hi)};
}

}  // namespace

TEST_CASE("data-aided EVM and MER in AWGN follow EVM = 1/sqrt(SNR)", "[evm]") {
  // Relation EVM_rms = 1/sqrt(Es/N0), MER = Es/N0 in dB for data-aided measurement in AWGN
  // (REFERENCES.md section 8; R. A. Shafik et al., ICECE 2006). The interval is derived above.
  // Each check fails with probability 0.1 % for a correct implementation (fixed seeds).
  const std::size_t n = 100000;
  std::uint64_t seed = 11;
  for (const char* name : {"qpsk", "16qam", "64qam", "256qam"}) {
    const auto c = Constellation::from_name(name);
    // Var |s|^2 over the constellation, for the interval of the references' mean power in MER.
    double m2 = 0.0, m4 = 0.0;
    for (const auto& p : c.points()) m2 += std::norm(p), m4 += std::norm(p) * std::norm(p);
    m2 /= c.order(), m4 /= c.order();
    const double ref_sd = std::sqrt((m4 - m2 * m2) / static_cast<double>(n));
    for (double snr : {10.0, 20.0, 30.0}) {
      INFO(name << " at Es/N0 = " << snr << " dB");
      const auto cap = make_capture(c, n, snr, seed++);
      std::vector<cf32> r(n);
      for (std::size_t i = 0; i < n; ++i) r[i] = cap.sent[i] + cap.noise[i];
      const double n0 = db_to_linear(-snr);
      for (bool fits : {false, true}) {
        EvmOptions o;
        o.remove_frequency = o.remove_phase = o.remove_gain = fits;
        const auto m = measure_evm(r, cap.sent, c, o);
        const auto [lo, hi] = chi_square_interval(n0, n, fits ? 2.0 * n - 3.0 : 2.0 * n);
        CHECK(m.symbols == n);
        CHECK(m.rms >= lo);
        CHECK(m.rms <= hi);
        CHECK(std::abs(m.rms_pct - 100.0 * m.rms) <= 1e-12 * m.rms_pct);
        CHECK(std::abs(m.rms_db - 20.0 * std::log10(m.rms)) <= 1e-12);
        // the nominal value itself, 100/sqrt(SNR) %, lies in the interval too
        const double nominal = 100.0 * std::pow(10.0, -snr / 20.0);
        CHECK(nominal >= 100.0 * lo * 0.999);
        CHECK(nominal <= 100.0 * hi * 1.001);
        // MER: references' mean power within 1 +- z sd (CLT), error power within the chi-square interval
        const double mer_lo = 10.0 * std::log10((m2 - kZ999 * ref_sd) / (hi * hi));
        const double mer_hi = 10.0 * std::log10((m2 + kZ999 * ref_sd) / (lo * lo));
        CHECK(m.mer_db >= mer_lo);
        CHECK(m.mer_db <= mer_hi);
        CHECK(std::abs(m.mer_db - snr) <= 0.1);
      }
    }
  }
}

TEST_CASE("removing a known gain, phase and frequency offset recovers the AWGN-only EVM", "[evm]") {
  // r = g e^{j 2 pi f n} (s + w): after the fit the error is w again, so the EVM equals that of
  // the offset-free capture up to the fit's own estimation noise (3 of 2n degrees of freedom,
  // relative 1e-4 here), and stays in the chi-square interval of the AWGN-only EVM.
  // The frequency estimate is checked against the Cramer-Rao bound of a tone in white noise,
  // var(omega) >= 6 sigma^2 / (A^2 N (N^2 - 1)) for complex noise of total variance sigma^2
  // (D. C. Rife, R. R. Boorstyn, IEEE Trans. Inf. Theory 20(5), 1974; from memory), here with
  // A^2 = |g|^2 E|s|^2 and sigma^2 = |g|^2 N0: |f_hat - f| <= 5 sqrt(CRB) / (2 pi) (the ML
  // estimator reaches the bound at these SNRs; 5 sigma: false-alarm rate below 1e-6).
  const std::size_t n = 20000;
  const auto c = Constellation::from_name("16qam");
  const double snr = 20.0, n0 = db_to_linear(-snr);
  const auto cap = make_capture(c, n, snr, 77);
  std::vector<cf32> clean(n);
  for (std::size_t i = 0; i < n; ++i) clean[i] = cap.sent[i] + cap.noise[i];
  EvmOptions o;
  const auto base = measure_evm(clean, cap.sent, c, o);
  const auto [lo, hi] = chi_square_interval(n0, n, 2.0 * n - 3.0);
  const cf64 g = std::polar(0.37, 2.2);
  for (double f : {0.0, 1e-4, 1e-3, -3e-3, 0.02, -0.11, 0.3, 0.49}) {
    INFO("frequency offset " << f << " cycles/symbol");
    std::vector<cf32> r(n);
    for (std::size_t i = 0; i < n; ++i) {
      const cf64 rot = g * std::polar(1.0, 2.0 * std::numbers::pi * std::remainder(f * i, 1.0));
      r[i] = cf32(rot * cf64(clean[i]));
    }
    const auto m = measure_evm(r, cap.sent, c, o);
    CHECK(std::abs(m.rms / base.rms - 1.0) <= 2e-4);
    CHECK(m.rms >= lo);
    CHECK(m.rms <= hi);
    const double crb = 6.0 * n0 / (static_cast<double>(n) * (static_cast<double>(n) * n - 1.0));
    CHECK(std::abs(m.frequency_offset - f) <= 5.0 * std::sqrt(crb) / (2.0 * std::numbers::pi));
    CHECK(std::abs(m.gain / g - 1.0) <= 5e-3);
    // Without the frequency fit an offset of 1e-3 cycles/symbol or more ruins the measurement.
    if (std::abs(f) >= 1e-3) {
      EvmOptions nf = o;
      nf.remove_frequency = false;
      CHECK(measure_evm(r, cap.sent, c, nf).rms > 10.0 * base.rms);
    }
  }
}

TEST_CASE("peak normalisation differs from average by the peak-to-average factor", "[evm]") {
  // REFERENCES.md section 3.5: the DVB (peak-normalised) EVM differs from the 3GPP
  // (average-normalised) EVM by sqrt(PAPR): 16-QAM sqrt(1.8), 64-QAM sqrt(7/3). 256-QAM from the
  // square-QAM geometry, peak 2 (L-1)^2 a^2 over mean 2 a^2 (L^2 - 1) / 3 = 3 (L-1)/(L+1) = 45/17.
  // QPSK and PSK: 1 (constant modulus).
  const std::map<std::string, double> factor = {
      {"16qam", std::sqrt(1.8)}, {"64qam", std::sqrt(7.0 / 3.0)}, {"256qam", std::sqrt(45.0 / 17.0)},
      {"qpsk", 1.0}, {"8psk", 1.0}};
  for (const auto& [name, k] : factor) {
    INFO(name);
    const auto c = Constellation::from_name(name);
    const auto cap = make_capture(c, 5000, 25.0, 5);
    std::vector<cf32> r(cap.sent.size());
    for (std::size_t i = 0; i < r.size(); ++i) r[i] = cap.sent[i] + cap.noise[i];
    EvmOptions avg, peak;
    peak.normalisation = EvmNormalisation::peak_power;
    const auto a = measure_evm(r, cap.sent, c, avg);
    const auto p = measure_evm(r, cap.sent, c, peak);
    CHECK(std::abs(a.rms_pct / p.rms_pct - k) <= 1e-9 * k);
    CHECK(std::abs(a.peak_pct / p.peak_pct - k) <= 1e-9 * k);
    CHECK(a.peak_index == p.peak_index);
    CHECK(a.mer_db == p.mer_db);  // MER does not depend on the EVM normalisation
  }
}

TEST_CASE("decision-directed EVM shows the expected low-SNR bias", "[evm]") {
  // Expected values: tests/reference/evm_table.csv (make_evm_table.py: SciPy integration over the
  // per-rail PAM decision regions, no gain fit, normalised to the constellation's average power;
  // agrees with REFERENCES.md section 8: 16QAM at 10 dB 26.43 %, 64QAM at 15 dB 13.12 %).
  // Interval: EVM^2 is the mean of n independent |e|^2 with variance 2 (m4 - m2^2) (rail moments
  // in the table), so by the central limit theorem (n = 2e5) EVM^2 lies within 2 m2 +-
  // 3.29 sqrt(2 (m4 - m2^2) / n) with probability 99.9 %.
  const auto rows = test::read_csv(test::source_path("tests/reference/evm_table.csv"));
  REQUIRE(rows.size() > 30);
  REQUIRE(rows[0][3] == "dd_evm_pct");
  const std::size_t n = 200000;
  const std::vector<std::pair<std::string, double>> cases = {
      {"qpsk", 0.0}, {"qpsk", 5.0}, {"16qam", 0.0}, {"16qam", 10.0}, {"16qam", 15.0}, {"16qam", 20.0},
      {"64qam", 15.0}, {"64qam", 20.0}, {"256qam", 20.0}, {"256qam", 25.0}};
  std::uint64_t seed = 300;
  std::size_t checked = 0;
  for (const auto& row : rows) {
    if (row[0] == "modulation") continue;
    const double snr = std::stod(row[1]);
    bool wanted = false;
    for (const auto& [m, s] : cases) wanted = wanted || (m == row[0] && s == snr);
    if (!wanted) continue;
    INFO(row[0] << " at Es/N0 = " << snr << " dB");
    const auto c = Constellation::from_name(row[0]);
    const auto cap = make_capture(c, n, snr, seed++);
    std::vector<cf32> r(n);
    for (std::size_t i = 0; i < n; ++i) r[i] = cap.sent[i] + cap.noise[i];
    EvmOptions o;
    o.data_aided = false;
    o.remove_frequency = o.remove_phase = o.remove_gain = false;
    const auto m = measure_evm(r, {}, c, o);
    const double m2 = std::stod(row[4]), m4 = std::stod(row[5]);
    const double half = kZ999 * std::sqrt(2.0 * (m4 - m2 * m2) / static_cast<double>(n));
    CHECK(m.rms * m.rms >= 2.0 * m2 - half);
    CHECK(m.rms * m.rms <= 2.0 * m2 + half);
    // and below the data-aided value where decisions fail (the bias)
    const double da = std::stod(row[2]);
    if (std::stod(row[3]) < 0.95 * da) CHECK(m.rms_pct < da);
    ++checked;
  }
  CHECK(checked == cases.size());
}

TEST_CASE("decision-directed fit with offsets matches data-aided once decisions are right", "[evm]") {
  // At 25 dB every 16-QAM decision is right (symbol error rate ~1e-9 per symbol at that SNR by the
  // exact SER), so the decision-directed measurement sees the true references and must give the
  // data-aided result, here from a blind start through an unknown gain, phase and frequency.
  const std::size_t n = 8192;
  for (const char* name : {"qpsk", "16qam", "64qam", "8psk"}) {
    INFO(name);
    const auto c = Constellation::from_name(name);
    const double snr = std::string(name) == "64qam" ? 32.0 : 25.0;
    const auto cap = make_capture(c, n, snr, 9);
    const cf64 g = std::polar(1.7, 0.3);
    const double f = 1.5e-3;
    std::vector<cf32> r(n);
    for (std::size_t i = 0; i < n; ++i) {
      r[i] = cf32(g * std::polar(1.0, 2.0 * std::numbers::pi * f * i) * cf64(cap.sent[i] + cap.noise[i]));
    }
    EvmOptions dd;
    dd.data_aided = false;
    const auto a = measure_evm(r, cap.sent, c, EvmOptions{});
    const auto b = measure_evm(r, {}, c, dd);
    CHECK(std::abs(b.rms / a.rms - 1.0) <= 1e-6);
    CHECK(std::abs(b.frequency_offset - f) <= 1e-6);
    CHECK(b.iterations >= 2);
  }
}

TEST_CASE("error vectors, corrected symbols and the peak are kept", "[evm]") {
  const auto c = Constellation::from_name("16qam");
  const auto cap = make_capture(c, 1000, 20.0, 3);
  std::vector<cf32> r(1000);
  for (std::size_t i = 0; i < r.size(); ++i) r[i] = cap.sent[i] + cap.noise[i];
  r[417] += cf32(0.5f, -0.5f);  // one symbol with a large error
  const auto m = measure_evm(r, cap.sent, c, EvmOptions{.remove_frequency = false, .remove_phase = false,
                                                        .remove_gain = false});
  REQUIRE(m.error_vectors.size() == 1000);
  REQUIRE(m.corrected.size() == 1000);
  CHECK(m.peak_index == 417);
  CHECK(std::abs(m.peak_pct - 100.0 * std::abs(cf64(r[417]) - cf64(cap.sent[417]))) <= 1e-4);
  CHECK(m.error_vectors[5] == r[5] - cap.sent[5]);
  EvmOptions lean;
  lean.keep_error_vectors = false;
  CHECK(measure_evm(r, cap.sent, c, lean).error_vectors.empty());
}

TEST_CASE("EVM measurement misuse throws ConfigError", "[evm]") {
  const auto c = Constellation::from_name("qpsk");
  std::vector<cf32> r(10, cf32(1, 1)), s(9, cf32(1, 1));
  CHECK_THROWS_AS(measure_evm(r, s, c), ConfigError);
  CHECK_THROWS_AS(measure_evm(std::span<const cf32>(r.data(), 1), std::span<const cf32>(r.data(), 1), c), ConfigError);
  EvmOptions dd;
  dd.data_aided = false;
  CHECK_THROWS_AS(measure_evm(r, r, c, dd), ConfigError);
  EvmOptions bad;
  bad.remove_phase = false;  // frequency removal needs the phase
  CHECK_THROWS_AS(measure_evm(r, r, c, bad), ConfigError);
  bad = {};
  bad.max_frequency = 0.7;
  CHECK_THROWS_AS(measure_evm(r, r, c, bad), ConfigError);
  CHECK_THROWS_AS(fit_carrier(r, std::vector<cf32>(10, cf32(0, 0)), true), ConfigError);
}
