// Tests of prbs: ITU-T O.150 sequences (period, maximal length, first bits) and the checker.
#include <catch2/catch.hpp>
#include <cstdint>
#include <set>
#include <string>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/prbs.hpp"

using namespace qamsight;

namespace {

std::string bit_string(const std::vector<std::uint8_t>& bits) {
  std::string s;
  for (auto b : bits) s += b ? '1' : '0';
  return s;
}

std::vector<std::uint8_t> sequence(PrbsPolynomial p, std::size_t n, std::size_t skip = 0,
                                   PrbsPolarity polarity = PrbsPolarity::o150) {
  PrbsGenerator g(p, polarity);
  std::vector<std::uint8_t> bits(skip + n);
  g.fill(bits);
  return std::vector<std::uint8_t>(bits.begin() + static_cast<std::ptrdiff_t>(skip), bits.end());
}

// x^e mod p(x) over GF(2), polynomials as bit masks (bit i = x^i); p of degree n <= 31.
std::uint64_t mulmod(std::uint64_t a, std::uint64_t b, std::uint64_t p, unsigned n) {
  std::uint64_t r = 0;
  while (b) {
    if (b & 1) r ^= a;
    b >>= 1;
    a <<= 1;
    if (a >> n & 1) a ^= p;
  }
  return r;
}
std::uint64_t xpow(std::uint64_t e, std::uint64_t p, unsigned n) {
  std::uint64_t result = 1, base = 2;
  while (e) {
    if (e & 1) result = mulmod(result, base, p, n);
    base = mulmod(base, base, p, n);
    e >>= 1;
  }
  return result;
}

}  // namespace

TEST_CASE("prbs: definitions follow ITU-T O.150 (from memory)", "[prbs]") {
  // O.150 clause 5: PRBS-9 x^9+x^5+1 not inverted; PRBS-15 x^15+x^14+1, PRBS-23 x^23+x^18+1 and
  // PRBS-31 x^31+x^28+1 inverted (clause numbers and polarities from memory).
  CHECK(prbs_definition(PrbsPolynomial::prbs9).degree == 9);
  CHECK(prbs_definition(PrbsPolynomial::prbs9).tap == 5);
  CHECK_FALSE(prbs_definition(PrbsPolynomial::prbs9).o150_inverted);
  CHECK(prbs_definition(PrbsPolynomial::prbs15).tap == 14);
  CHECK(prbs_definition(PrbsPolynomial::prbs15).o150_inverted);
  CHECK(prbs_definition(PrbsPolynomial::prbs23).tap == 18);
  CHECK(prbs_definition(PrbsPolynomial::prbs31).tap == 28);
  CHECK(prbs_period(PrbsPolynomial::prbs23) == 8388607u);
  CHECK(prbs_from_degree(23) == PrbsPolynomial::prbs23);
  CHECK_THROWS_AS(prbs_from_degree(11), ConfigError);
  CHECK_THROWS_AS(PrbsGenerator(PrbsPolynomial::prbs9, PrbsPolarity::o150, 0), ConfigError);
  CHECK_THROWS_AS(PrbsGenerator(PrbsPolynomial::prbs9, PrbsPolarity::o150, 512), ConfigError);
}

TEST_CASE("prbs: first bits from the all-ones seed, derived by hand", "[prbs]") {
  // PRBS-9, b[t] = b[t-5] ^ b[t-9], seed b[-1..-9] = 1:
  //   t = 0..4: b[t-5] and b[t-9] are seed bits, 1 ^ 1 = 0            -> 0 0 0 0 0
  //   t = 5..8: b[t-5] = 0 (t-5 in 0..3), b[t-9] = 1 (seed)            -> 1 1 1 1
  //   t = 9: b[4] ^ b[0] = 0 ^ 0 = 0;  t = 10..13: b[5..8] ^ b[1..4] = 1 -> 0 1 1 1 1
  //   t = 14: b[9] ^ b[5] = 0 ^ 1 = 1; t = 15: b[10] ^ b[6] = 1 ^ 1 = 0  -> 1 0
  //   t = 16: b[11] ^ b[7] = 0; t = 17: b[12] ^ b[8] = 0; t = 18: b[13] ^ b[9] = 1 ^ 0 = 1
  CHECK(bit_string(sequence(PrbsPolynomial::prbs9, 19)) == "0000011110111110001");
  // PRBS-15 (inverted output), b[t] = b[t-14] ^ b[t-15], seed all ones:
  //   t = 0..13: 1 ^ 1 = 0 -> output 1 (x14);   t = 14: b[0] ^ b[-1] = 0 ^ 1 = 1 -> output 0
  //   t = 15..27: b[t-14] ^ b[t-15] with both in b[0..13] (zeros) -> 0 -> output 1 (x13)
  //   t = 28: b[14] ^ b[13] = 1 -> 0;  t = 29: b[15] ^ b[14] = 0 ^ 1 = 1 -> 0;  t = 30: 0 ^ 0 -> 1
  CHECK(bit_string(sequence(PrbsPolynomial::prbs15, 31)) ==
        std::string(14, '1') + "0" + std::string(13, '1') + "001");
  // Non-inverted PRBS-15 is the complement.
  CHECK(bit_string(sequence(PrbsPolynomial::prbs15, 31, 0, PrbsPolarity::non_inverted)) ==
        std::string(14, '0') + "1" + std::string(13, '0') + "110");
}

TEST_CASE("prbs: period 2^n - 1 and maximal length (all non-zero states visited)", "[prbs]") {
  for (auto p : {PrbsPolynomial::prbs9, PrbsPolynomial::prbs15, PrbsPolynomial::prbs23}) {
    const auto& d = prbs_definition(p);
    INFO(d.name);
    PrbsGenerator g(p);
    const std::uint32_t seed = g.state();
    const std::uint64_t period = (std::uint64_t{1} << d.degree) - 1;
    std::uint64_t steps = 0, ones = 0;
    bool early = false;
    std::vector<bool> seen(std::size_t{1} << d.degree, false);
    do {
      if (seen[g.state()]) early = true;
      seen[g.state()] = true;
      ones += g.next() ^ (g.inverted() ? 1u : 0u);
      ++steps;
    } while (g.state() != seed && steps <= period);
    CHECK_FALSE(early);
    CHECK(steps == period);  // the register returns to its seed after exactly 2^n - 1 steps
    // An m-sequence has 2^(n-1) ones per period (Golomb's balance property).
    CHECK(ones == (std::uint64_t{1} << (d.degree - 1)));
  }
}

TEST_CASE("prbs: the polynomials are primitive (multiplicative order of x is 2^n - 1)", "[prbs]") {
  // Independent of the generator: x^(2^n - 1) = 1 mod p and x^((2^n - 1)/q) != 1 for every prime
  // factor q of 2^n - 1. Factors: 511 = 7 * 73; 32767 = 7 * 31 * 151; 8388607 = 47 * 178481;
  // 2147483647 is prime (a Mersenne prime).
  struct Case {
    unsigned n, a;
    std::vector<std::uint64_t> factors;
  };
  const std::vector<Case> cases = {{9, 5, {7, 73}}, {15, 14, {7, 31, 151}}, {23, 18, {47, 178481}}, {31, 28, {2147483647}}};
  for (const auto& c : cases) {
    const std::uint64_t poly = (std::uint64_t{1} << c.n) | (std::uint64_t{1} << c.a) | 1u;
    const std::uint64_t order = (std::uint64_t{1} << c.n) - 1;
    CHECK(xpow(order, poly, c.n) == 1u);
    for (auto q : c.factors) CHECK(xpow(order / q, poly, c.n) != 1u);
  }
}

TEST_CASE("prbs: PRBS-31 output obeys its recurrence", "[prbs]") {
  // b[t] = b[t-28] ^ b[t-31] on the un-inverted output (inversion cancels in a two-term xor, so
  // the inverted output c obeys c[t] = 1 ^ c[t-28] ^ c[t-31]).
  const auto c = sequence(PrbsPolynomial::prbs31, 200000);
  std::size_t bad = 0;
  for (std::size_t t = 31; t < c.size(); ++t) bad += c[t] != (1 ^ c[t - 28] ^ c[t - 31]);
  CHECK(bad == 0);
}

TEST_CASE("prbs checker: locks after n bits on a stream that starts anywhere", "[prbs]") {
  for (auto p : {PrbsPolynomial::prbs9, PrbsPolynomial::prbs15, PrbsPolynomial::prbs23, PrbsPolynomial::prbs31}) {
    const unsigned n = prbs_definition(p).degree;
    INFO(prbs_definition(p).name);
    const auto stream = sequence(p, 5000, 123457);
    PrbsCheckerConfig cfg;
    cfg.polynomial = p;
    cfg.verify_bits = 0;
    PrbsChecker ch(cfg);
    ch.process(std::span<const std::uint8_t>(stream.data(), n - 1));
    CHECK_FALSE(ch.locked());
    ch.process(std::span<const std::uint8_t>(stream.data() + n - 1, 1));
    CHECK(ch.locked());
    ch.process(std::span<const std::uint8_t>(stream.data() + n, stream.size() - n));
    CHECK(ch.counts().bits == stream.size() - n);
    CHECK(ch.counts().errors == 0);
    CHECK(ch.counts().first_lock_bit == n);

    // With the default confirmation of 32 bits: locked after n + 32 bits, same counts.
    cfg.verify_bits = 32;
    PrbsChecker ch2(cfg);
    ch2.process(std::span<const std::uint8_t>(stream.data(), n + 31));
    CHECK_FALSE(ch2.locked());
    ch2.process(std::span<const std::uint8_t>(stream.data() + n + 31, stream.size() - n - 31));
    CHECK(ch2.locked());
    CHECK(ch2.counts().bits == stream.size() - n);
    CHECK(ch2.counts().first_lock_bit == n);
  }
}

TEST_CASE("prbs checker: counts injected errors exactly", "[prbs]") {
  auto stream = sequence(PrbsPolynomial::prbs23, 200000, 999);
  // Errors at known positions after the lock (n + 32 bits), some adjacent, some at tap distance.
  const std::vector<std::size_t> where = {100, 101, 118, 141, 5000, 5018, 5023, 77777, 199999};
  for (auto i : where) stream[i] ^= 1;
  PrbsChecker ch(PrbsCheckerConfig{PrbsPolynomial::prbs23});
  std::vector<std::uint8_t> expected(stream.size());
  ch.process(stream, expected);
  CHECK(ch.counts().errors == where.size());
  CHECK(ch.counts().bits == stream.size() - 23);
  CHECK(ch.counts().sync_losses == 0);
  // The checker's expected bits are the clean sequence.
  const auto clean = sequence(PrbsPolynomial::prbs23, 200000, 999);
  std::size_t differ = 0;
  for (std::size_t i = 23; i < clean.size(); ++i) differ += expected[i] != clean[i];
  CHECK(differ == 0);
  CHECK(expected[0] == 2);

  // A binary symmetric channel at p = 0.02 (Philox draws): every flip after the lock is counted.
  auto noisy = sequence(PrbsPolynomial::prbs15, 300000, 17);
  RandomStream rs(5, 0, Substream::user);
  std::uint64_t flips_after = 0;
  std::vector<std::size_t> flipped;
  for (std::size_t i = 0; i < noisy.size(); ++i) {
    if (rs.uniform() < 0.02) {
      noisy[i] ^= 1;
      flipped.push_back(i);
    }
  }
  PrbsChecker ch2(PrbsCheckerConfig{PrbsPolynomial::prbs15});
  ch2.process(noisy);
  const std::uint64_t first = ch2.counts().first_lock_bit;
  for (auto i : flipped) flips_after += i >= first;
  CHECK(ch2.counts().sync_losses == 0);
  CHECK(ch2.counts().errors == flips_after);
  CHECK(ch2.counts().bits == noisy.size() - first);
}

TEST_CASE("prbs checker: sync loss on a slip, then re-lock", "[prbs]") {
  // Drop one bit at 50000: the rest of the stream is the sequence shifted by one.
  auto a = sequence(PrbsPolynomial::prbs15, 100001, 4242);
  a.erase(a.begin() + 50000);
  PrbsChecker ch(PrbsCheckerConfig{PrbsPolynomial::prbs15});
  ch.process(a);
  CHECK(ch.counts().sync_losses == 1);
  CHECK(ch.counts().acquisitions == 2);
  CHECK(ch.locked());
  CHECK(ch.counts().errors == 0);  // the window straddling the slip is discarded
  CHECK(ch.counts().discarded_bits > 0);
  CHECK(ch.counts().discarded_bits <= 2048);
}

TEST_CASE("prbs checker: no lock on random bits, zeros or the wrong polarity", "[prbs]") {
  // Random bits: each attempt passes 32 verification bits with probability 2^-32, about 1e5
  // attempts here: a false lock has probability ~2e-5 (fixed seed, so the outcome is fixed).
  std::vector<std::uint8_t> random(100000);
  RandomStream rs(11, 0, Substream::user);
  rs.fill_bits(random);
  PrbsChecker ch(PrbsCheckerConfig{PrbsPolynomial::prbs15});
  ch.process(random);
  CHECK(ch.counts().acquisitions == 0);
  CHECK(ch.counts().bits == 0);

  // All zeros would be the stuck state of a non-inverted register: never accepted.
  std::vector<std::uint8_t> zeros(10000, 0);
  PrbsChecker z(PrbsCheckerConfig{PrbsPolynomial::prbs9});
  z.process(zeros);
  CHECK(z.counts().acquisitions == 0);

  // PRBS-15 with O.150's inversion, checked as non-inverted: the complement never satisfies the
  // recurrence (c[t] = 1 ^ c[t-14] ^ c[t-15] differs from c[t-14] ^ c[t-15] everywhere).
  const auto s = sequence(PrbsPolynomial::prbs15, 20000);
  PrbsCheckerConfig cfg{PrbsPolynomial::prbs15};
  cfg.polarity = PrbsPolarity::non_inverted;
  PrbsChecker w(cfg);
  w.process(s);
  CHECK(w.counts().acquisitions == 0);
}

TEST_CASE("prbs checker: configuration errors", "[prbs]") {
  PrbsCheckerConfig c;
  c.loss_window_bits = 8;
  CHECK_THROWS_AS(PrbsChecker(c), ConfigError);
  c = {};
  c.loss_error_fraction = 1.0;
  CHECK_THROWS_AS(PrbsChecker(c), ConfigError);
  c = {};
  c.verify_bits = 5000;
  CHECK_THROWS_AS(PrbsChecker(c), ConfigError);
}
