// Tests of waveform: preamble, frame layout, timing offset, noise calibration, metadata, files.
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <numbers>
#include <vector>

#include "qamsight/modem.hpp"
#include "qamsight/prbs.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/sigmf.hpp"
#include "qamsight/waveform.hpp"

using namespace qamsight;

namespace {

std::vector<cf32> generate(const WaveformSpec& spec) {
  WaveformGenerator g(spec);
  std::vector<cf32> all;
  for (auto b = g.next_block(); !b.empty(); b = g.next_block()) all.insert(all.end(), b.begin(), b.end());
  return all;
}

// The RRC matched filter evaluated at instant t (samples) straight from the closed form, in double
// (independent of the library's filter bank).
cf64 matched_filter_at(const std::vector<cf32>& x, double t, double sps, double beta, int span) {
  cf64 acc(0.0, 0.0);
  const double half = span * sps / 2.0;
  for (long n = static_cast<long>(std::ceil(t - half)); n <= static_cast<long>(std::floor(t + half)); ++n) {
    if (n < 0 || n >= static_cast<long>(x.size())) continue;
    acc += cf64(x[static_cast<std::size_t>(n)]) * root_raised_cosine_pulse((t - n) / sps, beta);
  }
  return acc / std::sqrt(sps);
}

}  // namespace

TEST_CASE("waveform: the preamble is Gray QPSK from the first 512 bits of PRBS-9", "[waveform]") {
  const auto p = preamble_symbols();
  REQUIRE(p.size() == 256);
  // PRBS-9 from the all-ones seed starts 00 00 01 11 10 11 11 10 00 1... (hand derivation in
  // test_prbs.cpp); QPSK Gray: the first bit picks I (0 -> -, 1 -> +), the second Q.
  const double a = 1.0 / std::sqrt(2.0);
  CHECK(std::abs(cf64(p[0]) - cf64(-a, -a)) < 1e-6);
  CHECK(std::abs(cf64(p[2]) - cf64(-a, a)) < 1e-6);
  CHECK(std::abs(cf64(p[3]) - cf64(a, a)) < 1e-6);
  CHECK(std::abs(cf64(p[4]) - cf64(a, -a)) < 1e-6);
  double energy = 0.0;
  for (auto v : p) energy += std::norm(cf64(v));
  CHECK(energy == Approx(256.0).epsilon(1e-6));
  // Aperiodic autocorrelation: largest sidelobe 0.0672057 of the peak, RMS 0.0309228 (NumPy,
  // np.correlate of this sequence, computed when the preamble was chosen).
  double worst = 0.0, sum = 0.0;
  for (int lag = 1; lag < 256; ++lag) {
    cf64 c(0.0, 0.0);
    for (int k = 0; k + lag < 256; ++k) c += cf64(p[static_cast<std::size_t>(k + lag)]) * std::conj(cf64(p[static_cast<std::size_t>(k)]));
    worst = std::max(worst, std::abs(c) / 256.0);
    sum += 2.0 * std::norm(c) / 65536.0;
  }
  CHECK(worst == Approx(0.06720566614877051).epsilon(1e-6));
  CHECK(std::sqrt(sum / 510.0) == Approx(0.030922765851661236).epsilon(1e-6));
}

TEST_CASE("waveform: frame layout, PRBS payload, lengths", "[waveform]") {
  WaveformSpec s;
  s.modulation = "16qam";
  s.symbols = 10000;
  s.frame.payload_symbols = 1000;
  s.pulse = {4, 0.35, 10};
  s.es_n0_db = 150.0;
  s.lead_samples = 17.0;
  WaveformGenerator g(s);
  CHECK(g.frames() == 8);  // 7 whole frames of 1256 and one of 1208
  CHECK(g.total_samples() == 17 + (10000 + 10) * 4);
  CHECK(g.sample_rate_hz() == 4e6);
  CHECK(generate(s).size() == g.total_samples());
  const auto tx = g.transmitted_symbols();
  REQUIRE(tx.size() == 10000);
  // Preambles at 0, 1256, ...; payload = PRBS-15 bits, 4 per symbol, continuing across frames.
  const auto pre = preamble_symbols();
  PrbsGenerator prbs(PrbsPolynomial::prbs15);
  std::vector<std::uint8_t> bits(4);
  std::vector<cf32> pt(1);
  const auto c = Constellation::from_name("16qam");
  std::size_t bad = 0;
  for (std::size_t k = 0; k < tx.size(); ++k) {
    const std::size_t in_frame = k % 1256;
    if (in_frame < 256) {
      bad += tx[k] != pre[in_frame];
    } else {
      prbs.fill(bits);
      c.map_bits(bits, pt);
      bad += tx[k] != pt[0];
    }
  }
  CHECK(bad == 0);
  const auto ann = g.annotations();
  REQUIRE(ann.size() == 8);
  CHECK(ann[0].label == "frame 0");
  CHECK(ann[1].sample_start == static_cast<std::uint64_t>(std::floor(17 + (5 + 1256) * 4 - 2)));
  CHECK(ann[7].sample_count == 1208u * 4u);
}

TEST_CASE("waveform: symbol instants, fractional timing offset, noiseless", "[waveform]") {
  // The matched filter at symbol_sample(k) returns the transmitted symbol up to the RRC cascade
  // ISI (span 12, roll-off 0.25: -38.3 dB, matched_cascade_isi_power of the pulse module).
  for (double lead : {0.0, 25.0, 13.37}) {
    INFO("lead " << lead);
    WaveformSpec s;
    s.modulation = "qpsk";
    s.symbols = 600;
    s.pulse = {4, 0.25, 12};
    s.es_n0_db = 150.0;
    s.lead_samples = lead;
    WaveformGenerator g(s);
    const auto x = generate(s);
    const auto tx = g.transmitted_symbols();
    double err = 0.0, ref = 0.0;
    for (std::size_t k = 20; k < 580; ++k) {
      const cf64 y = matched_filter_at(x, g.symbol_sample(k), 4.0, 0.25, 12);
      err += std::norm(y - cf64(tx[k]));
      ref += std::norm(cf64(tx[k]));
    }
    CHECK(10.0 * std::log10(err / ref) < -37.5);
    // Half a sample off, the error grows far above that (the check can fail).
    double err_off = 0.0;
    for (std::size_t k = 20; k < 580; ++k) {
      err_off += std::norm(matched_filter_at(x, g.symbol_sample(k) + 0.5, 4.0, 0.25, 12) - cf64(tx[k]));
    }
    CHECK(10.0 * std::log10(err_off / ref) > -25.0);
  }
}

TEST_CASE("waveform: noise calibration N0 = 1/(Es/N0) per sample", "[waveform]") {
  // In the lead (noise only) the mean power is N0; its estimate over n samples is N0 times a
  // chi-square with 2n degrees of freedom over 2n: relative standard deviation 1/sqrt(n);
  // 99.9 % two-sided bound 3.29/sqrt(n) (n = 40000: 1.65 %).
  WaveformSpec s;
  s.es_n0_db = 10.0;
  s.symbols = 2000;
  s.lead_samples = 40000.0;
  const auto x = generate(s);
  double p = 0.0;
  for (std::size_t i = 0; i < 40000; ++i) p += std::norm(cf64(x[i]));
  p /= 40000.0;
  CHECK(std::abs(p / 0.1 - 1.0) < 3.29 / std::sqrt(40000.0));
  // Signal part: power per sample 1/sps + N0 (unit-energy symbols and taps).
  WaveformGenerator g(s);
  CHECK(g.predicted_power() == Approx(0.25 + 0.1));
}

TEST_CASE("waveform: impairments act as configured (CFO, multipath energy)", "[waveform]") {
  // A carrier offset of 1 kHz at a symbol rate of 1 MHz: the phase of the matched-filter output
  // against the transmitted symbols advances by 2 pi 1e-3 per symbol.
  WaveformSpec s;
  s.symbols = 3000;
  s.es_n0_db = 150.0;
  s.impairments.cfo_hz = 1000.0;
  WaveformGenerator g(s);
  const auto x = generate(s);
  const auto tx = g.transmitted_symbols();
  cf64 acc(0.0, 0.0);
  for (std::size_t k = 100; k < 2900; ++k) {
    const cf64 a = matched_filter_at(x, g.symbol_sample(k), 4.0, 0.25, 24) * std::conj(cf64(tx[k]));
    const cf64 b = matched_filter_at(x, g.symbol_sample(k + 1), 4.0, 0.25, 24) * std::conj(cf64(tx[k + 1]));
    acc += b * std::conj(a);
  }
  CHECK(std::arg(acc) == Approx(2.0 * std::numbers::pi * 1e-3).epsilon(1e-3));
  s.impairments = {};
  // Echo of 0.5 at 4 samples (one symbol): the shaped signal's autocorrelation vanishes at a
  // whole symbol (Nyquist), so the power is the tap energy; at 2 samples it is p(1/2) =
  // cos(pi beta / 2) sinc(1/2) / (1 - beta^2) (raised cosine at tau = 1/2), beta = 0.25.
  s.impairments.multipath = {{0, {1.0, 0.0}}, {4, {0.3, 0.4}}};
  CHECK(WaveformGenerator(s).predicted_power() == Approx(0.25 * 1.25 + 1e-15).epsilon(1e-9));
  s.impairments.multipath = {{0, {1.0, 0.0}}, {2, {0.3, 0.4}}};
  const double p_half = std::cos(std::numbers::pi * 0.125) * (2.0 / std::numbers::pi) / (1.0 - 0.0625);
  CHECK(WaveformGenerator(s).predicted_power() == Approx(0.25 * (1.25 + 2.0 * 0.3 * p_half) + 1e-15).epsilon(1e-9));
}

TEST_CASE("waveform: configuration errors name the field", "[waveform]") {
  WaveformSpec s;
  s.pulse.samples_per_symbol = 1;
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
  s = {};
  s.symbols = 100;
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
  s = {};
  s.modulation = "32apsk";
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
  s = {};
  s.impairments.tracker = TrackerMode::on;
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
  s = {};
  s.impairments.pilot_period = 16;
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
  s = {};
  s.impairments.cfo_hz = 3e6;  // beyond fs/2 = 2 MHz
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
  s = {};
  s.lead_samples = -1.0;
  CHECK_THROWS_AS(WaveformGenerator(s), ConfigError);
}

TEST_CASE("waveform: recording files carry every setting; ci16 scaling recorded", "[waveform]") {
  const auto dir = std::filesystem::temp_directory_path() / "qamsight_test_waveform";
  std::filesystem::create_directories(dir);
  WaveformSpec s;
  s.modulation = "64qam";
  s.symbols = 5000;
  s.es_n0_db = 27.5;
  s.seed = 99;
  s.lead_samples = 3.25;
  s.impairments.symbol_rate_hz = 2.5e6;
  s.impairments.cfo_hz = 1234.5;
  s.impairments.iq_gain_db = 0.2;
  s.impairments.multipath = {{0, {1.0, 0.0}}, {2, {0.1, -0.05}}};
  RecordingFileSpec f;
  f.datatype = "ci16_le";
  f.center_frequency_hz = 8.1e9;
  const auto report = write_waveform_recording(s, (dir / "rec").string(), f);
  CHECK(report.clipped_components == 0);
  const Recording r = read_sigmf((dir / "rec").string());
  CHECK(r.sample_rate_hz == 1e7);
  CHECK(r.center_frequency_hz == 8.1e9);
  CHECK(r.samples.size() == WaveformGenerator(s).total_samples());
  const auto g = nlohmann::json::parse(r.global_json);
  CHECK(g.at("core:datatype") == "ci16_le");
  CHECK(g.at("qamsight:modulation") == "64qam");
  CHECK(g.at("qamsight:es_n0_db") == 27.5);
  CHECK(g.at("qamsight:seed") == 99);
  CHECK(g.at("qamsight:impairments").at("cfo_hz") == 1234.5);
  CHECK(g.at("qamsight:impairments").at("iq_gain_db") == 0.2);
  CHECK(g.at("qamsight:impairments").at("multipath").size() == 2);
  CHECK(g.at("qamsight:payload").at("prbs") == "PRBS-15");
  CHECK(g.at("qamsight:integer_scaling").at("headroom_db") == 12.0);
  const double fs = g.at("qamsight:full_scale").get<double>();
  CHECK(fs == Approx(report.full_scale));
  // The per-rail RMS of the file sits 12 dB below full scale (predicted power, measured here).
  double p = 0.0;
  for (auto v : r.samples) p += std::norm(cf64(v));
  p /= static_cast<double>(r.samples.size());
  CHECK(20.0 * std::log10(fs / std::sqrt(p / 2.0)) == Approx(12.0).margin(0.3));
  const auto d = waveform_description(r);
  REQUIRE(d);
  CHECK(d->modulation == "64qam");
  CHECK(d->samples_per_symbol == 4);
  CHECK(d->symbol_rate_hz == 2.5e6);
  CHECK(d->frame.payload_symbols == 3840);
  CHECK(d->frame.payload_prbs == PrbsPolynomial::prbs15);
  CHECK(d->symbol0_sample == Approx(3.25 + 48.0));  // lead + span/2 symbols of 4 samples
}
