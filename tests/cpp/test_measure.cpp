// Tests of measure: Clopper-Pearson intervals, binomial tests (vs SciPy), EVM accumulation.
#include <catch2/catch.hpp>
#include <cmath>
#include <string>
#include <vector>

#include "qamsight/measure.hpp"
#include "reference_tables.hpp"

using namespace qamsight;
using qamsight::test::check_close;

TEST_CASE("exact intervals and tests match SciPy reference values", "[measure]") {
  // tests/reference/stats_table.csv, made by make_stats_table.py with scipy.stats.beta.ppf,
  // scipy.stats.binomtest and scipy.stats.binom.sf. Tolerance 1e-8 relative (double-precision quantiles of two
  // independent implementations agree to about 1e-9 at n = 1e9).
  const auto rows = test::read_csv(test::source_path("tests/reference/stats_table.csv"));
  REQUIRE(rows.size() > 20);
  std::size_t checked = 0;
  for (std::size_t i = 1; i < rows.size(); ++i) {
    const auto& r = rows[i];
    INFO("row " << i << ": " << r[0] << " " << r[1] << " " << r[2] << " " << r[3]);
    if (r[0] == "clopper_pearson") {
      const Interval iv = clopper_pearson(std::stoull(r[1]), std::stoull(r[2]), std::stod(r[3]));
      check_close(iv.low, std::stod(r[5]), 1e-8, 1e-300);
      check_close(iv.high, std::stod(r[6]), 1e-8);
      ++checked;
    } else if (r[0] == "binom_two_sided") {
      check_close(binomial_test_p_value(std::stoull(r[1]), std::stoull(r[2]), std::stod(r[3])), std::stod(r[5]), 1e-8);
      ++checked;
    } else if (r[0] == "rate_increase") {
      check_close(rate_increase_p_value(std::stoull(r[1]), std::stoull(r[2]), std::stoull(r[3]), std::stoull(r[4])),
                  std::stod(r[5]), 1e-8);
      ++checked;
    }
  }
  CHECK(checked >= 20);
}

TEST_CASE("Clopper-Pearson closed forms at the edges", "[measure]") {
  // k = 0: upper limit 1 - (alpha/2)^(1/n); k = n: lower limit (alpha/2)^(1/n).
  for (std::uint64_t n : {1ull, 10ull, 1000ull, 123456789ull}) {
    const Interval a = clopper_pearson(0, n, 0.95), b = clopper_pearson(n, n, 0.95);
    CHECK(a.low == 0.0);
    check_close(a.high, -std::expm1(std::log(0.025) / double(n)), 1e-10);
    CHECK(b.high == 1.0);
    check_close(b.low, std::exp(std::log(0.025) / double(n)), 1e-10);
  }
  CHECK_THROWS_AS(clopper_pearson(5, 4, 0.95), ConfigError);
  CHECK_THROWS_AS(clopper_pearson(0, 0, 0.95), ConfigError);
  CHECK_THROWS_AS(clopper_pearson(1, 4, 1.0), ConfigError);
}

TEST_CASE("ErrorCounts merge by addition", "[measure]") {
  ErrorCounts a{10, 1, 5, 1, 1, 1}, b{20, 0, 10, 0, 1, 0};
  a += b;
  CHECK(a == ErrorCounts{30, 1, 15, 1, 2, 1});
}

TEST_CASE("EVM accumulator: RMS relative to mean reference power, MER", "[measure]") {
  // Error of 0.1 on every unit symbol: EVM 10 % (-20 dB), MER 20 dB by definition.
  std::vector<cf32> ref = {{1, 0}, {0, 1}, {-1, 0}, {0, -1}};
  std::vector<cf32> rx = {{1.1f, 0}, {0, 0.9f}, {-1, 0.1f}, {0.1f, -1}};
  EvmAccumulator e;
  e.add(rx, ref);
  check_close(e.rms_percent(), 10.0, 1e-6);
  check_close(e.rms_db(), -20.0, 1e-6);
  check_close(e.mer_db(), 20.0, 1e-6);
  check_close(e.peak_error_power, 0.01, 1e-6);
  EvmAccumulator f;
  f.add(ref, ref);
  e += f;
  check_close(e.rms(), std::sqrt(0.04 / 8.0), 1e-6);
  CHECK(std::isnan(EvmAccumulator{}.rms()));
}
