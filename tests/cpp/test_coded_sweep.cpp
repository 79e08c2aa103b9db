// Tests of coded sweeps (sim.hpp LinkConfig::code) and MODCOD tables from coded simulations.
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <map>
#include <nlohmann/json.hpp>
#include <vector>

#include "qamsight/fec.hpp"
#include "qamsight/io.hpp"
#include "qamsight/link.hpp"
#include "qamsight/measure.hpp"
#include "qamsight/sim.hpp"
#include "qamsight/theory.hpp"

using namespace qamsight;

namespace {

// Distance spectrum of the K = 7 (171, 133) code by enumeration of the paths that leave state 0
// and first return to it, written here from the generator polynomials alone (no project code):
// returns A_d (number of error events of output weight d) and B_d (their total input weight).
struct Spectrum {
  std::map<int, double> a, b;
};

Spectrum enumerate_k7_spectrum(int max_weight) {
  const unsigned g[2] = {0171, 0133};
  // Register of 7 bits: bit 6 the current input, bits 5..0 the 6 previous inputs (bit 5 newest),
  // so a generator's most significant bit multiplies the current input.
  auto output_weight = [&](unsigned state, unsigned u) {
    const unsigned reg = (u << 6) | state;
    return __builtin_popcount(reg & g[0]) % 2 + __builtin_popcount(reg & g[1]) % 2;
  };
  auto next = [](unsigned state, unsigned u) { return ((u << 6) | state) >> 1; };
  struct Mass {
    double paths = 0, input_weight = 0;
  };
  // mass[state][weight] of the paths still away from state 0.
  std::vector<std::vector<Mass>> cur(64, std::vector<Mass>(max_weight + 1));
  const int w0 = output_weight(0, 1);
  cur[next(0, 1)][w0] = {1, 1};
  Spectrum s;
  for (int step = 0; step < 1000; ++step) {
    std::vector<std::vector<Mass>> nxt(64, std::vector<Mass>(max_weight + 1));
    bool any = false;
    for (unsigned st = 1; st < 64; ++st) {
      for (int w = 0; w <= max_weight; ++w) {
        const Mass m = cur[st][w];
        if (m.paths == 0) continue;
        for (unsigned u = 0; u < 2; ++u) {
          const int w2 = w + output_weight(st, u);
          if (w2 > max_weight) continue;
          const unsigned t = next(st, u);
          if (t == 0) {
            s.a[w2] += m.paths;
            s.b[w2] += m.input_weight + u * m.paths;
          } else {
            nxt[t][w2].paths += m.paths;
            nxt[t][w2].input_weight += m.input_weight + u * m.paths;
            any = true;
          }
        }
      }
    }
    cur.swap(nxt);
    if (!any) break;
  }
  return s;
}

// Union bound on the bit error rate of ML decoding of the rate-1/2 code with antipodal signalling
// (BPSK, or QPSK as two BPSK rails) in AWGN: Pb <= sum_d B_d Q(sqrt(2 d R Eb/N0)), one input bit
// per trellis step (J. G. Proakis, Digital Communications, 4th ed., sec. 8.2, eq. 8-2-26 family).
// R is the rate actually spent per information bit (k / n, including the zero tail).
double union_bound(const Spectrum& s, double eb_n0_db, double rate) {
  const double g = rate * std::pow(10.0, eb_n0_db / 10.0);
  double sum = 0;
  for (const auto& [d, b] : s.b) sum += b * 0.5 * std::erfc(std::sqrt(d * g));  // Q(sqrt(2 d g))
  return sum;
}

SweepConfig coded_sweep(const std::string& mod, const std::string& code, std::vector<double> eb_n0) {
  SweepConfig c;
  c.modulations = {mod};
  c.snr_db = std::move(eb_n0);
  c.link.code = code;
  c.seed = 7;
  c.threads = 2;
  return c;
}

}  // namespace

TEST_CASE("K=7 (171,133) distance spectrum: free distance 10 and the remembered B_d", "[coded]") {
  const Spectrum s = enumerate_k7_spectrum(24);
  // Free distance 10 and information-weight coefficients B_10 .. B_18 = 36, 211, 1404, 11633,
  // 77433 (from memory: the tabulated spectrum of this code, e.g. in Proakis's tables of
  // optimum rate-1/2 codes); checked here against the enumeration above.
  REQUIRE(s.a.begin()->first == 10);
  CHECK(s.a.at(10) == 11);  // A_10 = 11 (from memory)
  CHECK(s.b.at(10) == 36);
  CHECK(s.b.at(12) == 211);
  CHECK(s.b.at(14) == 1404);
  CHECK(s.b.at(16) == 11633);
  CHECK(s.b.at(18) == 77433);
  for (const auto& [d, a] : s.a) CHECK(d % 2 == 0);  // both generators have odd weight
}

TEST_CASE("conv-k7-r1/2 QPSK soft decisions: below the union bound, BER near 1e-5 at 4.4 dB", "[coded]") {
  const Spectrum s = enumerate_k7_spectrum(30);
  const double rate = 1024.0 / 2060.0;  // k / 2 (k + 6): 1024 info bits and a 6-bit zero tail
  SECTION("below the union bound where it is not tight") {
    // 1000 bit errors are about 300 error events (B_10/A_10 ~ 3.3 bits each), a relative
    // standard deviation of about 6%; the bound is 30% or more above the expected BER at these
    // points, so a correct decoder fails this with a probability below 1e-6.
    SweepConfig c = coded_sweep("qpsk", "conv-k7-r1/2", {2.5, 3.0});
    c.stop.min_bit_errors = 1000;
    const SweepResult r = run_sweep(c);
    for (const auto& p : r.points) {
      INFO("Eb/N0 " << p.spec.eb_n0_db << " BER " << p.ber << " bound " << union_bound(s, p.spec.eb_n0_db, rate));
      CHECK(p.counts.bit_errors >= 1000);
      CHECK(p.ber < union_bound(s, p.spec.eb_n0_db, rate));
    }
  }
  SECTION("near 1e-5 at 4.4 dB") {
    // From memory: soft-decision Viterbi decoding of this code reaches BER 1e-5 at about
    // 4.4 dB Eb/N0 (3-bit quantised figures in textbooks; unquantised LLRs do slightly better).
    // Accepted: 2e-6 .. 2.5e-5, i.e. about +-0.4 dB on this curve's slope.
    SweepConfig c = coded_sweep("qpsk", "conv-k7-r1/2", {4.4});
    c.stop.min_bit_errors = 40;
    const SweepResult r = run_sweep(c);
    const auto& p = r.points.front();
    INFO("BER " << p.ber << " bits " << p.counts.bits);
    CHECK(p.ber > 2e-6);
    CHECK(p.ber < 2.5e-5);
  }
}

TEST_CASE("LDPC 648 r1/2 QPSK: the FER falls steeply over 1 dB", "[coded]") {
  SweepConfig c = coded_sweep("qpsk", "ldpc-648-r1/2", {1.0, 2.0});
  c.stop.min_bit_errors = std::numeric_limits<std::uint64_t>::max();
  c.stop.min_frame_errors = 30;
  const SweepResult r = run_sweep(c);
  REQUIRE(r.points.size() == 2);
  const auto& lo = r.points[0];
  const auto& hi = r.points[1];
  INFO("FER " << lo.fer << " at 1 dB, " << hi.fer << " at 2 dB");
  // Common practice (waterfall of short LDPC codes; 802.11n 648-bit rate-1/2 curves, from
  // memory, pass FER 1e-2 near 2 dB Eb/N0): at least a factor 10 over 1 dB, judged on the
  // intervals' ends.
  CHECK(lo.stop_reason == "min_frame_errors");
  CHECK(lo.fer_low > 0.2);
  CHECK(hi.fer_high < 0.05);
  CHECK(hi.fer_high * 10.0 < lo.fer_low);
  CHECK(std::isnan(lo.ber_theory));  // the uncoded AWGN theory is no reference here
}

TEST_CASE("coded sweeps give identical counts on 1 and 2 threads", "[coded]") {
  for (const char* code : {"conv-k7-r2/3", "ldpc-648-r3/4"}) {
    SweepConfig c = coded_sweep("16qam", code, {4.0, 6.0});
    c.stop.min_bit_errors = 200;
    c.stop.max_bits = 300000;
    c.threads = 1;
    const SweepResult one = run_sweep(c);
    c.threads = 2;
    const SweepResult two = run_sweep(c);
    REQUIRE(one.points.size() == two.points.size());
    for (std::size_t i = 0; i < one.points.size(); ++i) {
      CHECK(one.points[i].counts == two.points[i].counts);
      CHECK(one.points[i].counts.frames > 0);
    }
  }
}

TEST_CASE("coded BPSK and QPSK at high Eb/N0 are error-free, also through the waveform link", "[coded]") {
  for (const char* mod : {"bpsk", "qpsk"}) {
    for (const char* code : {"conv-k7-r1/2", "ldpc-648-r1/2"}) {
      // Uncoded BER at 8 dB is 1.9e-4 (theory::ber_bpsk), so the decoder must correct errors
      // (the raw SER is not zero) and the union bound at 8 dB is below 1e-12.
      SweepConfig c = coded_sweep(mod, code, {8.0});
      c.stop.max_bits = 200000;
      const SweepResult r = run_sweep(c);
      const auto& p = r.points.front();
      INFO(mod << " " << code);
      CHECK(p.counts.bit_errors == 0);
      CHECK(p.counts.frame_errors == 0);
      CHECK(p.counts.symbol_errors > 0);
      CHECK(p.counts.bits >= 200000);
    }
  }
  SweepConfig c = coded_sweep("qpsk", "conv-k7-r1/2", {8.0});
  c.link.pulse.samples_per_symbol = 4;
  c.link.impairments.phase_deg = 3.0;  // removed by the phase tracker
  c.stop.max_bits = 50000;
  const SweepResult r = run_sweep(c);
  CHECK(r.points.front().counts.bit_errors == 0);
  CHECK(r.points.front().counts.symbol_errors > 0);
}

TEST_CASE("coded Eb/N0 bookkeeping counts information bits", "[coded]") {
  // Es/N0 = Eb/N0 + 10 log10(bits per symbol x rate), rate = k / channel bits.
  SweepConfig c = coded_sweep("qpsk", "ldpc-648-r1/2", {3.0});
  c.stop.max_bits = 1000;
  SweepResult r = run_sweep(c);
  CHECK(r.points[0].spec.es_n0_db == Approx(3.0 + 10.0 * std::log10(2.0 * 0.5)).margin(1e-12));
  CHECK(r.points[0].code_rate == 0.5);
  const auto j = nlohmann::json::parse(sweep_to_json(r));
  const auto& pj = j["points"][0];
  CHECK(pj["code"] == "ldpc-648-r1/2");
  CHECK(pj["code_rate"].get<double>() == 0.5);
  CHECK(pj["es_n0_db"].get<double>() == Approx(pj["eb_n0_db"].get<double>() + 10.0 * std::log10(2.0 * 0.5)));
  CHECK(pj["frames"].get<std::uint64_t>() == r.points[0].counts.frames);
  CHECK(j["link"]["code"] == "ldpc-648-r1/2");

  // The convolutional code spends its 6 tail bits: rate 1024 / 2060; 8PSK pads 2060 coded bits
  // to 687 symbols (2061 bits).
  c = coded_sweep("qpsk", "conv-k7-r1/2", {4.0});
  c.stop.max_bits = 1000;
  r = run_sweep(c);
  CHECK(r.points[0].spec.es_n0_db == Approx(4.0 + 10.0 * std::log10(2.0 * 1024.0 / 2060.0)).margin(1e-12));
  CHECK(r.points[0].counts.bits % 1024 == 0);
  CHECK(r.points[0].counts.symbols == r.points[0].counts.frames * 1030);
  c = coded_sweep("8psk", "conv-k7-r1/2", {4.0});
  c.stop.max_bits = 1000;
  r = run_sweep(c);
  CHECK(r.points[0].spec.es_n0_db == Approx(4.0 + 10.0 * std::log10(1024.0 / 687.0)).margin(1e-12));
  CHECK(r.points[0].counts.symbols == r.points[0].counts.frames * 687);
  // Es/N0 given: Eb/N0 follows the same way.
  c = coded_sweep("16qam", "ldpc-648-r3/4", {});
  c.snr_kind = SnrKind::es_n0;
  c.snr_db = {5.0};
  c.stop.max_bits = 1000;
  r = run_sweep(c);
  CHECK(r.points[0].spec.eb_n0_db == Approx(5.0 - 10.0 * std::log10(4.0 * 0.75)).margin(1e-12));
}

TEST_CASE("coded link configuration errors", "[coded]") {
  SweepConfig c = coded_sweep("qpsk", "conv-k7-r7/8", {3.0});
  try {
    validate(c);
    FAIL("an unknown code was accepted");
  } catch (const ConfigError& e) {
    CHECK(e.parameter() == "code");
    CHECK(e.allowed().find("ldpc-648-r1/2") != std::string::npos);
  }
}

TEST_CASE("user stages in front of the decoder: symbols, LLRs and hard bits", "[coded]") {
  // conv-k7-r1/2 with QPSK at Eb/N0 = 2.5 dB, 400 codewords. A pass-through symbol stage and a
  // stage returning the library's own LLRs reproduce the built-in coded receiver exactly; a
  // stage returning QPSK LLRs from the closed form L = -sqrt(2) y / sigma^2 = -2 sqrt(2) y / N0
  // (per component, points at +-1/sqrt(2), sigma^2 = N0/2 per dimension; exact for Gray QPSK,
  // e.g. Proakis, Digital Communications, the binary antipodal log-likelihood ratio) decodes
  // to a BER inside the built-in one's interval band; hard bits decode worse than soft ones
  // (the soft-decision gain of about 2 dB is common practice).
  SweepConfig c = coded_sweep("qpsk", "conv-k7-r1/2", {2.5});
  c.stop.min_bit_errors = 1'000'000'000;
  c.stop.max_bits = 400 * make_code("conv-k7-r1/2")->info_bits();
  c.threads = 2;
  const auto plain = run_sweep(c).points.at(0);
  REQUIRE(plain.counts.bit_errors > 0);

  auto pass = std::make_shared<UserStage>();
  pass->output = StageOutputKind::symbols;
  pass->process = [](const StageInput& in, StageOutput& out) {
    std::copy(in.symbols.begin(), in.symbols.end(), out.symbols.begin());
  };
  c.link.stage = pass;
  CHECK(run_sweep(c).points.at(0).counts == plain.counts);

  auto closed_form = std::make_shared<UserStage>();
  closed_form->output = StageOutputKind::llrs;
  closed_form->process = [](const StageInput& in, StageOutput& out) {
    const double sigma2 = in.noise_variance / 2.0;
    const double scale = std::sqrt(2.0) / sigma2;
    for (std::size_t i = 0; i < in.symbols.size(); ++i) {
      // Gray QPSK: label bit 0 (MSB) on I, bit 1 on Q; bit 0 maps to the negative coordinate
      // in the library's convention (ln p(y|-a)/p(y|+a) = -2 a y / sigma^2), hence the sign.
      out.llrs[2 * i] = static_cast<float>(-scale * in.symbols[i].real());
      out.llrs[2 * i + 1] = static_cast<float>(-scale * in.symbols[i].imag());
    }
  };
  c.link.stage = closed_form;
  const auto cf = run_sweep(c).points.at(0);
  CHECK(cf.counts.bits == plain.counts.bits);
  CHECK(cf.counts.symbol_errors == plain.counts.symbol_errors);  // the same raw decisions
  const Interval band = clopper_pearson(plain.counts.bit_errors, plain.counts.bits, 0.999);
  INFO("built-in " << plain.counts.bit_errors << " errors, closed-form stage " << cf.counts.bit_errors);
  CHECK(static_cast<double>(cf.counts.bit_errors) / static_cast<double>(cf.counts.bits) >= band.low);
  CHECK(static_cast<double>(cf.counts.bit_errors) / static_cast<double>(cf.counts.bits) <= band.high);

  auto hard = std::make_shared<UserStage>();
  hard->output = StageOutputKind::bits;
  hard->process = [](const StageInput& in, StageOutput& out) {
    for (std::size_t i = 0; i < in.symbols.size(); ++i) {
      out.bits[2 * i] = in.symbols[i].real() > 0.0f ? 1 : 0;
      out.bits[2 * i + 1] = in.symbols[i].imag() > 0.0f ? 1 : 0;
    }
  };
  c.link.stage = hard;
  const auto h = run_sweep(c).points.at(0);
  CHECK(h.counts.symbol_errors == plain.counts.symbol_errors);
  CHECK(h.counts.bit_errors > 3 * plain.counts.bit_errors);
}

TEST_CASE("log-linear crossing of a measured curve", "[coded]") {
  // Two points 1e-1 at 0 dB and 1e-3 at 2 dB: 1e-2 lies half-way in log rate.
  CHECK(log_linear_crossing({0.0, 2.0}, {1e-1, 1e-3}, 1e-2) == Approx(1.0));
  CHECK(std::isnan(log_linear_crossing({0.0, 2.0}, {1e-1, 5e-2}, 1e-2)));
  CHECK(std::isnan(log_linear_crossing({0.0, 2.0}, {1e-3, 1e-4}, 1e-2)));
  CHECK(log_linear_crossing({0.0, 1.0, 2.0}, {0.3, 0.1, 0.0}, 1e-2) == 1.0);
}

TEST_CASE("MODCOD table from coded simulations: conv-k7-r1/2 QPSK at BER 1e-5", "[coded]") {
  ModcodSimulationConfig c;
  c.modulations = {"qpsk"};
  c.codes = {"conv-k7-r1/2"};
  c.target = ModcodTarget::ber;
  c.target_rate = 1e-5;
  c.es_n0_db = {3.5, 4.0, 4.5};  // QPSK at rate ~1/2: Es/N0 = Eb/N0 - 0.03 dB
  c.min_errors = 60;
  c.seed = 3;
  c.threads = 2;
  const ModcodSimulation sim = simulate_modcod_table(c);
  REQUIRE(sim.rows.size() == 1);
  const auto& row = sim.rows[0];
  INFO(row.note);
  REQUIRE(row.available);
  REQUIRE(sim.table.size() == 1);
  const Modcod& m = sim.table.rows()[0];
  // From memory: BER 1e-5 at about 4.4 dB Eb/N0; Es/N0 = Eb/N0 + 10 log10(2 x 1024/2060).
  const double expected = 4.4 + 10.0 * std::log10(2.0 * 1024.0 / 2060.0);
  CHECK(m.required_es_n0_db == Approx(expected).margin(0.5));
  CHECK(row.required_low_db <= m.required_es_n0_db);
  CHECK(row.required_high_db >= m.required_es_n0_db);
  CHECK(m.spectral_efficiency == Approx(2.0 * 1024.0 / 2060.0));
  CHECK(m.code == "conv-k7-r1/2");
  // The table survives the CSV round trip that `qamsight link` uses.
  const ModcodTable back = ModcodTable::from_csv(sim.table.to_csv(), "generated.csv");
  REQUIRE(back.size() == 1);
  CHECK(back.rows()[0].required_es_n0_db == Approx(m.required_es_n0_db));
  CHECK(back.rows()[0].name == m.name);
}
