// Tests of llr: closed forms for BPSK/QPSK, fast paths against exhaustive search, sign vs slicing.
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <string>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/llr.hpp"
#include "qamsight/modem.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

namespace {

// Received samples around a constellation: random points plus noise of variance n0, and a few
// samples far outside it (to exercise the clamped edge levels and the large-LLR paths).
std::vector<cf32> samples_around(const Constellation& c, double es_n0_db, std::size_t n, std::uint64_t seed) {
  RandomStream lab_rng(seed, 0, Substream::payload), noise_rng(seed, 0, Substream::awgn);
  std::vector<std::uint32_t> labels(n);
  lab_rng.fill_labels(labels, c.bits_per_symbol());
  std::vector<cf32> y(n);
  c.map_labels(labels, y);
  AwgnChannel(AwgnConfig{es_n0_db, 1.0}).process(noise_rng, y, y);
  for (std::size_t i = 0; i < n; i += 97) y[i] *= 3.0f;  // well beyond the outer levels
  return y;
}

Constellation custom_copy(const Constellation& c) {
  std::vector<cf64> pts(c.points().begin(), c.points().end());
  std::vector<std::uint32_t> labels(c.order());
  for (std::uint32_t l = 0; l < c.order(); ++l) labels[l] = l;
  return Constellation::custom("copy of " + c.name(), pts, labels, false);
}

double clamp_ref(double v) {
  const double lim = llr_limit;
  return std::max(-lim, std::min(lim, v));
}

// Every fast-path LLR against the exhaustive double-precision reference, at several noise levels.
// The outputs are floats (relative rounding 6e-8); the references use the same float inputs. So
// 1e-5 relative plus 1e-5 absolute (for LLRs near zero) is generous while still catching any
// wrong level, sign, bit order or subset.
void check_against_exhaustive(const Constellation& c, LlrMethod method) {
  const LlrDemapper demapper(c, method);
  const unsigned k = c.bits_per_symbol();
  std::vector<double> ref(k);
  for (double es_n0_db : {-5.0, 5.0, 15.0, 25.0, 40.0}) {
    const double n0 = 1.0 / db_to_linear(es_n0_db);
    const auto y = samples_around(c, es_n0_db, 3000, 7);
    std::vector<float> llr(y.size() * k);
    demapper.process(y, n0, llr);
    std::size_t bad = 0;
    for (std::size_t s = 0; s < y.size(); ++s) {
      llr_exhaustive(c, y[s], n0, method, ref);
      for (unsigned j = 0; j < k; ++j) {
        const double expect = clamp_ref(ref[j]);
        if (!(std::abs(llr[s * k + j] - expect) <= 1e-5 * std::abs(expect) + 1e-5)) {
          if (bad++ < 5) {
            UNSCOPED_INFO(c.name() << " Es/N0 " << es_n0_db << " sample " << y[s] << " bit " << j << ": "
                                   << llr[s * k + j] << " vs " << expect);
          }
        }
      }
    }
    CHECK(bad == 0);
  }
}

}  // namespace

TEST_CASE("BPSK LLR equals -4 Re(y) / N0", "[llr]") {
  // Gaussian likelihoods exp(-|y - x|^2 / N0) with label 0 at -1 and label 1 at +1 (modem.hpp):
  // ln p(y|-1)/p(y|+1) = (|y - 1|^2 - |y + 1|^2) / N0 = -4 Re(y) / N0. This is the textbook
  // binary-input AWGN LLR 2y/sigma^2 (sigma^2 = N0/2) with the sign of our labelling.
  const auto c = Constellation::bpsk();
  for (auto method : {LlrMethod::exact, LlrMethod::max_log}) {
    const LlrDemapper d(c, method);
    CHECK_FALSE(d.uses_axis_path());
    for (double n0 : {2.0, 0.3, 0.01}) {
      std::vector<cf32> y = {{0.3f, 0.1f}, {-1.2f, 2.0f}, {0.0f, 0.0f}, {2.5f, -0.7f}, {-0.01f, 0.0f}};
      std::vector<float> llr(y.size());
      d.process(y, n0, llr);
      for (std::size_t i = 0; i < y.size(); ++i) {
        test::check_close(llr[i], -4.0 * y[i].real() / n0, 1e-6, 1e-12);
      }
    }
  }
}

TEST_CASE("QPSK LLRs equal -4 d Re(y) / N0 and -4 d Im(y) / N0", "[llr]") {
  // QPSK of modem.hpp: label bits (b0 b1), b0 selects the in-phase level, b1 the quadrature
  // level, bit value 0 at the negative amplitude -d, d = 1/sqrt 2. The likelihood factors per
  // axis and the other axis cancels: LLR_0 = ((y_I - d)^2 - (y_I + d)^2) / N0 = -4 d y_I / N0,
  // LLR_1 = -4 d y_Q / N0. Exact log-MAP and max-log coincide (one point per bit value and axis).
  const auto c = Constellation::from_name("qpsk");
  const double d = 1.0 / std::numbers::sqrt2;
  // The labelling assumption itself: label 0 (bits 00) is the point (-d, -d), label 2 (10) is (+d, -d).
  REQUIRE(std::abs(c.points()[0] - cf64(-d, -d)) < 1e-15);
  REQUIRE(std::abs(c.points()[2] - cf64(d, -d)) < 1e-15);
  for (auto method : {LlrMethod::exact, LlrMethod::max_log}) {
    const LlrDemapper dem(c, method);
    CHECK(dem.uses_axis_path());
    for (double es_n0_db : {-3.0, 4.0, 12.0}) {
      const double n0 = 1.0 / db_to_linear(es_n0_db);
      const auto y = samples_around(c, es_n0_db, 500, 3);
      std::vector<float> llr(2 * y.size());
      dem.process(y, n0, llr);
      for (std::size_t i = 0; i < y.size(); ++i) {
        test::check_close(llr[2 * i], -4.0 * d * y[i].real() / n0, 1e-5, 1e-9);
        test::check_close(llr[2 * i + 1], -4.0 * d * y[i].imag() / n0, 1e-5, 1e-9);
      }
    }
  }
}

TEST_CASE("per-axis square-QAM LLRs equal the exhaustive computation", "[llr]") {
  for (const char* name : {"qpsk", "16qam", "64qam", "256qam", "1024qam"}) {
    const auto c = Constellation::from_name(name);
    INFO(name);
    REQUIRE(LlrDemapper(c, LlrMethod::exact).uses_axis_path());
    check_against_exhaustive(c, LlrMethod::exact);
    check_against_exhaustive(c, LlrMethod::max_log);
  }
}

TEST_CASE("general-path LLRs equal the exhaustive computation", "[llr]") {
  // 8-PSK and a custom copy of 16-QAM (same points and labels, but no square-QAM fast path).
  for (const auto& c : {Constellation::from_name("8psk"), custom_copy(Constellation::square_qam(16)),
                        custom_copy(Constellation::square_qam(64))}) {
    INFO(c.name());
    REQUIRE_FALSE(LlrDemapper(c, LlrMethod::exact).uses_axis_path());
    check_against_exhaustive(c, LlrMethod::exact);
    check_against_exhaustive(c, LlrMethod::max_log);
  }
}

TEST_CASE("LLR signs agree with the hard decisions of the slicer", "[llr]") {
  // Max-log: LLR > 0 exactly when the nearest point with bit 0 is nearer than the nearest with
  // bit 1, i.e. when the nearest point overall (Constellation::slice) has bit 0. Samples within
  // float rounding of a decision boundary (|LLR| N0 < 1e-5) are skipped: there the float slicer
  // and the double demapper may break the near-tie differently.
  // Exact: each log-sum-exp over M/2 points lies in [max, max + ln(M/2)], so the exact LLR is
  // within ln(M/2) of the max-log one and has its sign wherever |max-log LLR| > ln(M/2) (for
  // square QAM ln(sqrt(M)/2), the per-axis subsets); only those samples are checked.
  for (const char* name : {"bpsk", "qpsk", "8psk", "16qam", "64qam", "256qam", "1024qam"}) {
    const auto c = Constellation::from_name(name);
    INFO(name);
    const unsigned k = c.bits_per_symbol();
    const LlrDemapper exact(c, LlrMethod::exact), maxlog(c, LlrMethod::max_log);
    for (double es_n0_db : {0.0, 10.0, 20.0, 30.0}) {
      const double n0 = 1.0 / db_to_linear(es_n0_db);
      const auto y = samples_around(c, es_n0_db, 4000, 5);
      std::vector<std::uint32_t> labels(y.size());
      c.slice(y, labels);
      std::vector<float> le(y.size() * k), lm(y.size() * k);
      exact.process(y, n0, le);
      maxlog.process(y, n0, lm);
      // Square QAM: the LLR of a bit is a per-axis log-sum-exp over sqrt(M)/2 levels.
      const double margin = c.family() == ConstellationFamily::square_qam ? std::log(c.levels_per_axis() / 2.0)
                                                                          : std::log(c.order() / 2.0);
      std::size_t mismatch_max = 0, mismatch_exact = 0, checked_exact = 0, total = 0;
      for (std::size_t s = 0; s < y.size(); ++s) {
        for (unsigned j = 0; j < k; ++j) {
          const unsigned hard = (labels[s] >> (k - 1 - j)) & 1u;
          const double m = lm[s * k + j];
          ++total;
          if (std::abs(m) * n0 >= 1e-5 && (m > 0) != (hard == 0)) ++mismatch_max;
          if (std::abs(m) > margin) {
            ++checked_exact;
            if ((le[s * k + j] > 0) != (hard == 0)) ++mismatch_exact;
          }
        }
      }
      INFO("Es/N0 " << es_n0_db << " dB: exact checked on " << checked_exact << " of " << total);
      CHECK(mismatch_max == 0);
      CHECK(mismatch_exact == 0);
      // The bound leaves the exact check vacuous nowhere and covers nearly all samples at 30 dB.
      CHECK(checked_exact >= total / 100);
      if (es_n0_db >= 30.0) CHECK(checked_exact >= 9 * total / 10);
    }
  }
}

TEST_CASE("LLRs stay finite and clamped at very high SNR", "[llr]") {
  // N0 = 1e-9 (90 dB): |LLR| would reach 1e9; outputs are clamped to llr_limit with the right sign.
  for (const char* name : {"bpsk", "16qam", "1024qam", "8psk"}) {
    const auto c = Constellation::from_name(name);
    for (auto method : {LlrMethod::exact, LlrMethod::max_log}) {
      const LlrDemapper d(c, method);
      const unsigned k = c.bits_per_symbol();
      std::vector<cf32> y = {c.points_f()[0] + cf32(0.01f, -0.02f), cf32(40.0f, -40.0f), cf32(0.0f, 0.0f)};
      std::vector<float> llr(y.size() * k);
      d.process(y, 1e-9, llr);
      for (float v : llr) {
        CHECK(std::isfinite(v));
        CHECK(std::abs(v) <= llr_limit);
      }
      // Label 0 sent (all bits 0) and received next to its point: every LLR is +llr_limit.
      for (unsigned j = 0; j < k; ++j) CHECK(llr[j] == llr_limit);
    }
  }
}

TEST_CASE("bad LLR method is a configuration error", "[llr]") {
  CHECK_THROWS_AS(LlrDemapper(Constellation::bpsk(), static_cast<LlrMethod>(7)), ConfigError);
}
