// Tests of modem: Gray property, unit energy, mapping round trips, fast vs exhaustive slicing.
#include <bit>
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/modem.hpp"

using namespace qamsight;

TEST_CASE("built-in constellations have unit average energy and the expected geometry", "[modem]") {
  for (const auto& name : Constellation::builtin_names()) {
    const auto c = Constellation::from_name(name);
    INFO(name);
    CHECK(std::abs(c.average_energy() - 1.0) < 1e-12);
    CHECK(c.order() == (1u << c.bits_per_symbol()));
  }
  // Square M-QAM with levels +-1, +-3, ... has mean energy 2(M-1)/3 (Proakis, Digital
  // Communications, square QAM energy), so its normalised minimum distance is sqrt(6/(M-1)).
  for (unsigned m : {4u, 16u, 64u, 256u, 1024u}) {
    const auto c = Constellation::square_qam(m);
    CHECK(std::abs(c.min_distance() - std::sqrt(6.0 / (m - 1.0))) < 1e-12);
    // Peak-to-average power of square M-QAM: 3 (sqrt M - 1) / (sqrt M + 1).
    const double l = std::sqrt(double(m));
    CHECK(std::abs(c.peak_energy() - 3.0 * (l - 1.0) / (l + 1.0)) < 1e-12);
  }
  // 8-PSK minimum distance 2 sin(pi/8).
  CHECK(std::abs(Constellation::from_name("8psk").min_distance() - 2.0 * std::sin(std::numbers::pi / 8)) < 1e-12);
}

TEST_CASE("Gray property: nearest neighbours differ in exactly one bit", "[modem]") {
  for (const auto& name : Constellation::builtin_names()) {
    const auto c = Constellation::from_name(name);
    const auto pts = c.points();
    const double dmin = c.min_distance();
    std::size_t pairs = 0;
    for (std::uint32_t a = 0; a < c.order(); ++a) {
      for (std::uint32_t b = a + 1; b < c.order(); ++b) {
        if (std::abs(std::abs(pts[a] - pts[b]) - dmin) < 1e-9) {
          ++pairs;
          INFO(name << " labels " << a << " " << b);
          CHECK(std::popcount(a ^ b) == 1);
        }
      }
    }
    // Count of nearest-neighbour pairs: 2 L (L - 1) for square QAM with L levels per axis,
    // M for M-PSK (M >= 4), 1 for BPSK (counted from the geometry independently).
    const unsigned m = c.order();
    const unsigned l = c.levels_per_axis();
    const std::size_t expected = c.family() == ConstellationFamily::square_qam ? 2u * l * (l - 1u)
                                 : c.family() == ConstellationFamily::psk     ? m
                                                                               : 1u;
    CHECK(pairs == expected);
  }
}

TEST_CASE("bits -> symbols -> bits round trip without noise", "[modem]") {
  for (const auto& name : Constellation::builtin_names()) {
    const auto c = Constellation::from_name(name);
    const std::size_t n = 3000;
    std::vector<std::uint8_t> bits(n * c.bits_per_symbol()), back(bits.size());
    RandomStream(3, 1, Substream::payload).fill_bits(bits);
    std::vector<cf32> sym(n);
    c.map_bits(bits, sym);
    std::vector<std::uint32_t> labels(n);
    c.slice(sym, labels);
    c.labels_to_bits(labels, back);
    CHECK(bits == back);
  }
}

TEST_CASE("fast slicers agree with exhaustive minimum-distance search", "[modem]") {
  for (const auto& name : Constellation::builtin_names()) {
    const auto c = Constellation::from_name(name);
    std::vector<cf32> x(20000);
    RandomStream(8, 2, Substream::awgn).fill_complex_gaussian(x, 2.0);  // spreads well beyond the edges
    std::vector<std::uint32_t> fast(x.size());
    c.slice(x, fast);
    std::size_t mismatches = 0;
    for (std::size_t i = 0; i < x.size(); ++i) {
      if (fast[i] != c.slice_exhaustive(x[i])) {
        // A tie at a decision boundary may go either way; accept only equal distances.
        const auto pts = c.points_f();
        if (std::abs(std::norm(x[i] - pts[fast[i]]) - std::norm(x[i] - pts[c.slice_exhaustive(x[i])])) > 1e-6f) ++mismatches;
      }
    }
    INFO(name);
    CHECK(mismatches == 0);
  }
}

TEST_CASE("square QAM labels: high bits select I, low bits select Q, Gray per axis", "[modem]") {
  const auto c = Constellation::square_qam(16);
  // Level index i has amplitude (2i - 3) d and Gray bits gray(i): 00 -3d, 01 -d, 11 +d, 10 +3d.
  const double d = 1.0 / std::sqrt(10.0);
  CHECK(std::abs(c.points()[0b0000] - cf64(-3 * d, -3 * d)) < 1e-12);
  CHECK(std::abs(c.points()[0b1011] - cf64(3 * d, d)) < 1e-12);
  CHECK(std::abs(c.points()[0b0110] - cf64(-d, 3 * d)) < 1e-12);
}

TEST_CASE("custom constellations validate points and labels", "[modem]") {
  const std::vector<cf64> pts = {{1, 1}, {-1, 1}, {-1, -1}, {1, -1}};
  const auto c = Constellation::custom("my4", pts, {0, 1, 3, 2});
  CHECK(std::abs(c.average_energy() - 1.0) < 1e-12);
  CHECK(c.slice_exhaustive(cf32(-0.5f, -0.6f)) == 3u);
  CHECK_THROWS_AS(Constellation::custom("bad", pts, {0, 1, 1, 2}), ConfigError);
  CHECK_THROWS_AS(Constellation::custom("bad", {{1, 0}, {0, 1}, {2, 2}}, {0, 1, 2}), ConfigError);
  CHECK_THROWS_AS(Constellation::custom("bad", {{0, 0}, {0, 0}}, {0, 1}), ConfigError);
  CHECK_THROWS_AS(Constellation::from_name("32qam"), ConfigError);
  CHECK_THROWS_AS(Constellation::square_qam(32), ConfigError);
}

TEST_CASE("Gray code helpers are inverse", "[modem]") {
  for (std::uint32_t i = 0; i < 5000; ++i) {
    CHECK(gray_decode(gray_encode(i)) == i);
    CHECK(std::popcount(gray_encode(i) ^ gray_encode(i + 1)) == 1);
  }
}
