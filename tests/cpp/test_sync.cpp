// Tests of sync: carrier phase tracker (loop gains and bandwidth, rotation, offset, phase noise).
#include <catch2/catch.hpp>
#include <cmath>
#include <complex>
#include <cstdint>
#include <numbers>
#include <vector>

#include "qamsight/channel.hpp"
#include "qamsight/modem.hpp"
#include "qamsight/sync.hpp"
#include "reference_tables.hpp"

using namespace qamsight;
using qamsight::test::check_close;

namespace {
constexpr double kPi = std::numbers::pi;

std::vector<cf32> random_symbols(const Constellation& c, std::size_t n, std::uint64_t seed) {
  RandomStream rs(seed, 0, Substream::payload);
  std::vector<std::uint32_t> labels(n);
  rs.fill_labels(labels, c.bits_per_symbol());
  std::vector<cf32> s(n);
  c.map_labels(labels, s);
  return s;
}

void add_noise(std::vector<cf32>& x, double es_n0_db, std::uint64_t seed) {
  const AwgnChannel awgn(AwgnConfig{es_n0_db, 1.0});
  RandomStream rs(seed, 0, Substream::awgn);
  awgn.process(rs, x, x);
}

// Linear model of the loop (the update equations with a linear detector), driven either by a
// unit phase step (one Wiener increment) or by a unit detector-noise impulse; returns the sums of
// squares of the residual phase error phi - theta and of the integrator (frequency per update).
struct LoopSums {
  double error_sq = 0.0, omega_sq = 0.0;
};
LoopSums linear_loop_sums(const PhaseLoopGains& g, bool phase_step) {
  LoopSums s;
  double theta = 0.0, omega = 0.0;
  for (int n = 0; n < 400000; ++n) {
    const double phi = phase_step ? 1.0 : 0.0;
    const double noise = (!phase_step && n == 0) ? 1.0 : 0.0;
    const double e = phi - theta;
    const double det = e + noise;
    omega += g.ki * det;
    theta += g.kp * det + omega;
    s.error_sq += phase_step ? e * e : theta * theta;
    s.omega_sq += omega * omega;
  }
  return s;
}

// The tracker's phase estimate theta[n] for every symbol of x.
std::vector<double> tracked_phase(const PhaseTrackerConfig& cfg, const Constellation& c, const std::vector<cf32>& x) {
  PhaseTracker t(cfg, c);
  std::vector<cf32> out(x.size());
  std::vector<double> theta(x.size());
  t.process(x, out, {}, theta);
  return theta;
}

// Mean phase of out against the transmitted symbols over [from, to).
double mean_residual_rad(const std::vector<cf32>& out, const std::vector<cf32>& tx, std::size_t from,
                         std::size_t to) {
  cf64 acc(0, 0);
  for (std::size_t i = from; i < to; ++i) acc += cf64(out[i]) * std::conj(cf64(tx[i]));
  return std::arg(acc);
}

// Noise bandwidth of the tracker measured from its response to a phase step: data-aided (every
// symbol known, so the detector is exactly linear), step of `eps` rad at symbol n0;
// h[n] = (theta[n+1] - theta[n]) / eps per update, B_L T_u = (1/2) sum h^2 (Parseval, one-sided).
double measured_bandwidth(PhaseTrackerConfig cfg, std::size_t update_interval) {
  const auto c = Constellation::from_name("qpsk");
  const std::size_t n0 = 64 * update_interval, n = n0 + 40000 * update_interval;
  const auto tx = random_symbols(c, n, 3);
  std::vector<cf32> x(n), out(n);
  const double eps = 0.1;
  const cf32 rot(static_cast<float>(std::cos(eps)), static_cast<float>(std::sin(eps)));
  for (std::size_t i = 0; i < n; ++i) x[i] = i >= n0 ? tx[i] * rot : tx[i];
  std::vector<double> theta(n);
  PhaseTracker t(cfg, c);
  t.process(x, out, tx, theta);
  double sum = 0.0;
  // Estimates right after each update (symbols n0 + 1 + m U), differenced per update.
  double prev = theta[n0];
  for (std::size_t i = n0 + update_interval; i < n; i += update_interval) {
    const double h = (theta[i] - prev) / eps;
    sum += h * h;
    prev = theta[i];
  }
  return 0.5 * sum;
}
}  // namespace

TEST_CASE("phase loop gains: standard formulas", "[sync]") {
  // Second order (bilinear mapping of the analogue loop, Gardner B_L = (w_n/2)(zeta + 1/(4 zeta))):
  // theta = b / (zeta + 1/(4 zeta)), kp = 4 zeta theta / D, ki = 4 theta^2 / D,
  // D = 1 + 2 zeta theta + theta^2. Values typed independently of the library.
  const double b = 0.01, z = 0.7071;
  const double th = b / (z + 1 / (4 * z)), d = 1 + 2 * z * th + th * th;
  const PhaseLoopGains g = phase_loop_gains(b, z, 2);
  check_close(g.kp, 4 * z * th / d, 1e-14);
  check_close(g.ki, 4 * th * th / d, 1e-14);
  const PhaseLoopGains g1 = phase_loop_gains(b, z, 1);
  check_close(g1.kp, 4 * b / (1 + 2 * b), 1e-14);
  CHECK(g1.ki == 0.0);
  CHECK_THROWS_AS(phase_loop_gains(0.0, z, 2), ConfigError);
  CHECK_THROWS_AS(phase_loop_gains(b, z, 3), ConfigError);
  CHECK_THROWS_AS(phase_loop_gains(b, 0.1, 2), ConfigError);
}

TEST_CASE("phase tracker: measured loop noise bandwidth matches the configured value", "[sync]") {
  // Tolerance 10 % (the design formula is the analogue-loop bandwidth mapped by the bilinear
  // transform; the exact discrete value differs by <1 % at 0.01 and <5 % at 0.05).
  for (unsigned order : {1u, 2u}) {
    for (double b : {0.005, 0.01, 0.02, 0.05}) {
      PhaseTrackerConfig cfg;
      cfg.order = order;
      cfg.loop_bandwidth = b;
      cfg.pilot_period = 1;  // every symbol known
      const double m = measured_bandwidth(cfg, 1);
      INFO("order " << order << ", B_L T " << b << ": measured " << m);
      check_close(m, b, 0.10);
      if (order == 1) check_close(m, b, 1e-6);  // the first-order design is exact
    }
  }
  // Pilots-only loop: one update per P symbols, designed for B_L P T.
  PhaseTrackerConfig cfg;
  cfg.loop_bandwidth = 0.004;
  cfg.pilot_period = 5;
  cfg.decisions_between_pilots = false;
  const double m = measured_bandwidth(cfg, 5);
  INFO("pilots only: measured per update " << m);
  check_close(m, 0.02, 0.10);
}

TEST_CASE("phase tracker: static rotation and frequency offset, zero steady-state error", "[sync]") {
  const auto c = Constellation::from_name("qpsk");
  const std::size_t n = 40000;
  const auto tx = random_symbols(c, n, 5);
  struct Case {
    double rotation_deg, offset_cycles;
  };
  for (const Case k : {Case{30.0, 0.0}, Case{-20.0, 1e-3}, Case{10.0, -2e-3}}) {
    std::vector<cf32> x = tx;
    PhaseRotation(PhaseRotationConfig{k.rotation_deg}).process(x, x);
    FrequencyOffset fo(FrequencyOffsetConfig{k.offset_cycles, 1.0, 0.0});
    fo.process(x, x);
    add_noise(x, 20.0, 6);
    PhaseTrackerConfig cfg;
    cfg.loop_bandwidth = 0.01;
    PhaseTracker t(cfg, c);
    std::vector<cf32> out(n);
    t.process(x, out);
    // Residual after convergence. Per-symbol detector noise variance 1/(2 Es/N0) = 0.005 rad^2,
    // loop-filtered to 2 B_L T x 0.005 (sd 0.57 degrees), averaged over 30000 symbols with
    // ~600 independent loop time constants: sd of the mean < 0.05 degrees; tolerance 0.5 degrees.
    const double res = mean_residual_rad(out, tx, 10000, n) * 180 / kPi;
    INFO("rotation " << k.rotation_deg << " deg, offset " << k.offset_cycles << ": residual " << res);
    CHECK(std::abs(res) < 0.5);
    // Frequency estimate: detector noise of variance 0.005 rad^2 reaches the integrator with
    // sum of squared responses omega_sq; tolerance 5 sd of that (false alarm < 1e-6).
    const double sd_w = std::sqrt(0.005 * linear_loop_sums(t.symbol_gains(), false).omega_sq);
    INFO("frequency estimate " << t.frequency_rad() << ", sd " << sd_w);
    CHECK(std::abs(t.frequency_rad() - 2 * kPi * k.offset_cycles) < 5 * sd_w);
  }
  // First order: the velocity error of a frequency offset dw is dw / kp (phase error before the
  // update; first-order loop steady state), not zero.
  {
    const double dw_cycles = 1e-4;
    std::vector<cf32> x = tx;
    FrequencyOffset fo(FrequencyOffsetConfig{dw_cycles, 1.0, 0.0});
    fo.process(x, x);
    add_noise(x, 30.0, 7);
    PhaseTrackerConfig cfg;
    cfg.order = 1;
    PhaseTracker t(cfg, c);
    std::vector<cf32> out(n);
    t.process(x, out);
    const double expected = 2 * kPi * dw_cycles / t.symbol_gains().kp;
    check_close(mean_residual_rad(out, tx, 10000, n), expected, 0.05);
  }
}

TEST_CASE("phase tracker: Wiener phase noise leaves a finite residual that falls with linewidth", "[sync]") {
  // Linear-loop theory for the residual e[n] = phi[n] - theta[n]: phase increments of variance q
  // pass through (1 - H(z)) / (1 - z^-1), detector noise of variance N0/2 (QPSK, unit energy)
  // through H(z); var = q sum g^2 + (N0/2) sum h^2. The impulse responses are computed here from
  // the loop equations with the formula gains. Tolerance 15 % (records of 2e5 symbols, ~1e4
  // independent loop time constants: statistical sd ~2 %; the detector is linear to ~1 %).
  const auto c = Constellation::from_name("qpsk");
  const double es_n0_db = 25.0, n0 = std::pow(10.0, -es_n0_db / 10.0);
  const double b = 0.02;
  const PhaseLoopGains g = phase_loop_gains(b, 0.7071, 2);
  const double sum_g2 = linear_loop_sums(g, true).error_sq, sum_h2 = linear_loop_sums(g, false).error_sq;
  const std::size_t n = 200000;
  const auto tx = random_symbols(c, n, 12);
  double previous = INFINITY;
  for (double lw_t : {1e-4, 1e-5, 1e-6}) {
    WienerPhaseNoise pn(WienerPhaseNoiseConfig{lw_t, 1.0, 0.0});
    RandomStream rng(21, 0, Substream::phase_noise);
    std::vector<double> phi(n);
    pn.generate(rng, phi);
    std::vector<cf32> x(n);
    for (std::size_t i = 0; i < n; ++i) {
      x[i] = tx[i] * cf32(static_cast<float>(std::cos(phi[i])), static_cast<float>(std::sin(phi[i])));
    }
    add_noise(x, es_n0_db, 22);
    PhaseTrackerConfig cfg;
    cfg.loop_bandwidth = b;
    const std::vector<double> theta = tracked_phase(cfg, c, x);
    double s2 = 0.0;
    std::size_t count = 0;
    for (std::size_t i = 2000; i < n; ++i, ++count) {
      const double e = std::remainder(phi[i] - theta[i], 2 * kPi);
      s2 += e * e;
    }
    const double var = s2 / static_cast<double>(count);
    const double theory = 2 * kPi * lw_t * sum_g2 + 0.5 * n0 * sum_h2;
    INFO("linewidth x T " << lw_t << ": residual var " << var << " rad^2, theory " << theory);
    check_close(var, theory, 0.15);
    CHECK(var < previous);
    previous = var;
  }
}

TEST_CASE("phase tracker: ambiguity, pilot-aided start and pilots-only tracking", "[sync]") {
  const std::size_t n = 30000;
  // Decision-directed QPSK starting 60 degrees off locks to the nearest ambiguity (-30 degrees
  // from the 90-degree lattice): the documented limitation.
  {
    const auto c = Constellation::from_name("qpsk");
    const auto tx = random_symbols(c, n, 31);
    std::vector<cf32> x = tx;
    PhaseRotation(PhaseRotationConfig{60.0}).process(x, x);
    add_noise(x, 25.0, 32);
    PhaseTracker t(PhaseTrackerConfig{}, c);
    std::vector<cf32> out(n);
    t.process(x, out);
    CHECK(std::abs(mean_residual_rad(out, tx, 5000, n) * 180 / kPi - 90.0) < 1.0);
  }
  // A known preamble of 300 symbols resolves it; decisions take over afterwards (16QAM, with a
  // small frequency offset).
  {
    const auto c = Constellation::from_name("16qam");
    const auto tx = random_symbols(c, n, 33);
    std::vector<cf32> x = tx;
    PhaseRotation(PhaseRotationConfig{60.0}).process(x, x);
    FrequencyOffset fo(FrequencyOffsetConfig{2e-5, 1.0, 0.0});
    fo.process(x, x);
    add_noise(x, 28.0, 34);
    PhaseTrackerConfig cfg;
    cfg.preamble_symbols = 300;
    PhaseTracker t(cfg, c);
    std::vector<cf32> out(n);
    // Only the preamble positions of the reference are read; later entries are never used.
    std::vector<cf32> ref(n, cf32(0.0f, 0.0f));
    std::copy(tx.begin(), tx.begin() + 300, ref.begin());
    t.process(x, out, ref);
    CHECK(std::abs(mean_residual_rad(out, tx, 5000, n) * 180 / kPi) < 1.0);
  }
  // Pilots only (every 16th symbol) with 256QAM at 20 dB, where decisions would be unreliable,
  // starting 100 degrees off with a frequency offset.
  {
    const auto c = Constellation::from_name("256qam");
    const auto tx = random_symbols(c, n * 4, 35);
    std::vector<cf32> x = tx;
    PhaseRotation(PhaseRotationConfig{100.0}).process(x, x);
    FrequencyOffset fo(FrequencyOffsetConfig{1e-4, 1.0, 0.0});
    fo.process(x, x);
    add_noise(x, 20.0, 36);
    PhaseTrackerConfig cfg;
    cfg.loop_bandwidth = 0.002;
    cfg.pilot_period = 16;
    cfg.decisions_between_pilots = false;
    PhaseTracker t(cfg, c);
    std::vector<cf32> out(x.size());
    // Chunked calls: pilot positions are counted across calls.
    for (std::size_t i = 0; i < x.size(); i += 1000) {
      t.process(std::span<const cf32>(x).subspan(i, 1000), std::span<cf32>(out).subspan(i, 1000),
                std::span<const cf32>(tx).subspan(i, 1000));
    }
    CHECK(std::abs(mean_residual_rad(out, tx, 40000, x.size()) * 180 / kPi) < 1.0);
    // Detector noise at a pilot d: variance N0 / (2 |d|^2), averaged over the constellation; the
    // per-update integrator W = P omega; tolerance 5 sd.
    double inv_e = 0.0;
    for (const cf64& p : c.points()) inv_e += 1.0 / std::norm(p);
    inv_e /= c.order();
    const double pilot_var = 0.5 * std::pow(10.0, -2.0) * inv_e;
    const double sd_w = std::sqrt(pilot_var * linear_loop_sums(t.pilot_gains(), false).omega_sq) / 16.0;
    INFO("frequency estimate " << t.frequency_rad() << ", sd " << sd_w);
    CHECK(std::abs(t.frequency_rad() - 2 * kPi * 1e-4) < 5 * sd_w);
    CHECK(t.symbols() == x.size());
    t.reset();
    CHECK(t.symbols() == 0);
    CHECK(std::isnan(t.error_rms_rad()));
  }
}

TEST_CASE("phase tracker: configuration errors", "[sync]") {
  const auto c = Constellation::from_name("qpsk");
  PhaseTrackerConfig cfg;
  cfg.loop_bandwidth = 0.2;
  CHECK_THROWS_AS(PhaseTracker(cfg, c), ConfigError);
  cfg = {};
  cfg.order = 3;
  CHECK_THROWS_AS(PhaseTracker(cfg, c), ConfigError);
  cfg = {};
  cfg.decisions_between_pilots = false;  // pilots-only without pilots
  CHECK_THROWS_AS(PhaseTracker(cfg, c), ConfigError);
  cfg.pilot_period = 20;  // B_L P T = 0.2 > 0.1
  CHECK_THROWS_AS(PhaseTracker(cfg, c), ConfigError);
  cfg = {};
  cfg.damping = 10.0;
  CHECK_THROWS_AS(PhaseTracker(cfg, c), ConfigError);
  cfg = {};
  cfg.initial_frequency_rad = 1.0;
  CHECK_THROWS_AS(PhaseTracker(cfg, c), ConfigError);
}

TEST_CASE("soft_symbol: the posterior mean against closed forms and a direct sum", "[sync]") {
  // QPSK (points (+-1 +- j) / sqrt 2) per axis: E[d_I | y] = tanh(sqrt(2) y_I / n0) / sqrt(2)
  // (two-point posterior, per-axis noise n0 / 2; textbook). BPSK: tanh(2 y_I / n0).
  const Constellation qpsk = Constellation::from_name("qpsk"), bpsk = Constellation::from_name("bpsk");
  for (double n0 : {0.05, 0.5, 2.0}) {
    for (double yi : {-1.3, -0.2, 0.0, 0.4, 2.5}) {
      const double yq = 0.7 - yi;
      const cf64 s = soft_symbol(qpsk, {yi, yq}, n0);
      check_close(s.real(), std::tanh(std::sqrt(2.0) * yi / n0) / std::sqrt(2.0), 1e-12, 1e-15);
      check_close(s.imag(), std::tanh(std::sqrt(2.0) * yq / n0) / std::sqrt(2.0), 1e-12, 1e-15);
      const cf64 b = soft_symbol(bpsk, {yi, yq}, n0);
      check_close(b.real(), std::tanh(2.0 * yi / n0), 1e-12, 1e-15);
      CHECK(std::abs(b.imag()) < 1e-15);
    }
  }
  // 16- and 64-QAM (per-axis path) and 8-PSK (full sum) against the definition summed over every
  // point in long double here.
  for (const char* name : {"16qam", "64qam", "8psk"}) {
    const Constellation c = Constellation::from_name(name);
    RandomStream rs(5, 1, Substream::user);
    for (int i = 0; i < 200; ++i) {
      const double n0 = 0.01 + 2.0 * rs.uniform();
      const cf64 y(2.4 * rs.uniform() - 1.2, 2.4 * rs.uniform() - 1.2);
      long double den = 0.0L, nr = 0.0L, ni = 0.0L;
      for (const cf64& p : c.points()) {
        const long double w = std::exp(-static_cast<long double>(std::norm(y - p)) / n0);
        den += w;
        nr += w * p.real();
        ni += w * p.imag();
      }
      const cf64 s = soft_symbol(c, y, n0);
      INFO(name << ": y " << y << ", n0 " << n0);
      check_close(s.real(), static_cast<double>(nr / den), 1e-9, 1e-12);
      check_close(s.imag(), static_cast<double>(ni / den), 1e-9, 1e-12);
    }
  }
}

TEST_CASE("soft phase detector: high-SNR jitter N0 B_L T, below the arg detector's N0 B_L T E[1/|d|^2]", "[sync]") {
  // Linear loop theory (the tracker's noise bandwidth B_L T = (1/2) sum h^2): a detector with
  // noise variance s^2 per update leaves a phase-error variance 2 B_L T s^2. At high SNR the soft
  // detector's error Im(y conj d) has gain E|d|^2 = 1 and noise variance E|d|^2 N0 / 2, so the
  // variance is N0 B_L T; the arg detector's noise is N0 / (2 |d|^2), giving N0 B_L T E[1/|d|^2],
  // with E[1/|d|^2] = (4 / 0.2 + 8 / 1 + 4 / 1.8) / 16 = 1.8889 for unit-energy 16-QAM.
  const Constellation c = Constellation::from_name("16qam");
  const double es_n0_db = 25.0, n0 = std::pow(10.0, -es_n0_db / 10.0), b = 0.01, phase = 0.1;
  const std::size_t n = 1'000'000, skip = 2000;
  const auto tx = random_symbols(c, n, 11);
  std::vector<cf32> rx = tx;
  const cf32 rot(static_cast<float>(std::cos(phase)), static_cast<float>(std::sin(phase)));
  for (auto& v : rx) v *= rot;
  add_noise(rx, es_n0_db, 12);
  double inv = 0.0;
  for (const cf64& p : c.points()) inv += 1.0 / std::norm(p);
  inv /= static_cast<double>(c.points().size());
  check_close(inv, 1.8889, 1e-4);
  for (PhaseDetector det : {PhaseDetector::soft, PhaseDetector::arg}) {
    PhaseTrackerConfig cfg;
    cfg.loop_bandwidth = b;
    cfg.detector = det;
    cfg.noise_variance = n0;
    cfg.initial_phase_rad = phase;
    const std::vector<double> theta = tracked_phase(cfg, c, rx);
    double sq = 0.0;
    for (std::size_t i = skip; i < n; ++i) sq += (theta[i] - phase) * (theta[i] - phase);
    const double var = sq / static_cast<double>(n - skip);
    const double want = n0 * b * (det == PhaseDetector::soft ? 1.0 : inv);
    INFO((det == PhaseDetector::soft ? "soft" : "arg") << ": variance " << var << ", theory " << want);
    check_close(var, want, 0.10);
  }
}

TEST_CASE("soft phase detector: configuration errors name noise_variance", "[sync]") {
  const Constellation c = Constellation::from_name("qpsk");
  PhaseTrackerConfig cfg;
  cfg.detector = PhaseDetector::soft;
  CHECK_THROWS_WITH(PhaseTracker(cfg, c), Catch::Contains("noise_variance"));
  cfg.noise_variance = 0.5;
  PhaseTracker t(cfg, c);
  CHECK_THROWS_WITH(t.set_noise_variance(std::nan("")), Catch::Contains("noise_variance"));
  CHECK_THROWS_WITH(t.set_noise_variance(-1.0), Catch::Contains("noise_variance"));
  cfg.detector = PhaseDetector::arg;
  cfg.noise_variance = 0.0;  // not needed by the arg detector
  CHECK_NOTHROW(PhaseTracker(cfg, c));
}
