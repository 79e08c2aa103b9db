// Tests of the fec module: convolutional code, Viterbi decoder, LDPC codes, alist files, factory.
#include <algorithm>
#include <array>
#include <bitset>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <numeric>
#include <queue>
#include <sstream>
#include <string>
#include <thread>
#include <tuple>
#include <vector>

#include "qamsight/detail/fec_viterbi.hpp"
#include "qamsight/fec.hpp"
#include "qamsight/measure.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

namespace {

// ---------------------------------------------------------------------------------------------
// Channel used by the Monte-Carlo tests: BPSK with bit 0 -> +1, bit 1 -> -1 (unit energy per
// coded bit), real AWGN of variance sigma^2 = 1 / (2 Es/N0) with Es/N0 = R Eb/N0 (Eb counts
// information bits), and the exact LLR 2 y / sigma^2 (positive favours bit 0, the fec
// module's convention).
void bpsk_awgn_llrs(std::span<const std::uint8_t> coded, double eb_n0_db, double rate, RandomStream& noise,
                    std::span<float> noise_buffer, std::span<float> llr) {
  const double es_n0 = rate * db_to_linear(eb_n0_db);
  const double sigma2 = 1.0 / (2.0 * es_n0);
  const float sigma = static_cast<float>(std::sqrt(sigma2));
  const float scale = static_cast<float>(2.0 / sigma2);
  noise.fill_gaussian(noise_buffer.subspan(0, coded.size()));
  for (std::size_t i = 0; i < coded.size(); ++i) {
    const float x = coded[i] ? -1.0f : 1.0f;
    llr[i] = scale * (x + sigma * noise_buffer[i]);
  }
}

struct McCounts {
  std::uint64_t bits = 0, bit_errors = 0, events = 0, frames = 0, frame_errors = 0;
  McCounts& operator+=(const McCounts& o) {
    bits += o.bits;
    bit_errors += o.bit_errors;
    events += o.events;
    frames += o.frames;
    frame_errors += o.frame_errors;
    return *this;
  }
};

// Viterbi error events: within one event the info error sequence has at most 5 consecutive
// zeros (six zeros return the error state of the K = 7 trellis to zero), so errors at least
// 6 correct bits apart belong to different events. Events, not bits, are the independent
// Poisson counts on which the intervals below are built.
std::uint64_t count_error_events(std::span<const std::uint8_t> a, std::span<const std::uint8_t> b) {
  std::uint64_t events = 0;
  std::size_t last = 0;
  bool any = false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (a[i] == b[i]) continue;
    if (!any || i - last > 6) ++events;
    any = true;
    last = i;
  }
  return events;
}

// Runs frames [0, frames) split over two threads; frame f draws payload and noise from its own
// streams (seed, f), so the totals do not depend on the split.
McCounts simulate(const Code& code, double eb_n0_db, std::uint64_t frames, std::uint64_t seed) {
  const double rate = code.rate();
  auto worker = [&](std::uint64_t first, std::uint64_t last, McCounts& out) {
    auto decoder = code.make_decoder();
    std::vector<std::uint8_t> info(code.info_bits()), coded(code.coded_bits()), decoded(code.info_bits());
    std::vector<float> llr(code.coded_bits()), noise(code.coded_bits());
    for (std::uint64_t f = first; f < last; ++f) {
      RandomStream payload(seed, f, Substream::payload);
      payload.fill_bits(info);
      code.encode(info, coded);
      RandomStream awgn(seed, f, Substream::awgn);
      bpsk_awgn_llrs(coded, eb_n0_db, rate, awgn, noise, llr);
      decoder->decode(llr, decoded);
      std::uint64_t errors = 0;
      for (std::size_t i = 0; i < info.size(); ++i) errors += info[i] != decoded[i];
      out.bits += info.size();
      out.bit_errors += errors;
      out.events += count_error_events(info, decoded);
      out.frames += 1;
      out.frame_errors += errors != 0;
    }
  };
  McCounts a, b;
  std::thread t([&] { worker(frames / 2, frames, b); });
  worker(0, frames / 2, a);
  t.join();
  a += b;
  return a;
}

double qfunc(double x) { return 0.5 * std::erfc(x / std::sqrt(2.0)); }

// Distance spectrum of the K = 7 (171, 133) code, REFERENCES.md section 6 [COMPUTED there by
// trellis enumeration; matches the published values of Proakis and Lin & Costello, from memory]:
// d -> (A_d paths, B_d information-bit weight).
const std::map<int, std::pair<std::uint64_t, std::uint64_t>> kSpectrum{
    {10, {11, 36}},      {12, {38, 211}},       {14, {193, 1404}},      {16, {1331, 11633}},
    {18, {7275, 77433}}, {20, {40406, 502690}}, {22, {234969, 3322763}}};

double union_bound_r12(double eb_n0_db) {
  const double g = db_to_linear(eb_n0_db);
  double sum = 0.0;
  for (const auto& [d, ab] : kSpectrum)
    sum += static_cast<double>(ab.second) * qfunc(std::sqrt(2.0 * 0.5 * d * g));
  return sum;
}

// The trellis of the mother code built in the test from the generator polynomials alone:
// state = last six inputs, newest in bit 5; the 7-bit register (u << 6) | state is tapped by
// the generators with the most significant bit on the current input.
struct Branch {
  unsigned next;
  unsigned a, b;
};
Branch trellis(unsigned state, unsigned u) {
  const unsigned reg = (u << 6) | state;
  return {(state >> 1) | (u << 5), static_cast<unsigned>(__builtin_popcount(reg & 0171) & 1),
          static_cast<unsigned>(__builtin_popcount(reg & 0133) & 1)};
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// Convolutional code

TEST_CASE("conv encoder impulse response is the generator polynomials", "[fec]") {
  // 171 octal = 1 111 001 and 133 octal = 1 011 011 (binary, current-input tap first): a single
  // 1 produces these bit sequences on outputs A and B (hand-derived from the definition).
  const std::array<int, 7> g171{1, 1, 1, 1, 0, 0, 1}, g133{1, 0, 1, 1, 0, 1, 1};
  ConvolutionalCode code({8, ConvRate::r1_2});
  REQUIRE(code.coded_bits() == 2 * (8 + 6));
  for (std::size_t pos : {0u, 3u, 7u}) {
    std::vector<std::uint8_t> info(8, 0), coded(code.coded_bits());
    info[pos] = 1;
    code.encode(info, coded);
    for (std::size_t t = 0; t < 14; ++t) {
      const int want_a = (t >= pos && t - pos < 7) ? g171[t - pos] : 0;
      const int want_b = (t >= pos && t - pos < 7) ? g133[t - pos] : 0;
      INFO("impulse at " << pos << ", step " << t);
      CHECK(coded[2 * t] == want_a);
      CHECK(coded[2 * t + 1] == want_b);
    }
  }
  // Punctured impulse responses, derived by hand from the mother response and the keep
  // patterns (A 1 0 / B 1 1 at rate 2/3, A 1 0 1 / B 1 1 0 at rate 3/4; kept bits A first).
  {
    ConvolutionalCode r23({8, ConvRate::r2_3});
    REQUIRE(r23.coded_bits() == 7 * 3);
    std::vector<std::uint8_t> info(8, 0), coded(r23.coded_bits());
    info[0] = 1;
    r23.encode(info, coded);
    const std::vector<std::uint8_t> want{1, 1, 0, 1, 1, 1, 0, 0, 1, 1, 1};
    CHECK(std::equal(want.begin(), want.end(), coded.begin()));
    CHECK(std::all_of(coded.begin() + 11, coded.end(), [](auto b) { return b == 0; }));
  }
  {
    ConvolutionalCode r34({8, ConvRate::r3_4});
    REQUIRE(r34.coded_bits() == 4 * 4 + 3);
    std::vector<std::uint8_t> info(8, 0), coded(r34.coded_bits());
    info[0] = 1;
    r34.encode(info, coded);
    const std::vector<std::uint8_t> want{1, 1, 0, 1, 1, 1, 0, 0, 1, 1};
    CHECK(std::equal(want.begin(), want.end(), coded.begin()));
    CHECK(std::all_of(coded.begin() + 10, coded.end(), [](auto b) { return b == 0; }));
  }
}

TEST_CASE("conv code distance spectrum and free distance", "[fec]") {
  // Transfer-function enumeration on the test's own trellis: paths that leave state 0 and
  // first return to it, counted by output weight d (A_d) and summed input weight (B_d).
  constexpr int kMaxD = 22;
  using Table = std::array<std::array<std::uint64_t, kMaxD + 1>, 64>;
  Table count{}, info_weight{};
  const Branch first = trellis(0, 1);
  count[first.next][first.a + first.b] = 1;
  info_weight[first.next][first.a + first.b] = 1;
  std::array<std::uint64_t, kMaxD + 1> a_d{}, b_d{};
  for (int step = 0; step < 400; ++step) {
    Table nc{}, nw{};
    bool alive = false;
    for (unsigned s = 1; s < 64; ++s)
      for (int w = 0; w <= kMaxD; ++w) {
        if (count[s][w] == 0) continue;
        for (unsigned u = 0; u < 2; ++u) {
          const Branch br = trellis(s, u);
          const int w2 = w + static_cast<int>(br.a + br.b);
          if (w2 > kMaxD) continue;
          const std::uint64_t c = count[s][w], iw = info_weight[s][w] + u * count[s][w];
          if (br.next == 0) {
            a_d[w2] += c;
            b_d[w2] += iw;
          } else {
            nc[br.next][w2] += c;
            nw[br.next][w2] += iw;
            alive = true;
          }
        }
      }
    count = nc;
    info_weight = nw;
    if (!alive) break;
  }
  int dfree = 0;
  while (dfree <= kMaxD && a_d[dfree] == 0) ++dfree;
  CHECK(dfree == 10);  // d_free = 10: REFERENCES.md section 6
  for (int d = 0; d <= kMaxD; ++d) {
    INFO("d = " << d);
    const auto it = kSpectrum.find(d);
    CHECK(a_d[d] == (it == kSpectrum.end() ? 0 : it->second.first));
    CHECK(b_d[d] == (it == kSpectrum.end() ? 0 : it->second.second));
  }

  // The library encoder itself: every nonzero info sequence of 14 bits (zero tail) has coded
  // weight >= 10, and the single error events of weight 10 starting at bit 0 are A_10 = 11.
  ConvolutionalCode code({14, ConvRate::r1_2});
  std::vector<std::uint8_t> info(14), mother(2 * code.steps());
  int min_weight = 1000, events_at_10 = 0;
  for (unsigned x = 1; x < (1u << 14); ++x) {
    for (unsigned i = 0; i < 14; ++i) info[i] = (x >> i) & 1u;
    code.encode_mother(info, mother);
    const int w = std::accumulate(mother.begin(), mother.end(), 0);
    min_weight = std::min(min_weight, w);
    if (w == 10 && (x & 1u)) {
      // single event: no run of six zeros between the first and the last 1
      const unsigned top = 31u - static_cast<unsigned>(__builtin_clz(x));
      bool single = true;
      for (unsigned i = 0, run = 0; i <= top; ++i) {
        run = info[i] ? 0 : run + 1;
        if (run >= 6) single = false;
      }
      events_at_10 += single;
    }
  }
  CHECK(min_weight == 10);
  CHECK(events_at_10 == 11);
}

TEST_CASE("punctured conv codes have the published free distances", "[fec]") {
  // Published free distances of the punctured K = 7 code at rates 2/3, 3/4, 5/6: 6, 5, 4
  // (from memory: the DVB-S (EN 300 421) puncturing table; Y. Yasuda, K. Kashiki, Y. Hirata,
  // IEEE Trans. Commun. 1984). Shortest weighted path from state 0 back to state 0 over
  // (state, puncturing phase), starting at every phase, on the test's own trellis with the
  // library's keep patterns.
  const std::vector<std::pair<ConvRate, int>> cases{
      {ConvRate::r1_2, 10}, {ConvRate::r2_3, 6}, {ConvRate::r3_4, 5}, {ConvRate::r5_6, 4}};
  for (const auto& [rate, expected] : cases) {
    ConvolutionalCode code({64, rate});
    const auto ka = code.keep_a(), kb = code.keep_b();
    const unsigned period = static_cast<unsigned>(ka.size());
    int best = 1000;
    for (unsigned phase0 = 0; phase0 < period; ++phase0) {
      using Node = std::tuple<int, unsigned, unsigned>;  // weight, state, phase
      std::priority_queue<Node, std::vector<Node>, std::greater<>> queue;
      std::vector<int> done(64 * period, 0);
      const Branch br = trellis(0, 1);
      queue.emplace(static_cast<int>(br.a * ka[phase0] + br.b * kb[phase0]), br.next, (phase0 + 1) % period);
      while (!queue.empty()) {
        const auto [w, s, ph] = queue.top();
        queue.pop();
        if (s == 0) {
          best = std::min(best, w);
          break;
        }
        if (done[s * period + ph]) continue;
        done[s * period + ph] = 1;
        for (unsigned u = 0; u < 2; ++u) {
          const Branch b = trellis(s, u);
          queue.emplace(w + static_cast<int>(b.a * ka[ph] + b.b * kb[ph]), b.next, (ph + 1) % period);
        }
      }
    }
    INFO("rate " << code.name());
    CHECK(best == expected);

    // The punctured encoder is the mother encoder with the pattern applied.
    RandomStream rng(11, 0, Substream::payload);
    std::vector<std::uint8_t> info(64), mother(2 * code.steps()), coded(code.coded_bits());
    rng.fill_bits(info);
    code.encode_mother(info, mother);
    code.encode(info, coded);
    std::vector<std::uint8_t> kept;
    for (std::size_t t = 0; t < code.steps(); ++t) {
      if (ka[t % period]) kept.push_back(mother[2 * t]);
      if (kb[t % period]) kept.push_back(mother[2 * t + 1]);
    }
    CHECK(kept == coded);
  }
}

TEST_CASE("Viterbi decodes noiseless and high-SNR frames without error", "[fec]") {
  for (ConvRate rate : {ConvRate::r1_2, ConvRate::r2_3, ConvRate::r3_4, ConvRate::r5_6}) {
    ConvolutionalCode code({1024, rate});
    INFO(code.name());
    auto decoder = code.make_decoder();
    RandomStream rng(5, 0, Substream::payload);
    std::vector<std::uint8_t> info(code.info_bits()), coded(code.coded_bits()), out(code.info_bits());
    std::vector<float> llr(code.coded_bits());
    for (int f = 0; f < 5; ++f) {
      rng.fill_bits(info);
      code.encode(info, coded);
      for (std::size_t i = 0; i < coded.size(); ++i) llr[i] = coded[i] ? -4.0f : 4.0f;
      const DecodeReport report = decoder->decode(llr, out);
      CHECK(report.codeword_valid);
      CHECK(out == info);
    }
    // 9 dB Eb/N0: far beyond the 1e-5 points of all four rates (about 4.2, 5, 5.5, 6.5 dB
    // with unquantised soft decisions; common practice figures), 100 frames, no errors expected.
    const McCounts counts = simulate(code, 9.0, 100, 77);
    CHECK(counts.bit_errors == 0);
  }
}

TEST_CASE("Viterbi decoding of erasures: punctured positions carry no information", "[fec]") {
  // With every B output erased (LLR 0) the A outputs alone form a rate-1 convolutional map
  // whose generator 171 has a nonzero constant term, so it is invertible
  // (u_t = A_t + sum_{j>=1} g_j u_{t-j}): noiseless A bits determine the info bits and the ML
  // decoder must return exactly them.
  ConvolutionalCode code({256, ConvRate::r1_2});
  ViterbiDecoder decoder(code);
  RandomStream rng(9, 0, Substream::payload);
  std::vector<std::uint8_t> info(256), coded(code.coded_bits()), out(256);
  std::vector<float> llr(code.coded_bits());
  rng.fill_bits(info);
  code.encode(info, coded);
  for (std::size_t t = 0; t < code.steps(); ++t) {
    llr[2 * t] = coded[2 * t] ? -3.0f : 3.0f;
    llr[2 * t + 1] = 0.0f;
  }
  decoder.decode(llr, out);
  CHECK(out == info);
}

TEST_CASE("Viterbi vector kernel matches the portable reference", "[fec]") {
  // Same decisions bit for bit on noisy, erased and saturated LLRs (the kernels use the same
  // float operations; products with the +-1 branch signs are exact).
  const std::size_t steps = 5000;
  std::vector<float> la(steps), lb(steps);
  RandomStream rng(17, 0, Substream::user);
  rng.fill_gaussian(la);
  rng.fill_gaussian(lb);
  for (std::size_t t = 0; t < steps; ++t) {
    la[t] = 3.0f * la[t] + 1.0f;
    lb[t] = 3.0f * lb[t] - 0.5f;
    if (t % 7 == 3) lb[t] = 0.0f;
    if (t % 501 == 0) la[t] = 1.0e6f;
  }
  std::vector<std::uint64_t> ref(steps), vec(steps);
  detail::viterbi_forward_portable(la, lb, ref);
  detail::viterbi_forward_vector(la, lb, vec);
  CHECK(ref == vec);
  // The bit order is a permutation of the 64 states.
  std::uint64_t seen = 0;
  for (unsigned s = 0; s < 64; ++s) seen |= std::uint64_t{1} << detail::decision_bit(s);
  CHECK(seen == ~std::uint64_t{0});
}

TEST_CASE("Viterbi BER at rate 1/2 lies under the union bound and near it", "[fec]") {
  // Reference: soft-decision union bound P_b <= sum_d B_d Q(sqrt(2 R d Eb/N0)), R = 1/2, with the
  // distance spectrum of REFERENCES.md section 6 (d = 10..22); it gives 4.39e-6 at 4.4 dB and
  // 2.08e-6 at 4.6 dB (checked against SciPy below). Maximum-likelihood (full-traceback,
  // zero-tail) decoding must lie under the bound and, since the bound is tight at these SNRs
  // (REFERENCES.md section 6 advice), above a tenth of it. The simulation charges the tail's
  // energy to Eb (R = k/n = 1024/2060, 0.025 dB below 1/2), which only makes "under the bound"
  // harder to meet.
  // Statistics: error events are the Poisson counts; the BER interval is the 99.9% Clopper-
  // Pearson interval of events per bit times the observed bits per event (burst-size scatter
  // is ignored; the margins of a factor 10 and of the bound's own looseness cover it). False
  // alarm about 1e-3 per check with the fixed seed.
  ConvolutionalCode code({1024, ConvRate::r1_2});
  const double ub44 = union_bound_r12(4.4);
  // Same bound from SciPy: tests/reference/make_fec_table.py -> fec_table.csv.
  for (const auto& row : test::read_csv(test::source_path("tests/reference/fec_table.csv")))
    if (row.size() == 4 && row[0] == "union_bound_r12") {
      INFO("Eb/N0 " << row[1]);
      test::check_close(union_bound_r12(std::stod(row[1])), std::stod(row[3]), 1e-9);
    }
  const McCounts c44 = simulate(code, 4.4, 24000, 2024);
  const double per_event = c44.events ? double(c44.bit_errors) / double(c44.events) : 0.0;
  const Interval ev44 = clopper_pearson(c44.events, c44.bits, 0.999);
  const double ber44 = double(c44.bit_errors) / double(c44.bits);
  INFO("4.4 dB: bits " << c44.bits << " errors " << c44.bit_errors << " events " << c44.events << " BER "
                       << ber44 << " union bound " << ub44);
  REQUIRE(c44.events >= 10);
  CHECK(ev44.low * per_event <= ub44);
  CHECK(ev44.high * per_event >= ub44 / 10.0);
  // REFERENCES.md section 6: unquantised soft Viterbi lands within about 0.3 dB of the bound's
  // 4.17 dB at BER 1e-5, so BER < 1e-5 at 4.4 dB already (at least 4 bits per event assumed).
  CHECK(ev44.high * std::max(per_event, 4.0) < 1e-5);

  // BER 1e-5 is reached below 4.6 dB (REFERENCES.md section 6: "clearly below 4.6 dB").
  const McCounts c46 = simulate(code, 4.6, 24000, 4046);
  const double per_event46 = c46.events ? double(c46.bit_errors) / double(c46.events) : 4.0;
  const Interval ev46 = clopper_pearson(c46.events, c46.bits, 0.999);
  INFO("4.6 dB: bits " << c46.bits << " errors " << c46.bit_errors << " events " << c46.events);
  // bits per event of the dominant d = 10 paths are B_10 / A_10 = 3.3; allow at least 4.
  CHECK(ev46.high * std::max(per_event46, 4.0) < 1e-5);
}

TEST_CASE("punctured conv codes order by rate at a fixed Eb/N0", "[fec]") {
  // Higher-rate puncturing of the same mother code has lower free distance (10, 6, 5, 4), so at
  // a fixed Eb/N0 its BER is higher (textbook property of rate-compatible punctured codes).
  // Intervals: 99.9% Clopper-Pearson on error events; the test asks for disjoint intervals.
  const double eb_n0_db = 3.5;
  double previous_high = 0.0;
  std::uint64_t frames = 4000;
  for (ConvRate rate : {ConvRate::r1_2, ConvRate::r2_3, ConvRate::r3_4, ConvRate::r5_6}) {
    ConvolutionalCode code({1024, rate});
    const McCounts c = simulate(code, eb_n0_db, frames, 35);
    const Interval iv = clopper_pearson(c.events, c.bits, 0.999);
    INFO(code.name() << ": BER " << double(c.bit_errors) / double(c.bits) << " events " << c.events
                     << " interval of event rate [" << iv.low << ", " << iv.high << "]");
    CHECK(c.events >= 5);
    CHECK(iv.low > previous_high);
    previous_high = iv.high;
    frames = 1000;
  }
}

// ---------------------------------------------------------------------------------------------
// LDPC codes

namespace {

struct ProtoCase {
  std::size_t n;
  int num, den;
};
const std::vector<ProtoCase> kProtoCases{{648, 1, 2},  {648, 2, 3},  {648, 3, 4},  {648, 5, 6},
                                         {1296, 1, 2}, {1296, 2, 3}, {1296, 3, 4}, {1296, 5, 6},
                                         {1944, 1, 2}, {1944, 2, 3}, {1944, 3, 4}, {1944, 5, 6}};

// The test's own expansion of a prototype (block (i, j) with shift s: row i Z + r has its 1 at
// column j Z + (r + s) mod Z), as dense 0/1 rows.
std::vector<std::vector<std::uint8_t>> expand_dense(const LdpcPrototype& p) {
  const std::size_t z = p.lifting;
  std::vector<std::vector<std::uint8_t>> h(p.block_rows * z, std::vector<std::uint8_t>(p.block_cols * z, 0));
  for (unsigned i = 0; i < p.block_rows; ++i)
    for (unsigned j = 0; j < p.block_cols; ++j) {
      const int s = p.shifts[i * p.block_cols + j];
      if (s < 0) continue;
      for (std::size_t r = 0; r < z; ++r) h[i * z + r][j * z + (r + s) % z] = 1;
    }
  return h;
}

// Rank over GF(2) by plain Gaussian elimination (the test's own, rows as bitsets).
std::size_t gf2_rank(const std::vector<std::vector<std::uint8_t>>& dense) {
  std::vector<std::bitset<1944>> h(dense.size());
  for (std::size_t r = 0; r < dense.size(); ++r)
    for (std::size_t c = 0; c < dense[r].size(); ++c) h[r][c] = dense[r][c];
  const std::size_t cols = dense.empty() ? 0 : dense[0].size();
  std::size_t rank = 0;
  for (std::size_t c = 0; c < cols && rank < h.size(); ++c) {
    std::size_t p = rank;
    while (p < h.size() && !h[p][c]) ++p;
    if (p == h.size()) continue;
    std::swap(h[p], h[rank]);
    for (std::size_t r = 0; r < h.size(); ++r)
      if (r != rank && h[r][c]) h[r] ^= h[rank];
    ++rank;
  }
  return rank;
}

bool satisfies(const std::vector<std::vector<std::uint8_t>>& h, std::span<const std::uint8_t> c) {
  for (const auto& row : h) {
    unsigned parity = 0;
    for (std::size_t j = 0; j < row.size(); ++j) parity ^= row[j] & c[j];
    if (parity) return false;
  }
  return true;
}

std::string temp_path(const std::string& leaf) {
  return (std::filesystem::temp_directory_path() / ("qamsight-test-fec-" + leaf)).string();
}

}  // namespace

TEST_CASE("802.11 LDPC prototypes have the standard's structure and full rank", "[fec]") {
  // Structure of the IEEE 802.11n/ac prototype matrices (IEEE Std 802.11-2012 Annex F, from
  // memory): 24 block columns, 24 (1 - R) block rows, Z = n / 24, shifts below Z, parity part of
  // column k_b = (x, ..., 0 in one middle row, ..., x) then the zero-shift staircase, which makes
  // the expanded H of full rank n - k (checked by the test's own elimination).
  for (const ProtoCase& pc : kProtoCases) {
    const LdpcPrototype p = ieee80211_ldpc_prototype(pc.n, pc.num, pc.den);
    INFO("n = " << pc.n << " rate " << pc.num << "/" << pc.den);
    REQUIRE(p.block_cols == 24);
    REQUIRE(p.block_rows * pc.den == 24u * static_cast<unsigned>(pc.den - pc.num));
    REQUIRE(p.lifting * 24 == pc.n);
    REQUIRE(p.shifts.size() == 24u * p.block_rows);
    for (int s : p.shifts) CHECK((s >= -1 && s < static_cast<int>(p.lifting)));
    const unsigned mb = p.block_rows, kb = 24 - mb;
    CHECK(p.shift(0, kb) >= 0);
    CHECK(p.shift(mb - 1, kb) == p.shift(0, kb));
    int middle = 0;
    for (unsigned i = 1; i + 1 < mb; ++i)
      if (p.shift(i, kb) >= 0) {
        ++middle;
        CHECK(p.shift(i, kb) == 0);
      }
    CHECK(middle == 1);
    for (unsigned j = 0; j + 1 < mb; ++j)
      for (unsigned i = 0; i < mb; ++i) CHECK(p.shift(i, kb + 1 + j) == ((i == j || i == j + 1) ? 0 : -1));
    const auto dense = expand_dense(p);
    CHECK(gf2_rank(dense) == mb * p.lifting);
    // The library's expansion equals the test's.
    const ParityCheckMatrix h = p.expand();
    REQUIRE(h.rows() == dense.size());
    bool same = true;
    for (std::size_t r = 0; r < h.rows(); ++r) {
      std::vector<std::uint8_t> row(h.cols(), 0);
      for (std::uint32_t c : h.row(r)) row[c] = 1;
      same = same && row == dense[r];
    }
    CHECK(same);
    CHECK(h.rank() == mb * p.lifting);
  }
  CHECK_THROWS_AS(ieee80211_ldpc_prototype(648, 7, 8), ConfigError);
  CHECK_THROWS_AS(ieee80211_ldpc_prototype(1000, 1, 2), ConfigError);
}

TEST_CASE("LDPC encoders produce codewords of H", "[fec]") {
  for (const ProtoCase& pc : kProtoCases) {
    const LdpcPrototype p = ieee80211_ldpc_prototype(pc.n, pc.num, pc.den);
    const LdpcCode code("test", p);
    const auto dense = expand_dense(p);
    INFO("n = " << pc.n << " rate " << pc.num << "/" << pc.den);
    REQUIRE(code.coded_bits() == pc.n);
    REQUIRE(code.info_bits() * pc.den == pc.n * pc.num);
    CHECK(code.encoder_kind() == LdpcEncoderKind::dual_diagonal);
    RandomStream rng(3, pc.n * 10 + pc.num, Substream::payload);
    std::vector<std::uint8_t> info(code.info_bits()), coded(code.coded_bits());
    for (int trial = 0; trial < 8; ++trial) {
      rng.fill_bits(info);
      if (trial == 0) std::fill(info.begin(), info.end(), 0);
      if (trial == 1) std::fill(info.begin(), info.end(), 1);
      code.encode(info, coded);
      CHECK(satisfies(dense, coded));
      CHECK(std::equal(info.begin(), info.end(), coded.begin()));  // systematic, info first
    }
  }
}

TEST_CASE("alist files round-trip and the dense encoder matches the dual-diagonal one", "[fec]") {
  const LdpcPrototype p = ieee80211_ldpc_prototype(648, 1, 2);
  const LdpcCode fast("fast", p);
  const ParityCheckMatrix& h = fast.parity_check();
  const std::string text = h.to_alist();
  const ParityCheckMatrix back = ParityCheckMatrix::parse_alist(text, "memory");
  CHECK(back == h);
  const std::string path = temp_path("ldpc648.alist");
  h.write_alist(path);
  const ParityCheckMatrix from_file = ParityCheckMatrix::read_alist(path);
  std::remove(path.c_str());
  CHECK(from_file == h);

  // The parity part of the 802.11 H (last 324 columns) is invertible, so the dense encoder
  // puts the info bits first too, and a systematic codeword is unique: both encoders agree.
  const LdpcCode general("general", from_file);
  CHECK(general.encoder_kind() == LdpcEncoderKind::dense);
  REQUIRE(general.info_bits() == 324);
  for (std::size_t j = 0; j < 324; ++j) REQUIRE(general.info_positions()[j] == j);
  RandomStream rng(8, 0, Substream::payload);
  std::vector<std::uint8_t> info(324), a(648), b(648);
  const auto dense = expand_dense(p);
  for (int trial = 0; trial < 20; ++trial) {
    rng.fill_bits(info);
    fast.encode(info, a);
    general.encode(info, b);
    CHECK(a == b);
    CHECK(satisfies(dense, b));
  }
}

TEST_CASE("alist Hamming (7,4) code: dense encoder gives the textbook code", "[fec]") {
  // H's columns are the seven nonzero binary 3-tuples (R. W. Hamming, Bell Syst. Tech. J. 1950;
  // Lin & Costello, Error Control Coding, ch. 4): a (7,4) code with weight distribution
  // A_0 = 1, A_3 = 7, A_4 = 7, A_7 = 1.
  const ParityCheckMatrix h =
      ParityCheckMatrix::read_alist(std::string(QAMSIGHT_TEST_DATA_DIR) + "/fec/hamming74.alist");
  REQUIRE(h.rows() == 3);
  REQUIRE(h.cols() == 7);
  std::vector<unsigned> column_values;
  for (std::size_t c = 0; c < 7; ++c) {
    unsigned v = 0;
    for (std::uint32_t r : h.column(c)) v |= 1u << r;
    column_values.push_back(v);
  }
  std::sort(column_values.begin(), column_values.end());
  CHECK(column_values == std::vector<unsigned>{1, 2, 3, 4, 5, 6, 7});
  const LdpcCode code("hamming", h);
  REQUIRE(code.info_bits() == 4);
  std::array<int, 8> weights{};
  std::vector<unsigned> words;  // codewords packed, bit j = position j
  for (unsigned x = 0; x < 16; ++x) {
    std::vector<std::uint8_t> info{std::uint8_t(x & 1), std::uint8_t((x >> 1) & 1),
                                   std::uint8_t((x >> 2) & 1), std::uint8_t((x >> 3) & 1)};
    std::vector<std::uint8_t> c(7);
    code.encode(info, c);
    CHECK(h.syndrome_weight(c) == 0);
    for (std::size_t j = 0; j < 4; ++j) CHECK(c[code.info_positions()[j]] == info[j]);
    weights[std::accumulate(c.begin(), c.end(), 0)]++;
    unsigned packed = 0;
    for (std::size_t j = 0; j < 7; ++j) packed |= unsigned(c[j]) << j;
    words.push_back(packed);
  }
  std::sort(words.begin(), words.end());
  CHECK(std::unique(words.begin(), words.end()) == words.end());
  CHECK(weights == std::array<int, 8>{1, 0, 0, 7, 7, 0, 0, 1});
}

TEST_CASE("a rank-deficient H gives k = n - rank and valid codewords", "[fec]") {
  // 648 rate-1/2 H plus a redundant row (the sum of rows 0 and 1): rank stays 324.
  const ParityCheckMatrix base = ieee80211_ldpc_prototype(648, 1, 2).expand();
  std::vector<std::vector<std::uint32_t>> rows;
  for (std::size_t r = 0; r < base.rows(); ++r) rows.emplace_back(base.row(r).begin(), base.row(r).end());
  std::vector<std::uint32_t> sum;
  std::set_symmetric_difference(rows[0].begin(), rows[0].end(), rows[1].begin(), rows[1].end(),
                                std::back_inserter(sum));
  rows.push_back(sum);
  const ParityCheckMatrix h(base.rows() + 1, base.cols(), rows);
  const LdpcCode code("redundant", h);
  CHECK(code.info_bits() == 324);
  std::vector<std::uint8_t> info(324), c(648);
  RandomStream rng(1, 2, Substream::payload);
  for (int trial = 0; trial < 5; ++trial) {
    rng.fill_bits(info);
    code.encode(info, c);
    CHECK(h.syndrome_weight(c) == 0);
  }
}

TEST_CASE("malformed alist files are rejected with file and line", "[fec]") {
  const std::string good = "3 2\n2 2\n1 2 1\n2 2\n1 0\n1 2\n2 0\n1 2\n2 3\n";
  CHECK(ParityCheckMatrix::parse_alist(good, "g.alist").edges() == 4);
  const std::vector<std::pair<std::string, std::string>> bad{
      {"", "line 1: missing"},
      {"3\n", "line 1: expected 2"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 0\n1 2\n2 0\n1 2\n", "line 9: missing row index lists"},
      {"3 2\n2 2\n1 2 x\n2 2\n1 0\n1 2\n2 0\n1 2\n2 3\n", "line 3: 'x' is not"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 0\n1 3\n2 0\n1 2\n2 3\n", "line 6: column 2: index 3 out of range"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 0\n1 2\n2 0\n1 2\n1 3\n", "line 9: row 2 and column 1"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 5\n1 2\n2 0\n1 2\n2 3\n", "line 5: column 1: entry 2 should be padding"},
      {"3 2\n3 2\n1 2 1\n2 2\n1 0\n1 2\n2 0\n1 2\n2 3\n", "line 2: maximum weights exceed"},
      {"3 2\n2 3\n1 2 1\n2 2\n1 0\n1 2\n2 0\n1 2\n2 3\n",
       "line 4: largest row weight is 2 but line 2 declares 3"},
      {"3 2\n2 2\n1 2 1\n2 1\n1 0\n1 2\n2 0\n1 2\n2 3\n", "line 4: row weights sum to 3"},
      {"3 2\n2 2\n1 2 0\n2 2\n1 0\n1 2\n0 0\n1 2\n2 3\n", "line 3: column 3 has weight 0"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 0\n1 1\n2 0\n1 2\n2 3\n", "line 6: column 2 repeats"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 0\n1 2\n2 0\n1 2\n2 3\n7\n", "line 10: unexpected data"},
      {"3 2\n2 2\n1 2 1\n2 2\n1 0 0\n1 2\n2 0\n1 2\n2 3\n", "line 5: column 1 has 3 entries"},
  };
  for (const auto& [text, fragment] : bad) {
    INFO("text:\n" << text << "expected fragment: " << fragment);
    try {
      ParityCheckMatrix::parse_alist(text, "bad.alist");
      FAIL("no exception");
    } catch (const InputError& e) {
      const std::string msg = e.what();
      INFO("message: " << msg);
      CHECK(msg.find("alist 'bad.alist'") != std::string::npos);
      CHECK(msg.find(fragment) != std::string::npos);
    }
  }
  CHECK_THROWS_AS(ParityCheckMatrix::read_alist("/nonexistent/dir/none.alist"), InputError);
  CHECK_THROWS_AS(make_code("ldpc-alist:/nonexistent/dir/none.alist"), InputError);
}

TEST_CASE("LDPC decoder: noiseless, slightly noisy, repeatable", "[fec]") {
  const LdpcCode code("ldpc-1944-r1/2", ieee80211_ldpc_prototype(1944, 1, 2));
  auto decoder = code.make_ldpc_decoder();
  RandomStream rng(21, 0, Substream::payload);
  std::vector<std::uint8_t> info(code.info_bits()), coded(code.coded_bits()), out(code.info_bits());
  std::vector<float> llr(code.coded_bits());
  rng.fill_bits(info);
  code.encode(info, coded);
  for (std::size_t i = 0; i < coded.size(); ++i) llr[i] = coded[i] ? -5.0f : 5.0f;
  DecodeReport r = decoder->decode(llr, out);
  CHECK(r.codeword_valid);
  CHECK(r.iterations == 0);
  CHECK(out == info);

  // 40 wrong-sign weak values among 1944 strong ones: min-sum must correct them.
  RandomStream pick(21, 1, Substream::user);
  for (int e = 0; e < 40; ++e) {
    const std::size_t i = pick.next_u32() % coded.size();
    llr[i] = coded[i] ? 0.5f : -0.5f;
  }
  r = decoder->decode(llr, out);
  CHECK(r.codeword_valid);
  CHECK(r.iterations >= 1);
  CHECK(out == info);

  // Repeatability: the same LLRs twice on one decoder and once on a fresh one.
  RandomStream awgn(21, 2, Substream::awgn);
  std::vector<float> noise(coded.size());
  bpsk_awgn_llrs(coded, 1.2, code.rate(), awgn, noise, llr);
  std::vector<std::uint8_t> first(code.coded_bits()), second(code.coded_bits()), third(code.coded_bits());
  const DecodeReport r1 = decoder->decode_codeword(llr, first);
  const std::vector<float> post1(decoder->posterior().begin(), decoder->posterior().end());
  const DecodeReport r2 = decoder->decode_codeword(llr, second);
  auto fresh = code.make_ldpc_decoder();
  const DecodeReport r3 = fresh->decode_codeword(llr, third);
  CHECK(first == second);
  CHECK(first == third);
  CHECK(r1.iterations == r2.iterations);
  CHECK(r1.iterations == r3.iterations);
  CHECK(r1.codeword_valid == r3.codeword_valid);
  CHECK(std::equal(post1.begin(), post1.end(), fresh->posterior().begin()));
}

TEST_CASE("LDPC FER of the n = 1944 and 648 rate-1/2 codes falls steeply", "[fec]") {
  // Published 802.11n performance (from memory): the n = 1944 rate-1/2 code reaches FER 1e-2
  // near Eb/N0 = 1.5 to 2.0 dB with ~50 iterations of belief propagation, the n = 648 code
  // roughly 0.5 to 1 dB later. Layered normalised min-sum loses a few tenths of a dB. Generous
  // limits: FER < 1e-2 at 2.5 dB (n = 1944) and 3.0 dB (n = 648); FER > 0.5 at 0.5 dB, only
  // 0.3 dB above the BPSK rate-1/2 capacity limit of 0.19 dB (Shannon; common practice value).
  // Statistics: 99.9% Clopper-Pearson intervals on frame errors, false alarm ~1e-3 per check.
  const auto code1944 = make_code("ldpc-1944-r1/2");
  const auto code648 = make_code("ldpc-648-r1/2");
  {
    const McCounts c = simulate(*code1944, 2.5, 1200, 1944);
    const Interval iv = clopper_pearson(c.frame_errors, c.frames, 0.999);
    INFO("n=1944 at 2.5 dB: " << c.frame_errors << " of " << c.frames << " frames in error");
    CHECK(iv.high < 1e-2);
  }
  {
    const McCounts c = simulate(*code648, 3.0, 1500, 648);
    const Interval iv = clopper_pearson(c.frame_errors, c.frames, 0.999);
    INFO("n=648 at 3.0 dB: " << c.frame_errors << " of " << c.frames << " frames in error");
    CHECK(iv.high < 1e-2);
  }
  for (const auto& code : {code1944, code648}) {
    const McCounts c = simulate(*code, 0.5, 200, 5);
    const Interval iv = clopper_pearson(c.frame_errors, c.frames, 0.999);
    INFO(code->name() << " at 0.5 dB: " << c.frame_errors << " of " << c.frames);
    CHECK(iv.low > 0.5);
  }
  // The longer code is better at the same rate and Eb/N0 (finite-length behaviour of LDPC codes).
  const McCounts long_code = simulate(*code1944, 1.5, 600, 7);
  const McCounts short_code = simulate(*code648, 1.5, 600, 7);
  INFO("1.5 dB: n=1944 " << long_code.frame_errors << " / 600, n=648 " << short_code.frame_errors
                         << " / 600");
  CHECK(clopper_pearson(long_code.frame_errors, 600, 0.999).high <
        clopper_pearson(short_code.frame_errors, 600, 0.999).low);
}

TEST_CASE("all built-in LDPC codes decode error-free at high SNR; offset rule works", "[fec]") {
  // 6 dB Eb/N0 is far above the waterfall of every 802.11 code (rate 5/6 n = 648 reaches FER
  // 1e-2 around 4.5 dB, from memory), so no frame errors are expected in 40 frames.
  for (const ProtoCase& pc : kProtoCases) {
    const std::string name =
        "ldpc-" + std::to_string(pc.n) + "-r" + std::to_string(pc.num) + "/" + std::to_string(pc.den);
    const auto code = make_code(name);
    INFO(name);
    const McCounts c = simulate(*code, 6.0, 40, 99);
    CHECK(c.frame_errors == 0);
  }
  CodeOptions options;
  options.ldpc.rule = MinSumRule::offset;
  options.ldpc.offset = 0.5f;
  const auto code = make_code("ldpc-1944-r1/2", options);
  const McCounts c = simulate(*code, 2.5, 300, 3);
  CHECK(c.frame_errors <= 3);
}

// ---------------------------------------------------------------------------------------------
// Factory and misuse

TEST_CASE("code factory names, sizes and misuse", "[fec]") {
  const auto& names = code_names();
  REQUIRE(names.size() == 4 + 12 + 1);
  CHECK(names.front().name == "conv-k7-r1/2");
  CHECK(names.back().name == "ldpc-alist:PATH");
  for (const auto& n : names) CHECK(!n.description.empty());

  // Coded lengths of 1024-bit frames: 1030 steps with 2, 3/2, 4/3 and 6/5 kept bits per step.
  const std::vector<std::pair<std::string, std::size_t>> conv{
      {"conv-k7-r1/2", 2060}, {"conv-k7-r2/3", 1545}, {"conv-k7-r3/4", 1374}, {"conv-k7-r5/6", 1236}};
  for (const auto& [name, n] : conv) {
    const auto code = make_code(name);
    CHECK(code->name() == name);
    CHECK(code->info_bits() == 1024);
    CHECK(code->coded_bits() == n);
  }
  CodeOptions options;
  options.conv_info_bits = 100;
  CHECK(make_code("conv-k7-r1/2", options)->coded_bits() == 212);
  for (const ProtoCase& pc : kProtoCases) {
    const std::string name =
        "ldpc-" + std::to_string(pc.n) + "-r" + std::to_string(pc.num) + "/" + std::to_string(pc.den);
    const auto code = make_code(name);
    CHECK(code->name() == name);
    CHECK(code->coded_bits() == pc.n);
    CHECK(code->rate() == Approx(double(pc.num) / pc.den).epsilon(1e-12));
  }
  const std::string alist = std::string(QAMSIGHT_TEST_DATA_DIR) + "/fec/hamming74.alist";
  CHECK(make_code("ldpc-alist:" + alist)->info_bits() == 4);

  try {
    make_code("turbo-r1/3");
    FAIL("no exception");
  } catch (const ConfigError& e) {
    CHECK(e.parameter() == "code");
    CHECK(e.allowed().find("conv-k7-r3/4") != std::string::npos);
    CHECK(e.allowed().find("ldpc-1296-r5/6") != std::string::npos);
    CHECK(e.allowed().find("ldpc-alist:PATH") != std::string::npos);
  }
  CHECK_THROWS_AS(make_code("ldpc-alist:"), ConfigError);
  CHECK_THROWS_AS(ConvolutionalCode({0, ConvRate::r1_2}), ConfigError);
  CHECK_THROWS_AS(ConvolutionalCode({2000000, ConvRate::r1_2}), ConfigError);

  LdpcDecoderConfig bad;
  bad.max_iterations = 0;
  CHECK_THROWS_AS(LdpcCode("x", ieee80211_ldpc_prototype(648, 1, 2), bad), ConfigError);
  bad = {};
  bad.normalisation = 0.0f;
  CHECK_THROWS_AS(LdpcCode("x", ieee80211_ldpc_prototype(648, 1, 2), bad), ConfigError);
  bad = {};
  bad.offset = -1.0f;
  CHECK_THROWS_AS(LdpcCode("x", ieee80211_ldpc_prototype(648, 1, 2), bad), ConfigError);

  LdpcPrototype broken = ieee80211_ldpc_prototype(648, 1, 2);
  broken.shifts[12] = 5;  // top of column k_b no longer equals its bottom
  CHECK_THROWS_AS(LdpcCode("x", broken), ConfigError);
  broken = ieee80211_ldpc_prototype(648, 1, 2);
  broken.shifts[0] = 27;  // shift not below Z
  CHECK_THROWS_AS(LdpcCode("x", broken), ConfigError);
  // A full-rank square H has no information bits.
  CHECK_THROWS_AS(LdpcCode("x", ParityCheckMatrix(2, 2, {{0}, {1}})), ConfigError);
  CHECK_THROWS_AS(ParityCheckMatrix(2, 3, {{0, 3}, {1}}), ConfigError);
  CHECK_THROWS_AS(ParityCheckMatrix(2, 3, {{0, 0}, {1}}), ConfigError);

  // Wrong buffer lengths at the per-frame API boundary.
  for (const char* name : {"conv-k7-r3/4", "ldpc-648-r2/3"}) {
    const auto code = make_code(name);
    auto decoder = code->make_decoder();
    std::vector<std::uint8_t> info(code->info_bits()), coded(code->coded_bits());
    std::vector<float> llr(code->coded_bits());
    std::vector<std::uint8_t> short_info(code->info_bits() - 1), long_coded(code->coded_bits() + 1);
    std::vector<float> short_llr(code->coded_bits() - 1);
    CHECK_NOTHROW(code->encode(info, coded));
    CHECK_THROWS_AS(code->encode(short_info, coded), ConfigError);
    CHECK_THROWS_AS(code->encode(info, long_coded), ConfigError);
    CHECK_NOTHROW(decoder->decode(llr, info));
    CHECK_THROWS_AS(decoder->decode(short_llr, info), ConfigError);
    CHECK_THROWS_AS(decoder->decode(llr, short_info), ConfigError);
  }
}
