// Tests of the sweep's waveform link: noise calibration through the matched filter, ISI loss,
// impairments composing with the receiver's gain control and phase tracker.
#include <catch2/catch.hpp>
#include <cmath>

#include "qamsight/pulse.hpp"
#include "qamsight/sim.hpp"
#include "qamsight/theory.hpp"
#include "reference_tables.hpp"

using namespace qamsight;

namespace {
SweepConfig waveform_sweep() {
  SweepConfig c;
  c.snr_kind = SnrKind::es_n0;
  c.link.pulse.samples_per_symbol = 4;
  c.link.pulse.roll_off = 0.25;
  c.link.pulse.span_symbols = 32;
  c.stop.min_bit_errors = 300;
  c.stop.max_bits = 4'000'000;
  c.threads = 2;
  c.seed = 31;
  return c;
}

void check_inside_theory(const SweepResult& r, double confidence) {
  for (const auto& p : r.points) {
    INFO(p.spec.modulation << " Es/N0 " << p.spec.es_n0_db << " BER " << p.ber << " theory " << p.ber_theory);
    const Interval iv = clopper_pearson(p.counts.bit_errors, p.counts.bits, confidence);
    CHECK(iv.low <= p.ber_theory);
    CHECK(p.ber_theory <= iv.high);
  }
}
}  // namespace

TEST_CASE("oversampled RRC link with a long span follows AWGN theory", "[waveform]") {
  // Noise of N0 per sample and unit-energy taps give Es/N0 at the matched-filter output
  // (derivation in sim.hpp / DEVELOPERS.md); theory: exact Gray BER (theory module).
  // 99.9% intervals on 6 points: false alarm below 0.6% for a random seed; the seed is fixed.
  SweepConfig c = waveform_sweep();
  c.modulations = {"qpsk", "16qam", "64qam"};
  c.snr_db = {8.0, 14.0};
  const auto r = run_sweep(c);
  REQUIRE(r.points.size() == 6);
  check_inside_theory(r, 0.999);
  // Distinct points must see distinct noise levels (guards against stale per-thread runners).
  CHECK(r.points[0].ber > 10 * r.points[1].ber);
}

TEST_CASE("decision-point EVM of the RRC link: noise plus the span's ISI", "[waveform]") {
  // EVM^2 = 1/(Es/N0) + P_isi (independent noise and ISI; data-aided, reference-power
  // normalisation). P_isi computed here by direct convolution of the taps.
  PulseSpec spec;
  spec.roll_off = 0.25;
  spec.span_symbols = 4;  // short span: ISI visible
  spec.samples_per_symbol = 4;
  const auto h = pulse_taps(spec);
  const std::size_t n = h.size();
  std::vector<double> cascade(2 * n - 1, 0.0);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < n; ++j) cascade[i + j] += h[i] * h[j];
  const std::size_t centre = n - 1;
  double isi = 0.0;
  for (std::size_t k = 4; k <= centre; k += 4) isi += 2.0 * cascade[centre + k] * cascade[centre + k];
  isi /= cascade[centre] * cascade[centre];

  SweepConfig c = waveform_sweep();
  c.link.pulse.span_symbols = 4;
  c.modulations = {"16qam"};
  c.snr_db = {20.0};
  c.stop.min_bit_errors = 1'000'000'000;
  c.stop.max_bits = 2'000'000;
  const auto r = run_sweep(c);
  const double expected = 0.01 + isi;
  const double n_sym = double(r.points[0].counts.symbols);
  // The error power of n symbols has relative sd ~ 1/sqrt(n) (Gaussian) plus the ISI term's
  // own spread; 6 sd plus 2% for the cascade's gain at the symbol instant.
  CHECK(std::abs(std::pow(r.points[0].evm.rms(), 2) / expected - 1.0) < 6.0 / std::sqrt(n_sym) + 0.02);
  // The reported ISI loss at this point: 10 log10(1 + P_isi Es/N0).
  qamsight::test::check_close(r.points[0].isi_loss_db, 10 * std::log10(1 + isi * 100.0), 1e-6);
  CHECK(r.points[0].isi_loss_db > 0.05);
}

TEST_CASE("the phase tracker removes a static rotation and follows a small frequency offset", "[waveform]") {
  SweepConfig c = waveform_sweep();
  c.modulations = {"16qam"};
  c.snr_db = {14.0};
  c.link.impairments.phase_deg = 25.0;  // inside the +-45 degree ambiguity of square QAM
  const auto rot = run_sweep(c);
  check_inside_theory(rot, 0.999);
  c.link.impairments.phase_deg = 0.0;
  c.link.impairments.cfo_hz = 100.0;  // 1e-4 of the 1 MHz symbol rate
  const auto cfo = run_sweep(c);
  // A second-order loop has no steady-state phase error for a frequency step (Gardner,
  // Phaselock Techniques); the residual jitter at B_L T = 0.01 costs little, so the BER stays
  // within a factor 1.5 of theory.
  CHECK(cfo.points[0].ber < 1.5 * cfo.points[0].ber_theory);
  c.link.impairments.tracker = TrackerMode::off;
  const auto open = run_sweep(c);
  CHECK(open.points[0].ber > 10 * open.points[0].ber_theory);  // 100 Hz over a frame spins it
}

TEST_CASE("amplifier: deep back-off is transparent, shallow back-off degrades", "[waveform]") {
  SweepConfig c = waveform_sweep();
  c.modulations = {"64qam"};
  c.snr_db = {20.0};
  c.link.impairments.amplifier = AmplifierKind::rapp;
  c.link.impairments.input_backoff_db = 30.0;
  const auto linear = run_sweep(c);
  // 30 dB below saturation a Rapp p = 2 amplifier compresses peaks by < 1e-5 dB: theory holds.
  check_inside_theory(linear, 0.999);
  c.link.impairments.input_backoff_db = 1.0;
  const auto hard = run_sweep(c);
  CHECK(hard.points[0].ber > 3 * hard.points[0].ber_theory);
}

TEST_CASE("waveform link counts are identical for 1 and 2 threads", "[waveform]") {
  SweepConfig c = waveform_sweep();
  c.modulations = {"16qam"};
  c.snr_db = {10.0};
  c.stop.max_bits = 1'000'000;
  c.link.impairments.phase_noise_linewidth_hz = 200.0;
  c.link.impairments.amplifier = AmplifierKind::saleh;
  c.link.impairments.input_backoff_db = 10.0;
  c.threads = 1;
  const auto a = run_sweep(c);
  c.threads = 2;
  const auto b = run_sweep(c);
  CHECK(a.points[0].counts == b.points[0].counts);
  CHECK(a.points[0].evm.error_power == b.points[0].evm.error_power);
}

TEST_CASE("waveform link configuration errors name the field", "[waveform]") {
  LinkConfig l;
  l.pulse.samples_per_symbol = 4;
  l.pulse.roll_off = 1.5;
  CHECK_THROWS_AS(validate(l), ConfigError);
  l.pulse.roll_off = 0.25;
  l.pulse.span_symbols = 2;
  CHECK_THROWS_AS(validate(l), ConfigError);
  l.pulse.span_symbols = 12;
  l.impairments.phase_noise_linewidth_hz = -5.0;
  try {
    validate(l);
    FAIL("no throw");
  } catch (const ConfigError& e) {
    CHECK(e.parameter() == "linewidth_hz");
  }
  l.impairments.phase_noise_linewidth_hz = 0.0;
  l.impairments.adc_bits = 40;
  CHECK_THROWS_AS(validate(l), ConfigError);
}

TEST_CASE("user stages see the oversampled samples of the waveform link", "[waveform]") {
  SweepConfig c = waveform_sweep();
  c.modulations = {"qpsk"};
  c.snr_db = {10.0};
  c.stop.max_bits = 200'000;
  auto st = std::make_shared<UserStage>();
  std::size_t seen_samples = 0, seen_symbols = 0;
  st->serialise = true;
  st->process = [&](const StageInput& in, StageOutput& out) {
    seen_samples = in.samples.size();
    seen_symbols = in.symbols.size();
    std::copy(in.symbols.begin(), in.symbols.end(), out.symbols.begin());
  };
  c.link.stage = st;
  const auto with = run_sweep(c);
  c.link.stage.reset();
  const auto without = run_sweep(c);
  CHECK(with.points[0].counts == without.points[0].counts);
  CHECK(seen_symbols == c.link.frame_symbols);
  CHECK(seen_samples == (c.link.frame_symbols + 2 * 32) * 4);  // warm-up and tail guards of span symbols
}

TEST_CASE("soft phase detector at low Es/N0: QPSK at 3 dB with a tracked rotation follows theory", "[waveform]") {
  // The arg detector slips at this Es/N0 (decision errors near 8 %); the soft detector keeps
  // lock. Theory: exact Gray BER; with B_L T = 0.001 its jitter, N0 B_L T / gain, about 7e-4
  // rad^2, adds about 0.31 phi^2 = 2e-4 to the BER (second-order expansion of
  // Q(sqrt(Es/N0) (cos phi -+ sin phi))), inside the 99.9% interval of 4e6 bits.
  SweepConfig c = waveform_sweep();
  c.modulations = {"qpsk"};
  c.snr_db = {3.0};
  c.stop.min_bit_errors = 1'000'000'000;
  c.stop.max_bits = 4'000'000;
  c.link.impairments.phase_deg = 20.0;
  c.link.impairments.tracker_detector = PhaseDetector::soft;
  c.link.impairments.tracker_bandwidth = 0.001;
  check_inside_theory(run_sweep(c), 0.999);
  // At the default bandwidth the soft detector's jitter costs a little; the arg detector loses
  // lock often and is far worse (measured: 0.083 against 0.143, theory 0.079).
  c.link.impairments.tracker_bandwidth = 0.01;
  const double soft = run_sweep(c).points[0].ber;
  c.link.impairments.tracker_detector = PhaseDetector::arg;
  const auto arg = run_sweep(c).points[0];
  INFO("soft " << soft << ", arg " << arg.ber << ", theory " << arg.ber_theory);
  CHECK(soft < 1.1 * arg.ber_theory);
  CHECK(arg.ber > 1.5 * arg.ber_theory);
}
