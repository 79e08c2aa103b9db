// Tests of the views module: eye-diagram and constellation-density accumulators.
#include <catch2/catch.hpp>
#include <cmath>
#include <numbers>
#include <numeric>
#include <set>
#include <vector>

#include "qamsight/modem.hpp"
#include "qamsight/views.hpp"

using namespace qamsight;

namespace {

// Raised-cosine pulse with p(0) = 1 and zeros at the other symbol instants (J. G. Proakis,
// "Digital Communications", raised-cosine spectrum and pulse), t in symbol periods.
double raised_cosine(double t, double beta) {
  const double pi = std::numbers::pi;
  const auto sinc = [&](double x) { return std::fabs(x) < 1e-12 ? 1.0 : std::sin(pi * x) / (pi * x); };
  const double d = 1.0 - 4.0 * beta * beta * t * t;
  if (std::fabs(d) < 1e-10) return 0.25 * pi * sinc(0.5 / beta);
  return sinc(t) * std::cos(pi * beta * t) / d;
}

// Noiseless BPSK through a raised-cosine pulse at sps samples per symbol; symbol k's decision
// instant is at sample k * sps.
std::vector<float> rc_bpsk(std::size_t symbols, int sps, double beta) {
  RandomStream rs(5, 0, Substream::payload);
  std::vector<std::uint8_t> bits(symbols);
  rs.fill_bits(bits);
  std::vector<float> x(symbols * sps);
  for (std::size_t n = 0; n < x.size(); ++n) {
    const double t = static_cast<double>(n) / sps;
    double v = 0.0;
    const auto k0 = static_cast<long>(t);
    for (long k = std::max(0L, k0 - 40); k <= std::min<long>(symbols - 1, k0 + 40); ++k) {
      v += (bits[k] ? 1.0 : -1.0) * raised_cosine(t - static_cast<double>(k), beta);
    }
    x[n] = static_cast<float>(v);
  }
  return x;
}

double sum(std::span<const double> v) { return std::accumulate(v.begin(), v.end(), 0.0); }

}  // namespace

TEST_CASE("constellation density conserves the symbols inside the extent", "[views]") {
  RandomStream rs(3, 0, Substream::awgn);
  std::vector<cf32> x(50000);
  rs.fill_complex_gaussian(x, 2.0);
  x[10] = cf32(std::nanf(""), 0.0f);
  x[11] = cf32(1.5f, 0.0f);   // upper edge: outside (half-open cells)
  x[12] = cf32(-1.5f, 0.0f);  // lower edge: inside
  ConstellationDensity d({.bins = 64, .extent = 1.5});
  d.add(std::span<const cf32>(x).first(20000));
  d.add(std::span<const cf32>(x).subspan(20000));
  std::uint64_t expected_inside = 0;
  for (const cf32& s : x) {
    if (s.real() >= -1.5f && s.real() < 1.5f && s.imag() >= -1.5f && s.imag() < 1.5f) ++expected_inside;
  }
  const auto counts = d.counts();
  CHECK(std::accumulate(counts.begin(), counts.end(), std::uint64_t{0}) == d.inside());
  CHECK(d.inside() == expected_inside);
  CHECK(d.inside() + d.outside() == x.size());
  CHECK(d.cell_of(x[12]) == 32 * 64 + 0);  // q bin 32 holds 0, i bin 0 holds -1.5
  CHECK(d.cell_of(x[11]) == -1);

  ConstellationDensity a({.bins = 64, .extent = 1.5}), b({.bins = 64, .extent = 1.5});
  a.add(std::span<const cf32>(x).first(7));
  b.add(std::span<const cf32>(x).subspan(7));
  a.merge(b);
  CHECK(std::vector<std::uint64_t>(a.counts().begin(), a.counts().end()) ==
        std::vector<std::uint64_t>(counts.begin(), counts.end()));
  CHECK(a.outside() == d.outside());
  CHECK_THROWS_AS(a.merge(ConstellationDensity({.bins = 32, .extent = 1.5})), ConfigError);
  a.reset();
  CHECK(a.inside() == 0);
}

TEST_CASE("noiseless QPSK occupies exactly four cells", "[views]") {
  // QPSK points (+-1, +-1)/sqrt(2) (unit energy): four distinct cells of any grid whose
  // cells do not straddle them.
  const Constellation qpsk = Constellation::from_name("qpsk");
  std::vector<std::uint32_t> labels(4000);
  RandomStream(9, 0, Substream::payload).fill_labels(labels, 2);
  std::vector<cf32> s(labels.size());
  qpsk.map_labels(labels, s);
  ConstellationDensity d({.bins = 101, .extent = 1.25});
  d.add(s);
  std::set<std::size_t> occupied;
  for (std::size_t i = 0; i < d.counts().size(); ++i)
    if (d.counts()[i] > 0) occupied.insert(i);
  CHECK(occupied.size() == 4);
  CHECK(d.inside() == labels.size());
  // The cell of (+1/sqrt 2, +1/sqrt 2): floor((0.7071 + 1.25) / 2.5 * 101) = 79 on both axes.
  CHECK(occupied.count(79 * 101 + 79) == 1);
  std::size_t label0 = std::count(labels.begin(), labels.end(), 0u);
  CHECK(d.counts()[static_cast<std::size_t>(d.cell_of(qpsk.points_f()[0]))] == label0);
}

TEST_CASE("eye weights conserve one unit per column of each trace", "[views]") {
  RandomStream rs(4, 0, Substream::awgn);
  std::vector<cf32> x(3001);
  rs.fill_complex_gaussian(x, 1.0);
  for (double sps : {8.0, 2.0, 3.3}) {
    EyeDiagram eye({.samples_per_symbol = sps,
                    .decision_offset = 1.7,
                    .time_bins = 50,
                    .amplitude_bins = 40,
                    .amplitude_min = -1.2,
                    .amplitude_max = 1.2});
    eye.add(x);
    INFO("sps " << sps);
    // Traces: decision instants p = 1.7 + m sps with p - sps >= 0 and floor(p + sps) + 1 < 3001.
    std::uint64_t expected = 0;
    for (int m = -10; m < 5000; ++m) {
      const double p = 1.7 + m * sps;
      if (p - sps >= 0.0 && std::floor(p + sps) + 1 < 3001) ++expected;
    }
    CHECK(eye.traces() == expected);
    const double total = static_cast<double>(eye.traces()) * 50;
    for (EyeComponent c : {EyeComponent::in_phase, EyeComponent::quadrature}) {
      CHECK(sum(eye.histogram(c)) + eye.outside(c) == Approx(total).epsilon(1e-12));
      CHECK(eye.outside(c) > 0.0);  // unit-variance noise leaves the +-1.2 extent
    }
  }
}

TEST_CASE("eye cells hold the time the interpolated trace spends in them", "[views]") {
  // One trace of a straight ramp x[n] = -1 + 0.2 n, sps 4, decision instant at sample 4: the
  // trace runs over samples 0..8, so column c (1 sample wide, 8 columns) sweeps amplitudes
  // [-1 + 0.2 c, -0.8 + 0.2 c] at constant speed, and a row's share is its overlap with that
  // interval divided by 0.2.
  std::vector<float> x(10);
  for (int n = 0; n < 10; ++n) x[n] = static_cast<float>(-1.0 + 0.2 * n);
  EyeDiagram eye({.samples_per_symbol = 4,
                  .decision_offset = 4,
                  .time_bins = 8,
                  .amplitude_bins = 8,
                  .amplitude_min = -1,
                  .amplitude_max = 1,
                  .quadrature = false});
  eye.add(x);
  REQUIRE(eye.traces() == 1);
  const auto h = eye.histogram(EyeComponent::in_phase);
  for (int c = 0; c < 8; ++c) {
    const double a0 = static_cast<double>(x[c]), a1 = static_cast<double>(x[c + 1]);
    for (int r = 0; r < 8; ++r) {
      const double r0 = -1 + 0.25 * r, r1 = r0 + 0.25;
      const double expected = std::max(0.0, std::min(a1, r1) - std::max(a0, r0)) / (a1 - a0);
      INFO("column " << c << " row " << r);
      CHECK(h[r * 8 + c] == Approx(expected).margin(1e-6));
    }
  }
  CHECK(eye.histogram(EyeComponent::quadrature).empty());
  CHECK(eye.column_time(0) == Approx(-1 + 0.125));
  CHECK(eye.row_amplitude(7) == Approx(0.875));
}

TEST_CASE("eye of a noiseless raised-cosine signal is open at the centre", "[views]") {
  // A raised-cosine pulse has no intersymbol interference at the decision instants (Nyquist's
  // criterion; Proakis), so BPSK through it passes exactly +-1 there: the centre column (1/33
  // of a symbol wide, where the signal moves by less than 0.3) holds weight only within 0.3 of
  // +-1 and none inside +-0.5. Half a symbol away the +-1 transitions cross zero, so those
  // columns have weight near 0. Checked at 8 and at 2 samples per symbol (interpolation).
  for (int sps : {8, 2}) {
    const auto x = rc_bpsk(600, sps, 0.35);
    EyeDiagram eye({.samples_per_symbol = static_cast<double>(sps),
                    .decision_offset = 0.0,
                    .time_bins = 33,
                    .amplitude_bins = 100,
                    .amplitude_min = -2,
                    .amplitude_max = 2,
                    .quadrature = false});
    eye.add(x);
    const auto h = eye.histogram(EyeComponent::in_phase);
    const std::size_t centre = 16;  // of 33 columns: t in [-1/33, 1/33]
    REQUIRE(std::fabs(eye.column_time(centre)) < 1e-12);
    double near_levels = 0.0, inner = 0.0, column = 0.0;
    for (std::size_t r = 0; r < 100; ++r) {
      const double a = eye.row_amplitude(r), v = h[r * 33 + centre];
      column += v;
      if (std::fabs(std::fabs(a) - 1.0) < 0.3) near_levels += v;
      if (std::fabs(a) < 0.5) inner += v;
    }
    INFO("sps " << sps);
    CHECK(column == Approx(static_cast<double>(eye.traces())));
    CHECK(inner == 0.0);
    CHECK(near_levels == Approx(column));
    // Column 8 is centred at t = -0.485 symbol periods: transitions pass near zero there.
    double crossing = 0.0;
    for (std::size_t r = 0; r < 100; ++r)
      if (std::fabs(eye.row_amplitude(r)) < 0.2) crossing += h[r * 33 + 8];
    CHECK(crossing > 0.1 * eye.traces());
  }
}

TEST_CASE("eye streaming, merge and reset", "[views]") {
  RandomStream rs(8, 0, Substream::awgn);
  std::vector<cf32> x(2000);
  rs.fill_complex_gaussian(x, 0.5);
  const EyeConfig cfg{
      .samples_per_symbol = 5.5, .decision_offset = 12.25, .time_bins = 40, .amplitude_bins = 30};
  EyeDiagram whole(cfg), pieces(cfg);
  whole.add(x);
  for (std::size_t i = 0; i < x.size(); i += 13)
    pieces.add(std::span<const cf32>(x).subspan(i, std::min<std::size_t>(13, x.size() - i)));
  CHECK(pieces.traces() == whole.traces());
  const auto hw = whole.histogram(EyeComponent::quadrature), hp = pieces.histogram(EyeComponent::quadrature);
  CHECK(std::vector<double>(hw.begin(), hw.end()) == std::vector<double>(hp.begin(), hp.end()));
  EyeDiagram m(cfg);
  m.merge(whole);
  m.merge(pieces);
  CHECK(m.traces() == 2 * whole.traces());
  CHECK(sum(m.histogram(EyeComponent::in_phase)) == Approx(2 * sum(whole.histogram(EyeComponent::in_phase))));
  m.reset();
  CHECK(m.traces() == 0);
  m.add(x);
  CHECK(sum(m.histogram(EyeComponent::in_phase)) == sum(whole.histogram(EyeComponent::in_phase)));
  EyeConfig other = cfg;
  other.time_bins = 41;
  CHECK_THROWS_AS(m.merge(EyeDiagram(other)), ConfigError);
}

TEST_CASE("view configuration errors", "[views]") {
  CHECK_THROWS_AS(EyeDiagram({.samples_per_symbol = 0.5}), ConfigError);
  CHECK_THROWS_AS(EyeDiagram({.time_bins = 4}), ConfigError);
  CHECK_THROWS_AS(EyeDiagram({.amplitude_min = 1.0, .amplitude_max = 1.0}), ConfigError);
  CHECK_THROWS_AS(EyeDiagram({.decision_offset = std::nan("")}), ConfigError);
  CHECK_THROWS_AS(ConstellationDensity({.bins = 1}), ConfigError);
  CHECK_THROWS_AS(ConstellationDensity({.extent = 0.0}), ConfigError);
}
