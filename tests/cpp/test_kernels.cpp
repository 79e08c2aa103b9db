// Tests of the dispatched kernels: every compiled path bit-identical to the portable reference,
// the reference checked against the C library and the Philox known answers.
#include <bit>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <limits>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/detail/kernels.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/sim.hpp"

using namespace qamsight;
using detail::KernelTable;
using detail::PhiloxStart;

namespace {

template <class T>
bool same_bits(const std::vector<T>& a, const std::vector<T>& b) {
  return a.size() == b.size() && std::memcmp(a.data(), b.data(), a.size() * sizeof(T)) == 0;
}

// Starts that exercise the counter: ordinary, word 0 about to wrap (mod 2^32), odd keys.
const PhiloxStart kStarts[] = {
    {{0, 2, 7, 0}, {1, 0}},
    {{0xfffffffau, 1, 0x12345678u, 0x9abcdef0u}, {0xdeadbeefu, 0x01234567u}},
    {{12345, 16, 0xffffffffu, 3}, {0xffffffffu, 0xffffffffu}},
};
const std::size_t kBlockCounts[] = {0, 1, 7, 8, 9, 31, 1000, 4099};

}  // namespace

TEST_CASE("kernel dispatch: portable first, chosen table is one of the available ones", "[kernels]") {
  const auto tables = detail::available_kernels();
  REQUIRE(!tables.empty());
  CHECK(tables[0] == &detail::portable_kernels());
  bool found = false;
  for (const KernelTable* t : tables) found = found || t == &detail::kernels();
  CHECK(found);
  WARN("kernels in use: " << detail::kernels().name << " (" << tables.size() << " available)");
}

TEST_CASE("portable Philox words equal philox4x32 (known-answer tested in test_core)", "[kernels]") {
  const PhiloxStart s = kStarts[1];
  std::vector<std::uint32_t> w(4 * 20);
  detail::portable_kernels().philox_words(s, 20, 0, w.data());
  for (std::uint32_t b = 0; b < 20; ++b) {
    const auto ref = philox4x32({s.counter[0] + b, s.counter[1], s.counter[2], s.counter[3]}, {s.key[0], s.key[1]});
    for (int j = 0; j < 4; ++j) REQUIRE(w[4 * b + j] == ref[j]);
  }
}

TEST_CASE("every kernel path is bit-identical to the portable reference: random numbers", "[kernels]") {
  const KernelTable& ref = detail::portable_kernels();
  for (const KernelTable* k : detail::available_kernels()) {
    INFO("path " << k->name);
    for (const auto& s : kStarts) {
      for (std::size_t blocks : kBlockCounts) {
        INFO("blocks " << blocks);
        for (unsigned shift : {0u, 1u, 26u, 31u}) {
          std::vector<std::uint32_t> a(4 * blocks + 1, 7u), b(4 * blocks + 1, 7u);
          ref.philox_words(s, blocks, shift, a.data());
          k->philox_words(s, blocks, shift, b.data());
          REQUIRE(a == b);  // including the untouched guard element
        }
        std::vector<float> ua(4 * blocks + 1, -1.0f), ub(4 * blocks + 1, -1.0f);
        ref.philox_uniform_f32(s, blocks, ua.data());
        k->philox_uniform_f32(s, blocks, ub.data());
        REQUIRE(same_bits(ua, ub));
        std::vector<double> ga(2 * blocks + 1, -1.0), gb(2 * blocks + 1, -1.0);
        ref.gaussian_f64(s, blocks, ga.data());
        k->gaussian_f64(s, blocks, gb.data());
        REQUIRE(same_bits(ga, gb));
        std::vector<float> fa(2 * blocks + 1, -1.0f), fb(2 * blocks + 1, -1.0f);
        ref.gaussian_f32(s, blocks, fa.data());
        k->gaussian_f32(s, blocks, fb.data());
        REQUIRE(same_bits(fa, fb));
        std::vector<float> in(2 * blocks + 1);
        for (std::size_t i = 0; i < in.size(); ++i) in[i] = 0.25f * static_cast<float>(i % 7) - 0.75f;
        for (float sigma : {1.0f, 0.0316227766f, 3.5e-5f}) {
          std::vector<float> na(2 * blocks + 1, -1.0f), nb(2 * blocks + 1, -1.0f);
          ref.noise_cf32(s, blocks, sigma, in.data(), na.data());
          k->noise_cf32(s, blocks, sigma, in.data(), nb.data());
          REQUIRE(same_bits(na, nb));
          ref.noise_cf32(s, blocks, sigma, nullptr, na.data());
          k->noise_cf32(s, blocks, sigma, nullptr, nb.data());
          REQUIRE(same_bits(na, nb));
          std::vector<float> inplace = in;  // in == out is allowed
          k->noise_cf32(s, blocks, sigma, inplace.data(), inplace.data());
          ref.noise_cf32(s, blocks, sigma, in.data(), na.data());
          REQUIRE(std::memcmp(inplace.data(), na.data(), 2 * blocks * sizeof(float)) == 0);
        }
      }
    }
  }
}

TEST_CASE("every kernel path is bit-identical to the portable reference: map, slice, count", "[kernels]") {
  const KernelTable& ref = detail::portable_kernels();
  RandomStream rs(99, 1, Substream::user);
  for (const KernelTable* k : detail::available_kernels()) {
    INFO("path " << k->name);
    for (const auto& name : Constellation::builtin_names()) {
      INFO(name);
      const Constellation c = Constellation::from_name(name);
      for (std::size_t n : {0u, 3u, 8u, 13u, 4096u}) {
        std::vector<std::uint32_t> labels(n);
        for (auto& l : labels) l = rs.next_u32();  // high bits set: the mask must apply
        std::vector<float> a(2 * n + 2, 9.0f), b(2 * n + 2, 9.0f);
        const auto* table = reinterpret_cast<const float*>(c.points_f().data());
        ref.map_labels(labels.data(), n, c.order() - 1, table, a.data());
        k->map_labels(labels.data(), n, c.order() - 1, table, b.data());
        REQUIRE(same_bits(a, b));
        if (c.family() != ConstellationFamily::square_qam) continue;
        // Noisy points, decision boundaries exactly, far outside, signed zeros, NaN, infinities.
        std::vector<float> x(2 * n);
        for (auto& v : x) v = static_cast<float>(rs.gaussian() * 1.5);
        const float d = static_cast<float>(c.qam_half_spacing());
        const float specials[] = {0.0f, -0.0f, 2.0f * d, -2.0f * d, 1e30f, -1e30f,
                                  std::numeric_limits<float>::quiet_NaN(), std::numeric_limits<float>::infinity(),
                                  -std::numeric_limits<float>::infinity(), std::nextafter(2.0f * d, 0.0f)};
        for (std::size_t i = 0; i < x.size() && i < 2 * std::size(specials); ++i) x[i] = specials[i % std::size(specials)];
        const float inv = static_cast<float>(1.0 / c.qam_half_spacing());
        std::vector<std::uint32_t> la(n + 1, 5u), lb(n + 1, 5u);
        ref.slice_square_qam(x.data(), n, inv, c.levels_per_axis(), c.bits_per_symbol() / 2, la.data());
        k->slice_square_qam(x.data(), n, inv, c.levels_per_axis(), c.bits_per_symbol() / 2, lb.data());
        REQUIRE(la == lb);
        for (std::size_t i = 0; i < n; ++i) {
          const cf32 y(x[2 * i], x[2 * i + 1]);
          if (std::isfinite(y.real()) && std::isfinite(y.imag()) && std::abs(y.real()) < 1e29f &&
              std::abs(y.imag()) < 1e29f && i >= std::size(specials)) {
            // Minimum distance by exhaustive search (independent of the axis formula).
            REQUIRE(la[i] == c.slice_exhaustive(y));
          }
        }
      }
    }
    for (std::size_t n : {0u, 1u, 3u, 4u, 9u, 4099u}) {
      std::vector<float> rx(2 * n), tx(2 * n);
      for (std::size_t i = 0; i < 2 * n; ++i) {
        tx[i] = static_cast<float>(rs.uniform() * 2 - 1);
        rx[i] = tx[i] + static_cast<float>(0.1 * rs.gaussian());
      }
      double e1 = 0.5, p1 = 0.25, m1 = 0.0, e2 = 0.5, p2 = 0.25, m2 = 0.0;
      ref.evm_sums(rx.data(), tx.data(), n, &e1, &p1, &m1);
      k->evm_sums(rx.data(), tx.data(), n, &e2, &p2, &m2);
      REQUIRE(std::bit_cast<std::uint64_t>(e1) == std::bit_cast<std::uint64_t>(e2));
      REQUIRE(std::bit_cast<std::uint64_t>(p1) == std::bit_cast<std::uint64_t>(p2));
      REQUIRE(std::bit_cast<std::uint64_t>(m1) == std::bit_cast<std::uint64_t>(m2));
      // Against a plain long double sum (independent of the lane order): relative 1e-12.
      long double es = 0.5L, ps = 0.25L;
      for (std::size_t i = 0; i < n; ++i) {
        const long double dr = static_cast<long double>(rx[2 * i]) - tx[2 * i];
        const long double di = static_cast<long double>(rx[2 * i + 1]) - tx[2 * i + 1];
        es += dr * dr + di * di;
        ps += static_cast<long double>(tx[2 * i]) * tx[2 * i] + static_cast<long double>(tx[2 * i + 1]) * tx[2 * i + 1];
      }
      CHECK(std::abs(e1 - static_cast<double>(es)) <= 1e-12 * static_cast<double>(es));
      CHECK(std::abs(p1 - static_cast<double>(ps)) <= 1e-12 * static_cast<double>(ps));
    }
    for (std::size_t n : {0u, 1u, 7u, 8u, 100u, 65537u}) {
      std::vector<std::uint32_t> a(n), b(n);
      for (std::size_t i = 0; i < n; ++i) {
        a[i] = rs.next_u32();
        b[i] = (i % 3 == 0) ? a[i] : rs.next_u32();
      }
      std::uint64_t be_ref = 0, se_ref = 0;
      for (std::size_t i = 0; i < n; ++i) {  // direct count, bit by bit
        for (int j = 0; j < 32; ++j) be_ref += ((a[i] >> j) & 1u) != ((b[i] >> j) & 1u);
        se_ref += a[i] != b[i];
      }
      std::uint64_t be = 1, se = 1;
      k->count_label_errors(a.data(), b.data(), n, &be, &se);
      CHECK(be == be_ref);
      CHECK(se == se_ref);
    }
  }
}

TEST_CASE("every kernel path is bit-identical to the portable reference: pulse filters", "[kernels]") {
  // Interpolator and matched-decimator chunks over random samples and taps, for tap counts,
  // phase counts and steps that leave partial blocks and a partial group of four outputs; the
  // decimator result is also compared with one plain dot product per output (independent of
  // the grouping) to within float rounding of a sum.
  const KernelTable& ref = detail::portable_kernels();
  RandomStream rs(11, 4, Substream::user);
  auto uniform = [&](std::vector<float>& v) {
    for (auto& x : v) x = static_cast<float>(rs.uniform() * 2.0 - 1.0);
  };
  for (const KernelTable* k : detail::available_kernels()) {
    INFO("kernels " << k->name);
    for (std::size_t L : {1u, 2u, 4u, 8u}) {
      for (std::size_t K : {1u, 3u, 13u, 33u}) {
        for (std::size_t symbols : {1u, 15u, 16u, 17u, 512u}) {
          std::vector<float> taps(L * K), line(2 * (K - 1 + symbols + 16));
          uniform(taps);
          uniform(line);
          std::vector<float> a(2 * L * symbols, -9.0f), b(2 * L * symbols, -9.0f);
          ref.interpolate_f32(taps.data(), L, K, line.data(), symbols, a.data());
          k->interpolate_f32(taps.data(), L, K, line.data(), symbols, b.data());
          REQUIRE(same_bits(a, b));
        }
      }
    }
    for (std::size_t n2 : {16u, 32u, 112u, 208u}) {
      for (std::size_t step : {1u, 2u, 4u, 7u}) {
        for (std::size_t first : {0u, 1u, 3u}) {
          const std::size_t end = 301;
          std::vector<float> taps2(n2), line(2 * (end + step) + n2);
          for (std::size_t i = 0; i < n2; i += 2) taps2[i] = taps2[i + 1] = static_cast<float>(rs.uniform() - 0.5);
          uniform(line);
          std::vector<float> a(2 * end, -9.0f), b(2 * end, -9.0f);
          const std::size_t ma = ref.decimate_f32(taps2.data(), n2, line.data(), first, end, step, a.data());
          const std::size_t mb = k->decimate_f32(taps2.data(), n2, line.data(), first, end, step, b.data());
          REQUIRE(ma == (end - 1 - first) / step + 1);
          REQUIRE(mb == ma);
          REQUIRE(same_bits(a, b));
          for (std::size_t m = 0; m < ma; ++m) {
            double re = 0.0, im = 0.0, mag = 0.0;
            for (std::size_t i = 0; i < n2; i += 2) {
              const std::size_t x = 2 * (first + m * step) + i;
              re += static_cast<double>(taps2[i]) * line[x];
              im += static_cast<double>(taps2[i]) * line[x + 1];
              mag += std::abs(static_cast<double>(taps2[i])) * (std::abs(line[x]) + std::abs(line[x + 1]));
            }
            REQUIRE(std::abs(a[2 * m] - re) <= 1e-6 * mag + 1e-30);
            REQUIRE(std::abs(a[2 * m + 1] - im) <= 1e-6 * mag + 1e-30);
          }
        }
      }
    }
  }
}

TEST_CASE("the library's log and sin/cos agree with the C library to about 1 ulp", "[kernels]") {
  // Reference: glibc's correctly rounded-or-nearly log/cos/sin in long double where available.
  RandomStream rs(3, 3, Substream::user);
  double worst_log = 0.0, worst_trig = 0.0;
  for (int i = 0; i < 200000; ++i) {
    const std::uint64_t x = rs.next_u64() >> (i % 64);
    const double u = (static_cast<double>(x) + 0.5) * 0x1p-64;
    const long double ref = std::log(static_cast<long double>(u));
    const double got = detail::log_unit(u);
    if (ref != 0.0L) {
      const double ulp = std::abs(static_cast<double>(ref)) * 0x1p-52;
      worst_log = std::max(worst_log, static_cast<double>(std::abs(got - ref)) / ulp);
    } else {
      REQUIRE(got == 0.0);
    }
    const auto b = rs.next_block();
    double g0, g1;
    detail::gaussian_pair(b[0], b[1], b[2], b[3], &g0, &g1);
    const long double r = std::sqrt(-2.0L * std::log(static_cast<long double>(
                                                (static_cast<double>((std::uint64_t{b[0]} << 32) | b[1]) + 0.5) * 0x1p-64)));
    const long double t = static_cast<long double>(((std::uint64_t{b[2]} << 32) | b[3]) >> 11) * 0x1p-53L;
    const long double theta = t * 2.0L * 3.14159265358979323846264338327950288L;
    const double e0 = static_cast<double>(std::abs(g0 - r * std::cos(theta)));
    const double e1 = static_cast<double>(std::abs(g1 - r * std::sin(theta)));
    worst_trig = std::max(worst_trig, std::max(e0, e1) / (static_cast<double>(r) * 0x1p-52));
  }
  INFO("worst log error " << worst_log << " ulp, worst Gaussian error " << worst_trig << " ulp of the radius");
  CHECK(worst_log <= 1.0);
  CHECK(worst_trig <= 4.0);
  CHECK(detail::log_unit(1.0) == 0.0);
  // u = 2^-65: ln = -65 ln 2 (mpmath: -45.054532... ; here against the long double log).
  CHECK(std::abs(detail::log_unit(0x1p-65) - static_cast<double>(std::log(0x1p-65L))) <= 0x1p-52 * 45.06);
}

TEST_CASE("the single-precision log and Gaussian pair agree with the C library to a few float ulps", "[kernels]") {
  // Reference: glibc's long double log, cos and sin. The float log is checked over the whole
  // range of the radial uniform, u from 2^-65 to 1, in float ulps of the result.
  RandomStream rs(4, 4, Substream::user);
  double worst_log = 0.0, worst_radius = 0.0, worst_angle = 0.0, worst_r2 = 0.0;
  for (int i = 0; i < 400000; ++i) {
    const float u = std::ldexp(1.0f + static_cast<float>(rs.next_u32() >> 9) * 0x1p-23f, -1 - static_cast<int>(i % 65));
    const long double ref = std::log(static_cast<long double>(u));
    const float got = detail::log_unit_f32(u);
    const double ulp = std::max(std::abs(static_cast<double>(ref)), 0x1p-126) * 0x1p-23;
    worst_log = std::max(worst_log, static_cast<double>(std::abs(static_cast<long double>(got) - ref)) / ulp);
    const auto b = rs.next_block();
    float g0, g1;
    detail::gaussian_pair_f32(b[0], b[1], b[2], b[3], &g0, &g1);
    const long double x = static_cast<long double>((std::uint64_t{b[0]} << 32) | b[1]);
    const long double r = std::sqrt(-2.0L * std::log((x + 0.5L) * 0x1p-64L));
    const long double theta = static_cast<long double>(b[2] >> 8) * 0x1p-24L * 2.0L * 3.14159265358979323846264338327950288L;
    const long double rg = std::hypot(static_cast<long double>(g0), static_cast<long double>(g1));
    // Below radius 1 the float u (spacing 2^-24 just below 1) sets an absolute grain of r^2 =
    // -2 ln u: the error of r^2 is counted in units of 2^-23 there; from radius 1 on (the tail),
    // the relative error of r and of both components in float ulps of r.
    if (r < 1.0L) {
      worst_r2 = std::max(worst_r2, static_cast<double>(std::abs(rg * rg - r * r) / 0x1p-23L));
    } else {
      worst_radius = std::max(worst_radius, static_cast<double>(std::abs(rg - r) / (r * 0x1p-23L)));
      const double e0 = static_cast<double>(std::abs(g0 - r * std::cos(theta)));
      const double e1 = static_cast<double>(std::abs(g1 - r * std::sin(theta)));
      worst_angle = std::max(worst_angle, std::max(e0, e1) / static_cast<double>(r * 0x1p-23L));
    }
  }
  INFO("worst r^2 error below radius 1: " << worst_r2 << " x 2^-23");
  CHECK(worst_r2 <= 3.0);  // u off by up to 2^-25 (rounding), the sums and the log by less
  INFO("worst float log error " << worst_log << " ulp, radius " << worst_radius << " ulp, components "
                                 << worst_angle << " ulp of the radius");
  CHECK(worst_log <= 2.0);
  CHECK(worst_radius <= 3.0);
  CHECK(worst_angle <= 4.0);
  CHECK(detail::log_unit_f32(1.0f) == 0.0f);
  // ln 2^-65 = -45.0545... (against the long double log).
  CHECK(std::abs(detail::log_unit_f32(0x1p-65f) - static_cast<float>(std::log(0x1p-65L))) <= 45.06f * 0x1p-23f);
}

TEST_CASE("RandomStream bulk fills continue the word stream exactly (mid-block starts)", "[kernels]") {
  for (int skip : {0, 1, 2, 3, 5}) {
    RandomStream ref(8, 5, Substream::payload), bulk(8, 5, Substream::payload);
    for (int i = 0; i < skip; ++i) {
      (void)ref.next_u32();
      (void)bulk.next_u32();
    }
    std::vector<std::uint32_t> expect(1003), got(1003);
    for (auto& v : expect) v = ref.next_u32() >> 26;
    bulk.fill_labels(got, 6);
    REQUIRE(expect == got);
    CHECK(ref.next_u32() == bulk.next_u32());
    std::vector<float> ue(77), ug(77);
    for (auto& v : ue) v = static_cast<float>(ref.next_u32() >> 8) * 0x1p-24f;
    bulk.fill_uniform(ug);
    REQUIRE(same_bits(ue, ug));
  }
  // fill_gaussian draws block by block, as box_muller on next_block does.
  RandomStream a(4, 4, Substream::awgn), b(4, 4, Substream::awgn);
  std::vector<double> g(101);
  a.fill_gaussian(std::span<double>(g));
  for (std::size_t i = 0; i < g.size(); i += 2) {
    const auto w = b.next_block();
    const auto p = box_muller(w[0], w[1], w[2], w[3]);
    REQUIRE(std::bit_cast<std::uint64_t>(g[i]) == std::bit_cast<std::uint64_t>(p[0]));
    if (i + 1 < g.size()) REQUIRE(std::bit_cast<std::uint64_t>(g[i + 1]) == std::bit_cast<std::uint64_t>(p[1]));
  }
}

TEST_CASE("vectorised sweep: counts and EVM sums identical for 1 and 2 threads", "[kernels]") {
  SweepConfig c;
  c.modulations = {"64qam", "256qam"};
  c.snr_db = {12.0, 16.0};
  c.stop.min_bit_errors = 200;
  c.stop.max_bits = 2'000'000;
  c.seed = 5;
  c.link.frame_symbols = 1000;  // not a multiple of the 8-lane kernels: exercises the tails
  c.threads = 1;
  const SweepResult one = run_sweep(c);
  c.threads = 2;
  const SweepResult two = run_sweep(c);
  REQUIRE(one.points.size() == two.points.size());
  for (std::size_t i = 0; i < one.points.size(); ++i) {
    CHECK(one.points[i].counts == two.points[i].counts);
    CHECK(std::bit_cast<std::uint64_t>(one.points[i].evm.error_power) ==
          std::bit_cast<std::uint64_t>(two.points[i].evm.error_power));
  }
}

TEST_CASE("the single-precision stream is its definition: two pairs per block, tail words from the extension block",
          "[kernels]") {
  // Independent evaluation of the definition in detail/kernels.hpp from the public pieces
  // (philox4x32, known-answer tested in test_core, and box_muller_f32): pair p = 2b + h takes the
  // radial word w[2h] and the angle word w[2h + 1] of block b; a radial word below 2^24 takes its
  // low 32 bits from word h of the block whose substream word has bit 31 flipped, any other the
  // middle of its cell, 2^31.
  const std::size_t pairs = 20001;  // odd: the last block's second half is unused
  for (const auto& s : kStarts) {
    std::vector<float> want(2 * pairs);
    std::size_t extended = 0;
    for (std::size_t p = 0; p < pairs; ++p) {
      const auto b = static_cast<std::uint32_t>(p / 2);
      const unsigned h = p % 2;
      const PhiloxKey key{s.key[0], s.key[1]};
      const auto w = philox4x32({s.counter[0] + b, s.counter[1], s.counter[2], s.counter[3]}, key);
      std::uint32_t e = 0x80000000u;
      if (w[2 * h] < (1u << 24)) {
        e = philox4x32({s.counter[0] + b, s.counter[1] ^ 0x80000000u, s.counter[2], s.counter[3]}, key)[h];
        ++extended;
      }
      const auto g = box_muller_f32(w[2 * h], e, w[2 * h + 1], 0);
      want[2 * p] = g[0];
      want[2 * p + 1] = g[1];
    }
    // One pair in 256 is extended: about 78 here; the check needs some of them on every path.
    CHECK(extended > 30);
    for (const KernelTable* k : detail::available_kernels()) {
      INFO("path " << k->name);
      std::vector<float> got(2 * pairs + 1, -7.0f);
      k->gaussian_f32(s, pairs, got.data());
      CHECK(got.back() == -7.0f);  // nothing written past the end
      got.pop_back();
      REQUIRE(same_bits(got, want));
      std::vector<float> noise(2 * pairs);
      const float sigma = 0.3f;
      k->noise_cf32(s, pairs, sigma, nullptr, noise.data());
      std::size_t same = 0;
      for (std::size_t i = 0; i < noise.size(); ++i) same += noise[i] == sigma * want[i];
      CHECK(same == noise.size());
    }
  }
}

TEST_CASE("packed labels: 32 / bits labels per word in groups of eight words, on every path", "[kernels]") {
  // Independent evaluation of the order stated in detail/kernels.hpp from philox4x32 words.
  for (unsigned bits : {1u, 2u, 3u, 4u, 6u, 7u, 8u, 10u, 11u, 16u, 31u, 32u}) {
    INFO("bits " << bits);
    const unsigned per = 32u / bits;
    const std::uint32_t mask = bits == 32u ? 0xffffffffu : (1u << bits) - 1u;
    for (const auto& s : kStarts) {
      for (std::size_t n : {0u, 1u, 7u, 8u, 9u, 40u, 41u, 1000u, 4099u}) {
        std::vector<std::uint32_t> want(n);
        for (std::size_t i = 0; i < n; ++i) {
          const std::size_t g = i / (8 * per), r = i % (8 * per), k = r / 8, j = r % 8;
          const auto b = static_cast<std::uint32_t>(2 * g + j / 4);
          const auto w = philox4x32({s.counter[0] + b, s.counter[1], s.counter[2], s.counter[3]}, {s.key[0], s.key[1]});
          want[i] = (w[j % 4] >> (32u - bits * static_cast<unsigned>(k + 1))) & mask;
        }
        for (const KernelTable* k : detail::available_kernels()) {
          INFO("path " << k->name << ", n " << n);
          std::vector<std::uint32_t> got(n + 1, 0xabcdu);
          k->philox_packed_labels(s, n, bits, got.data());
          CHECK(got.back() == 0xabcdu);
          got.pop_back();
          REQUIRE(got == want);
        }
      }
    }
  }
  // The stream: a call ends at a block boundary, so the next call continues there.
  RandomStream a(3, 1, Substream::payload), b(3, 1, Substream::payload);
  std::vector<std::uint32_t> l1(41), l2(41), whole(80);  // 64-QAM: 40 labels per two blocks
  a.fill_packed_labels(l1, 6);
  a.fill_packed_labels(l2, 6);
  b.fill_packed_labels(whole, 6);
  for (int i = 0; i < 40; ++i) CHECK(l1[i] == whole[i]);
  RandomStream c(3, 1, Substream::payload);
  c.seek_block(4);
  std::vector<std::uint32_t> third(41);
  c.fill_packed_labels(third, 6);
  CHECK(third == l2);
}
