// Tests of sim: AWGN BER against exact theory, thread-count invariance, stopping rules.
#include <catch2/catch.hpp>
#include <cmath>

#include "qamsight/channel.hpp"
#include "qamsight/sim.hpp"
#include "qamsight/theory.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

TEST_CASE("AWGN block adds noise of total variance N0 = Es / (Es/N0)", "[channel]") {
  AwgnChannel ch(AwgnConfig{6.0, 1.0});
  qamsight::test::check_close(ch.noise_variance(), std::pow(10.0, -0.6), 1e-12);
  std::vector<cf32> zero(1 << 18), out(zero.size());
  RandomStream rs(1, 1, Substream::awgn);
  ch.process(rs, zero, out);
  double p = 0, pi = 0;
  for (auto v : out) p += std::norm(v), pi += double(v.real()) * v.real();
  const double n = double(out.size());
  // Sample variance of chi-square(2n)-distributed power: relative sd 1/sqrt(n); 6 sigma.
  CHECK(std::abs(p / n / ch.noise_variance() - 1.0) < 6.0 / std::sqrt(n));
  CHECK(std::abs(pi / n / (ch.noise_variance() / 2) - 1.0) < 6.0 * std::sqrt(2.0 / n));
  CHECK_THROWS_AS(AwgnChannel(AwgnConfig{std::nan(""), 1.0}), ConfigError);
  CHECK_THROWS_AS(AwgnChannel(AwgnConfig{10.0, 0.0}), ConfigError);
}

TEST_CASE("symbol-rate sweep: every point's 99.9% interval contains exact theory", "[sim]") {
  // Exact Gray BER (Cho & Yoon 2002) and M-PSK (Craig 1991) from the theory module, itself
  // checked against mpmath tables. 99.9% intervals on 28 BER/SER checks: a correct chain
  // fails for a random seed with probability below 2.8%; the seed is fixed.
  SweepConfig c;
  c.modulations = {"bpsk", "qpsk", "8psk", "16qam", "64qam", "256qam", "1024qam"};
  c.snr_kind = SnrKind::es_n0;
  c.snr_db = {6.0, 14.0};
  c.stop.min_bit_errors = 400;
  c.stop.max_bits = 20'000'000;
  c.seed = 99;
  c.threads = 2;
  const auto r = run_sweep(c);
  REQUIRE(r.points.size() == 14);
  for (const auto& p : r.points) {
    INFO(p.spec.modulation << " Es/N0 " << p.spec.es_n0_db << " BER " << p.ber << " theory " << p.ber_theory);
    const Interval iv = clopper_pearson(p.counts.bit_errors, p.counts.bits, 0.999);
    if (p.ber_theory * p.counts.bits < 3) continue;  // too rare to see in 2e7 bits
    CHECK(iv.low <= p.ber_theory);
    CHECK(p.ber_theory <= iv.high);
    const Interval is = clopper_pearson(p.counts.symbol_errors, p.counts.symbols, 0.999);
    CHECK(is.low <= p.ser_theory);
    CHECK(p.ser_theory <= is.high);
  }
}

TEST_CASE("data-aided EVM in AWGN equals 1/sqrt(Es/N0)", "[sim]") {
  // Common relation (data-aided, reference-power normalisation): EVM_rms = 1/sqrt(SNR).
  SweepConfig c;
  c.modulations = {"64qam"};
  c.snr_kind = SnrKind::es_n0;
  c.snr_db = {20.0};
  c.stop.min_bit_errors = 1;
  c.stop.max_bits = 6 * 4096 * 64;
  const auto r = run_sweep(c);
  const double n = double(r.points[0].counts.symbols);
  // Error power is chi-square with 2n degrees of freedom: relative sd of EVM^2 is 1/sqrt(n).
  CHECK(std::abs(std::pow(r.points[0].evm.rms(), 2) / 0.01 - 1.0) < 6.0 / std::sqrt(n));
}

TEST_CASE("counts are identical for 1, 2 and 3 threads", "[sim]") {
  SweepConfig c;
  c.modulations = {"16qam", "8psk"};
  c.snr_db = {4.0, 8.0};
  c.stop.min_bit_errors = 300;
  c.stop.max_bits = 3'000'000;
  c.seed = 7;
  std::vector<SweepResult> rs;
  for (unsigned t : {1u, 2u, 3u}) {
    c.threads = t;
    rs.push_back(run_sweep(c));
  }
  for (std::size_t i = 0; i < rs[0].points.size(); ++i) {
    CHECK(rs[0].points[i].counts == rs[1].points[i].counts);
    CHECK(rs[0].points[i].counts == rs[2].points[i].counts);
    CHECK(rs[0].points[i].evm.error_power == rs[1].points[i].evm.error_power);
    CHECK(rs[0].points[i].evm.error_power == rs[2].points[i].evm.error_power);
  }
}

TEST_CASE("a point's counts do not depend on the other points of the sweep", "[sim]") {
  SweepConfig a;
  a.modulations = {"qpsk"};
  a.snr_db = {2.0, 5.0};
  SweepConfig b = a;
  b.snr_db = {5.0};
  CHECK(run_sweep(a).points[1].counts == run_sweep(b).points[0].counts);
}

TEST_CASE("stopping rules: min errors, max bits, relative width", "[sim]") {
  SweepConfig c;
  c.modulations = {"qpsk"};
  c.snr_db = {30.0};  // BER ~ 1e-200: never an error
  c.stop.max_bits = 100'000;
  auto r = run_sweep(c);
  CHECK(r.points[0].stop_reason == "max_bits");
  CHECK(r.points[0].counts.bits >= 100'000);
  CHECK(r.points[0].counts.bits < 100'000 + 4096 * 2);
  CHECK(r.points[0].ber_low == 0.0);
  // Upper bound with zero errors: 1 - (alpha/2)^(1/n).
  qamsight::test::check_close(r.points[0].ber_high, -std::expm1(std::log(0.025) / double(r.points[0].counts.bits)), 1e-9);

  c.snr_db = {0.0};
  c.stop = StopRule{};
  r = run_sweep(c);
  CHECK(r.points[0].stop_reason == "min_errors");
  CHECK(r.points[0].counts.bit_errors >= 100);

  c.stop.min_bit_errors = 1'000'000'000;
  c.stop.max_bits = 1'000'000'000;
  c.stop.max_relative_width = 0.2;
  r = run_sweep(c);
  CHECK(r.points[0].stop_reason == "relative_width");
  CHECK((r.points[0].ber_high - r.points[0].ber_low) / r.points[0].ber <= 0.2);
}

TEST_CASE("sweep configuration errors", "[sim]") {
  SweepConfig c;
  c.modulations = {"qam17"};
  CHECK_THROWS_AS(run_sweep(c), ConfigError);
  c.modulations = {"qpsk"};
  c.snr_db = {std::nan("")};
  CHECK_THROWS_AS(run_sweep(c), ConfigError);
  c.snr_db = {5};
  c.stop.min_bit_errors = 0;
  CHECK_THROWS_AS(run_sweep(c), ConfigError);
  c.stop.min_bit_errors = 10;
  c.confidence = 1.0;
  CHECK_THROWS_AS(run_sweep(c), ConfigError);
}

TEST_CASE("cancellation stops at a batch boundary and keeps finished points", "[sim]") {
  SweepConfig c;
  c.modulations = {"qpsk"};
  c.snr_db = {0.0, 30.0};
  c.stop.max_bits = 1'000'000'000;
  std::atomic<bool> cancel{false};
  SweepHooks h;
  h.cancel = &cancel;
  h.on_batch = [&](std::size_t p, const PointSpec&, const PointState&) {
    if (p == 1) cancel = true;
  };
  const auto r = run_sweep(c, h);
  CHECK_FALSE(r.complete);
  REQUIRE(r.points.size() == 2);
  CHECK(r.points[0].stop_reason == "min_errors");
  CHECK(r.points[1].stop_reason == "cancelled");
}

TEST_CASE("user stages: symbols, LLRs or bits replace the built-in decisions", "[sim]") {
  SweepConfig c;
  c.modulations = {"16qam"};
  c.snr_db = {8.0};
  c.stop.max_bits = 2'000'000;
  c.stop.min_bit_errors = 1'000'000'000;
  c.threads = 2;
  const auto plain = run_sweep(c);
  // A pass-through symbol stage reproduces the built-in receiver exactly.
  auto pass = std::make_shared<UserStage>();
  pass->output = StageOutputKind::symbols;
  pass->process = [](const StageInput& in, StageOutput& out) {
    std::copy(in.symbols.begin(), in.symbols.end(), out.symbols.begin());
  };
  c.link.stage = pass;
  CHECK(run_sweep(c).points[0].counts == plain.points[0].counts);
  // A bit stage that slices itself (exhaustive search) gives the same decisions again.
  auto bits = std::make_shared<UserStage>();
  bits->output = StageOutputKind::bits;
  bits->serialise = true;
  bits->process = [](const StageInput& in, StageOutput& out) {
    const unsigned k = in.constellation->bits_per_symbol();
    for (std::size_t i = 0; i < in.symbols.size(); ++i) {
      const auto l = in.constellation->slice_exhaustive(in.symbols[i]);
      for (unsigned b = 0; b < k; ++b) out.bits[i * k + b] = static_cast<std::uint8_t>((l >> (k - 1 - b)) & 1u);
    }
  };
  c.link.stage = bits;
  CHECK(run_sweep(c).points[0].counts == plain.points[0].counts);
  // A stage that inverts every LLR gets (nearly) every bit wrong: the counters see its output.
  auto wrong = std::make_shared<UserStage>();
  wrong->output = StageOutputKind::llrs;
  wrong->process = [](const StageInput& in, StageOutput& out) {
    const unsigned k = in.constellation->bits_per_symbol();
    for (std::size_t i = 0; i < in.symbols.size(); ++i) {
      const auto l = in.constellation->slice_exhaustive(in.symbols[i]);
      for (unsigned b = 0; b < k; ++b) out.llrs[i * k + b] = ((l >> (k - 1 - b)) & 1u) ? 1.0f : -1.0f;
    }
  };
  c.link.stage = wrong;
  const auto w = run_sweep(c).points[0];
  CHECK(w.counts.bit_errors == w.counts.bits - plain.points[0].counts.bit_errors);
}

TEST_CASE("a user stage that throws: run_sweep rethrows the lowest failing frame's exception", "[sim]") {
  // Frames 2 (first batch of 4) and 3 fail; with 1, 2 or 3 threads the caller must see frame 2,
  // never a crash (an exception leaving a pool thread would end the process) and never frame 3.
  SweepConfig c;
  c.modulations = {"qpsk"};
  c.snr_db = {6.0};
  c.stop.max_bits = 1'000'000;
  c.stop.min_bit_errors = 1'000'000'000;
  auto failing = std::make_shared<UserStage>();
  failing->output = StageOutputKind::symbols;
  failing->process = [](const StageInput& in, StageOutput& out) {
    if (in.frame == 2 || in.frame == 3) throw std::runtime_error("frame " + std::to_string(in.frame));
    std::copy(in.symbols.begin(), in.symbols.end(), out.symbols.begin());
  };
  c.link.stage = failing;
  for (unsigned threads : {1u, 2u, 3u}) {
    c.threads = threads;
    for (int repeat = 0; repeat < 20; ++repeat) {
      INFO("threads " << threads << ", repeat " << repeat);
      CHECK_THROWS_WITH(run_sweep(c), "frame 2");
    }
  }
  // The executor is usable again after a failure: a healthy stage gives the plain counts.
  auto executor = make_thread_executor(2);
  SweepHooks hooks;
  hooks.executor = executor.get();
  CHECK_THROWS_WITH(run_sweep(c, hooks), "frame 2");
  c.link.stage.reset();
  c.threads = 2;
  CHECK(run_sweep(c, hooks).points[0].counts == run_sweep(c).points[0].counts);
}
