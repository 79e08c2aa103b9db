// Tests of the regression gate: Holm procedure, passing correct runs, catching a 0.5 dB loss.
#include <catch2/catch.hpp>
#include <cmath>

#include "qamsight/regression.hpp"
#include "qamsight/theory.hpp"

using namespace qamsight;

TEST_CASE("Holm step-down procedure", "[regression]") {
  // Worked by hand from the definition (Holm, Scand. J. Statist. 6, 1979): alpha = 0.05,
  // sorted p 0.005 <= 0.05/4, 0.01 <= 0.05/3, 0.03 > 0.05/2 -> stop; two rejections.
  CHECK(holm_reject({0.01, 0.04, 0.03, 0.005}, 0.05) == std::vector<bool>{true, false, false, true});
  // All below alpha but the smallest above alpha/m: nothing is rejected.
  CHECK(holm_reject({0.02, 0.03, 0.04}, 0.05) == std::vector<bool>{false, false, false});
  CHECK(holm_reject({}, 0.05).empty());
}

namespace {
SweepConfig gate_sweep(double impl_loss_db, std::uint64_t seed) {
  SweepConfig c;
  c.modulations = {"qpsk", "16qam"};
  c.snr_db = {4, 5, 6, 7, 8, 9, 10};
  c.seed = seed;
  c.link.impl_loss_db = impl_loss_db;
  return c;  // default stopping rule: 100 bit errors or 1e8 bits
}
}  // namespace

TEST_CASE("gate passes correct runs at the default settings", "[regression]") {
  // A correct chain fails the theory check with probability <= 1% (family-wise, Holm); the
  // seeds are fixed.
  for (std::uint64_t seed : {1u, 2u}) {
    const auto r = run_sweep(gate_sweep(0.0, seed));
    const auto rep = check_against_theory(r);
    CHECK(rep.pass);
    for (const auto& il : rep.losses) {
      if (il.available) CHECK(std::abs(il.loss_db) < 0.25);
    }
  }
  const auto a = run_sweep(gate_sweep(0.0, 3)), b = run_sweep(gate_sweep(0.0, 4));
  CHECK(check_against_baseline(a, b).pass);
}

TEST_CASE("gate catches a genuine 0.5 dB degradation at the default settings", "[regression]") {
  const auto bad = run_sweep(gate_sweep(0.5, 5));
  const auto theory_rep = check_against_theory(bad);
  CHECK_FALSE(theory_rep.pass);
  // Implementation loss is reported near the injected 0.5 dB where the grid brackets the
  // target BER 1e-4 (QPSK; 16-QAM stays above it up to 10 dB). Statistical error with ~100
  // errors per point is about 0.05 dB; interpolation over 1 dB steps adds a little.
  REQUIRE(theory_rep.losses.size() == 2);
  REQUIRE(theory_rep.losses[0].available);
  CHECK(std::abs(theory_rep.losses[0].loss_db - 0.5) < 0.2);
  CHECK_FALSE(theory_rep.losses[1].available);
  const auto base = run_sweep(gate_sweep(0.0, 6));
  const auto base_rep = check_against_baseline(bad, base);
  CHECK_FALSE(base_rep.pass);
  std::size_t flagged = 0;
  for (const auto& row : base_rep.rows) flagged += row.failed;
  CHECK(flagged >= 3);
}

TEST_CASE("implementation loss interpolation", "[regression]") {
  // Points exactly on theory: interpolation in log BER between 1 dB steps recovers the
  // required Eb/N0 of theory to within the curvature error (below 0.05 dB for QPSK at 1e-4).
  std::vector<PointResult> curve;
  for (double x = 4; x <= 10; x += 1) {
    PointResult p;
    p.spec.modulation = "qpsk";
    p.spec.eb_n0_db = x;
    p.counts.bits = 1'000'000'000;
    p.ber = theory::ber_for("qpsk", x);
    p.counts.bit_errors = static_cast<std::uint64_t>(p.ber * 1e9);
    curve.push_back(p);
  }
  const double at = eb_n0_at_ber(curve, 1e-4);
  CHECK(std::abs(at - theory::required_eb_n0_db("qpsk", 1e-4)) < 0.05);
  CHECK(std::isnan(eb_n0_at_ber(curve, 1e-12)));
}

TEST_CASE("JUnit report lists every point", "[regression]") {
  const auto r = run_sweep(gate_sweep(0.0, 8));
  const std::string x = gate_junit_xml(check_against_theory(r));
  CHECK(x.find("<testsuite name=\"qamsight check theory\" tests=\"14\" failures=\"0\"") != std::string::npos);
  CHECK(x.find("16qam Eb/N0 9 dB") != std::string::npos);
}
