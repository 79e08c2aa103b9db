// Tests of core: Philox known answers, uniform and Gaussian statistics, tails, errors.
#include <algorithm>
#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/normal.hpp>
#include <catch2/catch.hpp>
#include <cmath>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/measure.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

TEST_CASE("Philox4x32-10 known-answer vectors", "[core]") {
  // Known-answer vectors of the Random123 distribution (kat_vectors, philox4x32 with 10
  // rounds) accompanying Salmon et al., SC 2011. From memory: three independent vectors all
  // matching makes a transcription error vanishingly unlikely.
  struct Kat {
    PhiloxCounter ctr;
    PhiloxKey key;
    PhiloxCounter out;
  };
  const Kat kats[] = {
      {{0, 0, 0, 0}, {0, 0}, {0x6627e8d5, 0xe169c58d, 0xbc57ac4c, 0x9b00dbd8}},
      {{0xffffffff, 0xffffffff, 0xffffffff, 0xffffffff},
       {0xffffffff, 0xffffffff},
       {0x408f276d, 0x41c83b0e, 0xa20bc7c6, 0x6d5451fd}},
      {{0x243f6a88, 0x85a308d3, 0x13198a2e, 0x03707344},
       {0xa4093822, 0x299f31d0},
       {0xd16cfe09, 0x94fdcceb, 0x5001e420, 0x24126ea1}},
  };
  for (const auto& k : kats) CHECK(philox4x32(k.ctr, k.key) == k.out);
}

TEST_CASE("RandomStream layout: seed is the key, stream and substream the counter", "[core]") {
  RandomStream rs(0xa4093822299f31d0ull ^ 0, 0, 0u);
  const auto b = rs.next_block();
  CHECK(b == philox4x32({0, 0, 0, 0}, {0x299f31d0u, 0xa4093822u}));
  RandomStream s2(7, 0x0000000500000009ull, Substream::awgn);
  s2.seek_block(3);
  CHECK(s2.next_block() == philox4x32({3, 2, 9, 5}, {7, 0}));
}

TEST_CASE("uniform samples: moments and range", "[core]") {
  RandomStream rs(11, 1, Substream::user);
  std::vector<float> u(1 << 20);
  rs.fill_uniform(u);
  double m = 0, m2 = 0;
  for (float v : u) {
    REQUIRE(v >= 0.0f);
    REQUIRE(v < 1.0f);
    m += v;
    m2 += double(v) * v;
  }
  const double n = static_cast<double>(u.size());
  m /= n;
  m2 /= n;
  // Uniform(0,1): mean 1/2 (sd 1/sqrt(12 n)), E[u^2] = 1/3; 6-sigma bands (false alarm ~2e-9).
  CHECK(std::abs(m - 0.5) < 6.0 / std::sqrt(12.0 * n));
  CHECK(std::abs(m2 - 1.0 / 3.0) < 6.0 * std::sqrt(4.0 / 45.0 / n));
}

TEST_CASE("Gaussian samples: moments and Kolmogorov-Smirnov against the normal CDF", "[core]") {
  RandomStream rs(2026, 42, Substream::awgn);
  const std::size_t n = 200000;
  std::vector<double> g(n);
  rs.fill_gaussian(std::span<double>(g));
  double m1 = 0, m2 = 0, m3 = 0, m4 = 0;
  for (double x : g) {
    m1 += x;
    m2 += x * x;
    m3 += x * x * x;
    m4 += x * x * x * x;
  }
  const double nd = static_cast<double>(n);
  m1 /= nd, m2 /= nd, m3 /= nd, m4 /= nd;
  // Standard normal moments 0, 1, 0, 3 with standard errors 1, sqrt 2, sqrt 15, sqrt 96 over
  // sqrt n; 6-sigma bands.
  CHECK(std::abs(m1) < 6.0 / std::sqrt(nd));
  CHECK(std::abs(m2 - 1.0) < 6.0 * std::sqrt(2.0 / nd));
  CHECK(std::abs(m3) < 6.0 * std::sqrt(15.0 / nd));
  CHECK(std::abs(m4 - 3.0) < 6.0 * std::sqrt(96.0 / nd));

  std::sort(g.begin(), g.end());
  const boost::math::normal_distribution<double> normal;
  double d = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double f = boost::math::cdf(normal, g[i]);
    d = std::max({d, f - static_cast<double>(i) / nd, static_cast<double>(i + 1) / nd - f});
  }
  // Asymptotic Kolmogorov critical value at alpha = 0.001: 1.949 / sqrt(n) (tables of the
  // Kolmogorov distribution, e.g. Massey, J. Amer. Statist. Assoc. 46, 1951; common practice).
  CHECK(d < 1.949 / std::sqrt(nd));
}

TEST_CASE("single-precision Gaussian noise (the sweeps' AWGN): moments and Kolmogorov-Smirnov", "[core]") {
  // fill_complex_gaussian with total variance 2: real and imaginary parts are each N(0, 1),
  // tested together as 2n samples; the same bands and critical value as the double test above.
  RandomStream rs(2027, 43, Substream::awgn);
  const std::size_t n = 100000;
  std::vector<cf32> z(n);
  rs.fill_complex_gaussian(z, 2.0);
  std::vector<double> g;
  g.reserve(2 * n);
  double cross = 0.0;
  for (const cf32& v : z) {
    g.push_back(v.real());
    g.push_back(v.imag());
    cross += static_cast<double>(v.real()) * v.imag();
  }
  const double nd = static_cast<double>(g.size());
  double m1 = 0, m2 = 0, m3 = 0, m4 = 0;
  for (double x : g) m1 += x, m2 += x * x, m3 += x * x * x, m4 += x * x * x * x;
  m1 /= nd, m2 /= nd, m3 /= nd, m4 /= nd;
  CHECK(std::abs(m1) < 6.0 / std::sqrt(nd));
  CHECK(std::abs(m2 - 1.0) < 6.0 * std::sqrt(2.0 / nd));
  CHECK(std::abs(m3) < 6.0 * std::sqrt(15.0 / nd));
  CHECK(std::abs(m4 - 3.0) < 6.0 * std::sqrt(96.0 / nd));
  // Real and imaginary parts uncorrelated: E[xy] = 0 with standard error 1 / sqrt(n).
  CHECK(std::abs(cross / static_cast<double>(n)) < 6.0 / std::sqrt(static_cast<double>(n)));
  std::sort(g.begin(), g.end());
  const boost::math::normal_distribution<double> normal;
  double d = 0.0;
  for (std::size_t i = 0; i < g.size(); ++i) {
    const double f = boost::math::cdf(normal, g[i]);
    d = std::max({d, f - static_cast<double>(i) / nd, static_cast<double>(i + 1) / nd - f});
  }
  CHECK(d < 1.949 / std::sqrt(nd));  // Kolmogorov critical value, alpha = 0.001 (as above)
}

TEST_CASE("single-precision Box-Muller radius is right far into the tail (beyond 7 sigma)", "[core]") {
  // As for the double generator, P(R > r) is the fraction of 64-bit x below
  // x* = exp(-r^2/2) 2^64. In float the radius is off by a few ulps (relative 4e-7), which moves
  // the crossing by a relative r^2 4e-7 at most; check that it lies within that band of x* at
  // r = 7, 8, 9 (the tail probability is then right to 2e-5, 3e-5, 3.3e-5 relative).
  for (double r : {7.0, 8.0, 9.0}) {
    const double xstar = std::exp(-r * r / 2.0) * 0x1p64;
    const double band = r * r * 4e-7;
    const auto below = static_cast<std::uint64_t>(std::floor(xstar * (1.0 - band)));
    const auto above = static_cast<std::uint64_t>(std::ceil(xstar * (1.0 + band)));
    auto radius = [](std::uint64_t x) {
      const auto g = box_muller_f32(static_cast<std::uint32_t>(x >> 32), static_cast<std::uint32_t>(x), 0, 0);
      return std::hypot(static_cast<double>(g[0]), static_cast<double>(g[1]));
    };
    INFO("r = " << r << ": radius " << radius(below) << " below x*, " << radius(above) << " above");
    CHECK(radius(below) > r);
    CHECK(radius(above) < r);
  }
  // The largest radius, at x = 0: sqrt(-2 ln 2^-65) = 9.4944 (here against the double log).
  const auto g = box_muller_f32(0, 0, 0, 0);
  qamsight::test::check_close(std::hypot(static_cast<double>(g[0]), static_cast<double>(g[1])),
                              std::sqrt(-2.0 * std::log(0.5 * 0x1p-64)), 1e-6);
}

TEST_CASE("Gaussian tails beyond 3 and 4 sigma within binomial bounds", "[core]") {
  const std::size_t n = 1 << 23;
  std::vector<float> g(n);
  RandomStream rs(5, 77, Substream::awgn);
  rs.fill_gaussian(g);
  std::uint64_t beyond3 = 0, beyond4 = 0;
  for (float x : g) {
    beyond3 += std::abs(x) > 3.0f;
    beyond4 += std::abs(x) > 4.0f;
  }
  // Two-sided normal tails 2 Q(3) and 2 Q(4) from scipy.special.ndtr (stats_table.csv rows
  // normal_cdf, and Boost.Math here), tested with exact 99.9% Clopper-Pearson intervals.
  const boost::math::normal_distribution<double> normal;
  const double p3 = 2.0 * boost::math::cdf(boost::math::complement(normal, 3.0));
  const double p4 = 2.0 * boost::math::cdf(boost::math::complement(normal, 4.0));
  const Interval i3 = clopper_pearson(beyond3, n, 0.999), i4 = clopper_pearson(beyond4, n, 0.999);
  CHECK(i3.low <= p3);
  CHECK(p3 <= i3.high);
  CHECK(i4.low <= p4);
  CHECK(p4 <= i4.high);
}

TEST_CASE("Box-Muller radius is exact far into the tail (beyond 7 sigma)", "[core]") {
  // The radial uniform is u = (x + 1/2) 2^-64 and R = sqrt(-2 ln u), so P(R > r) equals the
  // fraction of 64-bit x below x* = exp(-r^2/2) 2^64: the Rayleigh tail exp(-r^2/2) is
  // reproduced to within one count of x*, i.e. to 1 part in 4e8 at r = 7 (x* = 4.2e8).
  // Check that the radius crosses r within one step of x* at r = 7, 8, 9.
  for (double r : {7.0, 8.0, 9.0}) {
    const double xstar = std::exp(-r * r / 2.0) * 0x1p64;  // boundary value of x
    const auto below = static_cast<std::uint64_t>(std::floor(xstar)) - 1;
    const auto above = static_cast<std::uint64_t>(std::ceil(xstar)) + 1;
    auto radius = [](std::uint64_t x) {
      const auto g = box_muller(static_cast<std::uint32_t>(x >> 32), static_cast<std::uint32_t>(x), 0, 0);
      return std::hypot(g[0], g[1]);
    };
    CHECK(radius(below) > r);
    CHECK(radius(above) < r);
  }
  // The largest radius the generator can produce.
  const auto g = box_muller(0, 0, 0, 0);
  qamsight::test::check_close(std::hypot(g[0], g[1]), std::sqrt(-2.0 * std::log(0.5 * 0x1p-64)), 1e-12);
  CHECK(std::hypot(g[0], g[1]) > 9.4);
}

TEST_CASE("streams are reproducible and independent", "[core]") {
  std::vector<float> a(1000), b(1000), c(1000);
  RandomStream(1, 2, Substream::awgn).fill_gaussian(a);
  RandomStream(1, 2, Substream::awgn).fill_gaussian(b);
  RandomStream(1, 3, Substream::awgn).fill_gaussian(c);
  CHECK(a == b);
  CHECK(a != c);
  std::vector<std::uint32_t> l(4096);
  RandomStream(9, 9, Substream::payload).fill_labels(l, 6);
  std::vector<int> hist(64, 0);
  for (auto v : l) {
    REQUIRE(v < 64u);
    ++hist[v];
  }
  // Each label appears about 64 times; Pearson chi-square against its 63-degree-of-freedom
  // 99.9% quantile (Boost.Math; scipy.stats.chi2.ppf(0.999, 63) = 103.44).
  double chi2 = 0;
  for (int h : hist) chi2 += (h - 64.0) * (h - 64.0) / 64.0;
  CHECK(chi2 < boost::math::quantile(boost::math::chi_squared_distribution<double>(63.0), 0.999));
}

TEST_CASE("configuration errors name the parameter, the value and the range", "[core]") {
  try {
    require_range("es_n0_db", std::nan(""), -50, 150);
    FAIL("no throw");
  } catch (const ConfigError& e) {
    CHECK(e.parameter() == "es_n0_db");
    CHECK(e.value() == "nan");
    CHECK(std::string(e.what()).find("-50 to 150") != std::string::npos);
  }
  CHECK_THROWS_AS(require_range_open_low("linewidth", 0.0, 0.0, 1e9), ConfigError);
  CHECK_NOTHROW(require_range("x", 3.0, 3.0, 3.0));
}

TEST_CASE("single-precision complex noise: the Rayleigh tail of |z| beyond 3.33 sigma, where radial words are extended",
          "[core]") {
  // |z| for z of total variance 2 is Rayleigh with P(|z| > r) = exp(-r^2 / 2) (textbook). Radii
  // above sqrt(16 ln 2) = 3.33 come only from pairs whose radial word took the extension block's
  // bits (detail/kernels.hpp), so these frequencies test that path; exact 99.9% Clopper-Pearson
  // intervals. Calls of odd length in between check that a stream continues at the next block.
  RandomStream rs(2029, 5, Substream::awgn);
  const double radii[] = {3.33, 4.0, 4.5, 5.0};
  std::uint64_t beyond[4] = {0, 0, 0, 0};
  std::uint64_t n = 0;
  std::vector<cf32> z(1 << 16);
  for (int call = 0; call < 64; ++call) {
    const std::size_t len = z.size() - static_cast<std::size_t>(call % 3);
    rs.fill_complex_gaussian(std::span<cf32>(z.data(), len), 2.0);
    for (std::size_t i = 0; i < len; ++i) {
      const double r = std::abs(std::complex<double>(z[i]));
      for (int k = 0; k < 4; ++k) beyond[k] += r > radii[k];
    }
    n += len;
  }
  for (int k = 0; k < 4; ++k) {
    const double p = std::exp(-radii[k] * radii[k] / 2.0);
    const Interval ci = clopper_pearson(beyond[k], n, 0.999);
    INFO("r = " << radii[k] << ": " << beyond[k] << " of " << n << ", expected " << p * static_cast<double>(n));
    CHECK(ci.low <= p);
    CHECK(p <= ci.high);
  }
}

TEST_CASE("float fills: consecutive calls continue the stream at the next block", "[core]") {
  // Two pairs per block: a fill of 3 complex samples uses blocks 0 and 1, so the next fill starts
  // with pair 4 of one long fill; an odd float fill uses the first half of its last pair.
  RandomStream a(31, 2, Substream::awgn), b(31, 2, Substream::awgn), c(31, 2, Substream::awgn);
  std::vector<cf32> whole(12), first(3), second(8);
  a.fill_complex_gaussian(whole, 2.0);
  b.fill_complex_gaussian(first, 2.0);
  b.fill_complex_gaussian(second, 2.0);
  for (int i = 0; i < 3; ++i) CHECK(first[i] == whole[i]);
  for (int i = 0; i < 8; ++i) CHECK(second[i] == whole[4 + i]);
  std::vector<float> odd(5);
  c.fill_gaussian(std::span<float>(odd));
  for (int i = 0; i < 5; ++i) CHECK(odd[i] == (i % 2 ? whole[i / 2].imag() : whole[i / 2].real()));
}

TEST_CASE("packed payload labels are uniform and the five labels of a word independent (64-QAM)", "[core]") {
  // Pearson chi-square of the 64 labels, and of the pairs (label of slot k, label of slot k + 1 of
  // the same word: 4096 cells) against the 99.9% quantiles of chi-square with 63 and 4095
  // degrees of freedom (Boost.Math; scipy.stats.chi2.ppf(0.999, 63) = 103.44).
  std::vector<std::uint32_t> l(40 * 20000);
  RandomStream(12, 3, Substream::payload).fill_packed_labels(l, 6);
  std::vector<double> hist(64, 0.0), pairs(4096, 0.0);
  for (std::size_t g = 0; g < l.size() / 40; ++g)
    for (std::size_t k = 0; k < 5; ++k)
      for (std::size_t j = 0; j < 8; ++j) {
        const std::uint32_t v = l[40 * g + 8 * k + j];
        REQUIRE(v < 64u);
        hist[v] += 1.0;
        if (k + 1 < 5) pairs[64 * v + l[40 * g + 8 * (k + 1) + j]] += 1.0;
      }
  const double e1 = static_cast<double>(l.size()) / 64.0;
  const double e2 = static_cast<double>(l.size()) * 4.0 / 5.0 / 4096.0;
  double c1 = 0.0, c2 = 0.0;
  for (double h : hist) c1 += (h - e1) * (h - e1) / e1;
  for (double h : pairs) c2 += (h - e2) * (h - e2) / e2;
  using boost::math::chi_squared_distribution;
  CHECK(c1 < boost::math::quantile(chi_squared_distribution<double>(63.0), 0.999));
  CHECK(c2 < boost::math::quantile(chi_squared_distribution<double>(4095.0), 0.999));
}
