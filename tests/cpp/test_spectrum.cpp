// Tests of the spectrum module: windows, Welch PSD against SciPy, tones, noise, OBW, ACPR, masks.
#include <boost/math/distributions/chi_squared.hpp>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdlib>
#include <map>
#include <numbers>
#include <vector>

#include "qamsight/spectrum.hpp"
#include "reference_tables.hpp"

using namespace qamsight;
using qamsight::test::check_close;

namespace {

std::vector<cf32> tone(std::size_t n, double amplitude, double cycles_per_sample, double phase = 0.3) {
  std::vector<cf32> x(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double a = 2.0 * std::numbers::pi * cycles_per_sample * static_cast<double>(i) + phase;
    x[i] = cf32(static_cast<float>(amplitude * std::cos(a)), static_cast<float>(amplitude * std::sin(a)));
  }
  return x;
}

// A sum of tones on bin centres of an N-point grid (bin index b in -N/2..N/2-1, power p each).
std::vector<cf32> bin_tones(std::size_t length, std::size_t n, const std::map<int, double>& power) {
  std::vector<cf64> acc(length);
  double phase = 0.1;
  for (const auto& [bin, p] : power) {
    phase += 2.399;  // spread phases so the tones do not add up in one sample
    for (std::size_t i = 0; i < length; ++i) {
      acc[i] +=
          std::polar(std::sqrt(p), 2.0 * std::numbers::pi * bin * static_cast<double>(i % n) / n + phase);
    }
  }
  std::vector<cf32> x(length);
  for (std::size_t i = 0; i < length; ++i) x[i] = cf32(acc[i]);
  return x;
}

WindowKind window_of_scipy(const std::string& name) {
  if (name == "boxcar") return WindowKind::rectangular;
  if (name == "hann") return WindowKind::hann;
  if (name == "blackmanharris") return WindowKind::blackman_harris4;
  if (name == "flattop") return WindowKind::flat_top;
  FAIL("unknown window " << name);
  return WindowKind::rectangular;
}

}  // namespace

TEST_CASE("window figures of merit match Harris 1978 Table I", "[spectrum]") {
  // F. J. Harris, Proc. IEEE 66(1), 1978, Table I (two decimals there; from memory):
  // ENBW bins, coherent gain, scalloping loss dB.
  struct Row {
    WindowKind kind;
    double enbw, gain, scallop;
  };
  for (const Row& r :
       {Row{WindowKind::rectangular, 1.00, 1.00, 3.92}, Row{WindowKind::hann, 1.50, 0.50, 1.42},
        Row{WindowKind::blackman_harris4, 2.00, 0.36, 0.83}}) {
    const WindowProperties p = window_properties(r.kind, 4096);
    INFO(window_name(r.kind));
    CHECK(p.enbw_bins == Approx(r.enbw).margin(0.006));
    CHECK(p.coherent_gain == Approx(r.gain).margin(0.006));
    CHECK(p.scalloping_loss_db == Approx(r.scallop).margin(0.006));
  }
}

TEST_CASE("window figures of merit match SciPy's windows", "[spectrum]") {
  // tests/reference/welch_table.csv "window" rows: scipy.signal.get_window (periodic).
  const auto rows = test::read_csv(test::source_path("tests/reference/welch_table.csv"));
  int checked = 0;
  for (const auto& r : rows) {
    if (r[0] != "window") continue;
    const auto n = static_cast<std::size_t>(std::stoul(r[2]));
    const WindowProperties p = window_properties(window_of_scipy(r[4]), n);
    INFO(r[4] << " N=" << n);
    check_close(p.enbw_bins, std::stod(r[10]), 1e-12);
    check_close(p.coherent_gain, std::stod(r[11]), 1e-12);
    check_close(p.scalloping_loss_db, std::stod(r[12]), 1e-9);
    ++checked;
  }
  CHECK(checked == 12);
}

TEST_CASE("Welch PSD equals scipy.signal.welch on the reference signal", "[spectrum]") {
  // tests/reference/make_welch_table.py: scipy.signal.welch(..., detrend=False,
  // return_onesided=False), fftshifted. Tolerance 1e-6 relative (double FFTs on both sides
  // agree to ~1e-12; the margin only allows for other FFT libraries' rounding).
  const auto sig = test::read_csv(test::source_path("tests/reference/welch_signal.csv"));
  std::vector<cf32> x;
  for (std::size_t i = 1; i < sig.size(); ++i) {
    x.emplace_back(std::strtof(sig[i][1].c_str(), nullptr), std::strtof(sig[i][2].c_str(), nullptr));
  }
  REQUIRE(x.size() == 2500);
  const auto rows = test::read_csv(test::source_path("tests/reference/welch_table.csv"));
  std::map<int, std::vector<const std::vector<std::string>*>> cases;
  for (const auto& r : rows)
    if (r[0] == "psd") cases[std::stoi(r[1])].push_back(&r);
  REQUIRE(cases.size() == 6);
  for (const auto& [id, bins] : cases) {
    const auto& first = *bins.front();
    const auto n = static_cast<std::size_t>(std::stoul(first[2]));
    const auto noverlap = static_cast<double>(std::stoul(first[3]));
    WelchConfig cfg{.fft_size = n,
                    .overlap = noverlap / static_cast<double>(n),
                    .window = window_of_scipy(first[4]),
                    .sample_rate_hz = std::stod(first[5])};
    WelchEstimator est(cfg);
    REQUIRE(est.hop() == n - static_cast<std::size_t>(noverlap));
    // Feed in uneven chunks: streaming must not change the segments.
    std::size_t pos = 0, chunk = 1;
    while (pos < x.size()) {
      const std::size_t take = std::min(chunk, x.size() - pos);
      est.add(std::span<const cf32>(x).subspan(pos, take));
      pos += take;
      chunk = chunk * 3 + 1;
    }
    const Spectrum s = first[6] == "density" ? est.psd() : est.power_per_bin();
    REQUIRE(s.size() == n);
    REQUIRE(bins.size() == n);
    double worst = 0.0;
    for (const auto* row : bins) {
      const auto k = static_cast<std::size_t>(std::stoul((*row)[7]));
      CHECK(s.frequency_hz[k] == Approx(std::stod((*row)[8])).epsilon(1e-12).margin(1e-9));
      const double ref = std::stod((*row)[9]);
      worst = std::max(worst, std::abs(s.values[k] - ref) / ref);
    }
    INFO("case " << id << " worst relative difference " << worst);
    CHECK(worst < 1e-6);
  }
}

TEST_CASE("flat-top power per bin recovers a tone's power and frequency", "[spectrum]") {
  // Harris 1978: a flat-top window reads a tone's amplitude without scalloping loss; here the
  // window's worst case is < 0.01 dB, the check allows 0.05 dB. Frequencies from on-bin to
  // half a bin off.
  const std::size_t n = 512;
  const double fs = 2.0e6, amplitude = 0.37;
  for (double frac : {0.0, 0.13, 0.25, 0.5, 0.77}) {
    const double cycles = (61.0 + frac) / n;  // bin 61 + frac
    const auto x = tone(20 * n, amplitude, cycles);
    WelchEstimator est({.fft_size = n, .overlap = 0.5, .window = WindowKind::flat_top, .sample_rate_hz = fs});
    est.add(x);
    const Spectrum s = est.power_per_bin();
    const SpectralPeak peak = spectral_peak(s);
    INFO("offset " << frac << " bin, peak " << peak.value);
    CHECK(std::abs(linear_to_db(peak.value / (amplitude * amplitude))) < 0.05);
    CHECK(std::abs(peak.frequency_hz - cycles * fs) <= s.bin_spacing_hz);
    // Total power (Parseval): the tone's power, to float rounding of the samples.
    check_close(total_power(s), amplitude * amplitude, 1e-5);
  }
}

TEST_CASE("Parseval: sum of the PSD times df is the windowed mean power", "[spectrum]") {
  // Parseval's theorem for the DFT, sum_k |X_k|^2 = N sum_n |w_n x_n|^2, makes
  // sum(psd) df = (1/K) sum_segments sum_n w_n^2 |x_n|^2 / sum w^2 exactly, for any signal;
  // with the rectangular window that is the plain mean power of the samples used.
  RandomStream rs(7, 0, Substream::user);
  std::vector<cf32> x(10000);
  rs.fill_complex_gaussian(x, 2.5);
  for (std::size_t i = 0; i < x.size(); ++i) x[i] += cf32(0.4f * std::cos(0.01f * i), 0.0f);
  for (WindowKind w : {WindowKind::rectangular, WindowKind::hann, WindowKind::blackman_harris4}) {
    const std::size_t n = 1000;
    const double fs = 5e3;
    WelchEstimator est({.fft_size = n, .overlap = 0.3, .window = w, .sample_rate_hz = fs});
    est.add(x);
    const auto win = window_coefficients(w, n);
    double w2 = 0.0;
    for (double v : win) w2 += v * v;
    double expected = 0.0;
    std::size_t k = 0;
    for (std::size_t start = 0; start + n <= x.size(); start += est.hop(), ++k) {
      for (std::size_t i = 0; i < n; ++i) expected += win[i] * win[i] * std::norm(cf64(x[start + i]));
    }
    expected /= static_cast<double>(k) * w2;
    REQUIRE(est.segments() == k);
    const Spectrum s = est.psd();
    double sum = 0.0;
    for (double v : s.values) sum += v;
    INFO(window_name(w));
    check_close(sum * s.bin_spacing_hz, expected, 1e-11);
    check_close(total_power(s), expected, 1e-11);
    check_close(total_power(est.power_per_bin()), expected, 1e-11);
  }
}

TEST_CASE("complex white noise has a flat PSD of s^2/fs", "[spectrum]") {
  // Circular complex Gaussian noise of variance s^2 gives DFT bins that are circular Gaussian
  // with variance s^2 sum(w^2), so each non-overlapped periodogram bin is
  // (s^2/fs) chi^2_2 / 2 and the average of K segments is (s^2/fs) chi^2_{2K} / (2K) exactly.
  // Per-bin bounds are the chi-square 99.9% interval with a Bonferroni split over the N bins
  // (family false-alarm rate 1e-3; quantiles from Boost.Math); with the rectangular window
  // the bins are also independent, so their mean is (s^2/fs) chi^2_{2NK} / (2NK).
  const double variance = 0.8, fs = 1.0e5;
  const std::size_t n = 256, k = 400;
  RandomStream rs(2024, 1, Substream::awgn);
  std::vector<cf32> x(n * k);
  rs.fill_complex_gaussian(x, variance);
  for (WindowKind w : {WindowKind::rectangular, WindowKind::hann}) {
    WelchEstimator est({.fft_size = n, .overlap = 0.0, .window = w, .sample_rate_hz = fs});
    est.add(x);
    REQUIRE(est.segments() == k);
    CHECK(est.equivalent_dof() == Approx(2.0 * k));
    const Spectrum s = est.psd();
    const double level = variance / fs;
    const boost::math::chi_squared bin_dist(2.0 * k);
    const double alpha = 1e-3 / n;
    const double lo = boost::math::quantile(bin_dist, alpha / 2) / (2.0 * k);
    const double hi = boost::math::quantile(boost::math::complement(bin_dist, alpha / 2)) / (2.0 * k);
    double mean = 0.0;
    int outside = 0;
    for (double v : s.values) {
      const double r = v / level;
      if (r < lo || r > hi) ++outside;
      mean += r / n;
    }
    INFO(window_name(w) << ": bins outside [" << lo << ", " << hi << "]: " << outside << ", mean " << mean);
    CHECK(outside == 0);
    if (w == WindowKind::rectangular) {
      const boost::math::chi_squared all(2.0 * n * k);
      CHECK(mean >= boost::math::quantile(all, 5e-4) / (2.0 * n * k));
      CHECK(mean <= boost::math::quantile(boost::math::complement(all, 5e-4)) / (2.0 * n * k));
    }
  }
}

TEST_CASE("equivalent degrees of freedom with overlap follow the window correlation", "[spectrum]") {
  // nu = 2K / (1 + 2 sum (1 - m/K) rho(m)^2) (Percival and Walden 1993, eq. 292b; from memory)
  // with the overlap correlations of Harris 1978 Table I: rho = 16.7% for Hann at 50% overlap
  // (exactly 1/6 for the periodic window), 50% for the rectangle at 50%.
  const std::size_t n = 64;
  std::vector<cf32> x(n * 20);
  WelchEstimator hann({.fft_size = n, .overlap = 0.5, .window = WindowKind::hann});
  hann.add(x);
  const double k = static_cast<double>(hann.segments());
  REQUIRE(k == 39);
  CHECK(hann.equivalent_dof() == Approx(2 * k / (1 + 2 * (1 - 1 / k) / 36.0)).epsilon(1e-12));
  WelchEstimator rect({.fft_size = n, .overlap = 0.5, .window = WindowKind::rectangular});
  rect.add(x);
  CHECK(rect.equivalent_dof() == Approx(2 * k / (1 + 2 * (1 - 1 / k) * 0.25)).epsilon(1e-12));
}

TEST_CASE("streaming, merge and reset", "[spectrum]") {
  RandomStream rs(11, 0, Substream::user);
  std::vector<cf32> x(5000);
  rs.fill_complex_gaussian(x, 1.0);
  const WelchConfig cfg{
      .fft_size = 300, .overlap = 0.75, .window = WindowKind::blackman_harris4, .sample_rate_hz = 10.0};
  WelchEstimator whole(cfg), pieces(cfg);
  whole.add(x);
  for (std::size_t i = 0; i < x.size(); i += 7)
    pieces.add(std::span<const cf32>(x).subspan(i, std::min<std::size_t>(7, x.size() - i)));
  REQUIRE(whole.segments() == (5000 - 300) / 75 + 1);
  CHECK(pieces.segments() == whole.segments());
  CHECK(pieces.psd().values == whole.psd().values);

  WelchEstimator a(cfg), b(cfg);
  a.add(std::span<const cf32>(x).first(2000));
  b.add(std::span<const cf32>(x).last(3000));
  const Spectrum sa = a.psd(), sb = b.psd();
  a.merge(b);
  const Spectrum m = a.psd();
  REQUIRE(a.segments() == sa.segments + sb.segments);
  for (std::size_t j = 0; j < m.size(); ++j) {
    CHECK(m.values[j] ==
          Approx((sa.values[j] * sa.segments + sb.values[j] * sb.segments) / (sa.segments + sb.segments))
              .epsilon(1e-12));
  }
  a.reset();
  CHECK(a.segments() == 0);
  CHECK(std::isnan(a.psd().values[0]));
  WelchEstimator other(
      {.fft_size = 300, .overlap = 0.5, .window = WindowKind::blackman_harris4, .sample_rate_hz = 10.0});
  CHECK_THROWS_AS(a.merge(other), ConfigError);
}

TEST_CASE("occupied bandwidth of a flat band", "[spectrum]") {
  // Symmetric-tail occupied bandwidth (ITU RR No. 1.153, beta/2 = 0.5%; from memory): for a
  // spectrum flat over [a, b] and zero elsewhere the limits are a + 0.005 (b - a) and
  // b - 0.005 (b - a). Tones on bin centres with the rectangular window make such a spectrum
  // exactly (no leakage), each tone filling its bin [f - df/2, f + df/2].
  const std::size_t n = 1024;
  const double fs = 1.024e6, df = fs / n;
  for (const auto& [first, last] : {std::pair{-100, 100}, std::pair{40, 300}}) {
    std::map<int, double> p;
    for (int b = first; b <= last; ++b) p[b] = 1e-3;
    WelchEstimator est(
        {.fft_size = n, .overlap = 0.0, .window = WindowKind::rectangular, .sample_rate_hz = fs});
    est.add(bin_tones(4 * n, n, p));
    const OccupiedBandwidth o = occupied_bandwidth(est.psd());
    const double a = (first - 0.5) * df, b = (last + 0.5) * df;
    INFO("band " << a << " to " << b);
    CHECK(o.lower_hz == Approx(a + 0.005 * (b - a)).epsilon(1e-5));
    CHECK(o.upper_hz == Approx(b - 0.005 * (b - a)).epsilon(1e-5));
    CHECK(o.bandwidth_hz == Approx(0.99 * (b - a)).epsilon(1e-5));
    CHECK(o.total_power == Approx(1e-3 * p.size()).epsilon(1e-5));
    const OccupiedBandwidth h = occupied_bandwidth(est.psd(), 0.5);
    CHECK(h.bandwidth_hz == Approx(0.5 * (b - a)).epsilon(1e-5));
  }
  CHECK_THROWS_AS(occupied_bandwidth(WelchEstimator({}).psd(), 1.0), ConfigError);
  CHECK(std::isnan(occupied_bandwidth(WelchEstimator({}).psd()).bandwidth_hz));
}

TEST_CASE("adjacent-channel power ratio of a signal with known adjacent bands", "[spectrum]") {
  // ACPR = adjacent-channel power / main-channel power, each integrated over the channel
  // bandwidth (common practice). Flat multitone bands on bin centres: main channel 41 tones of
  // 1e-2, upper adjacent 41 tones of 1e-5 (-30 dB), lower adjacent 20 tones of 1e-6 (-43.1 dB).
  const std::size_t n = 2048;
  const double fs = 2.048e6, df = fs / n;  // 1 kHz bins
  std::map<int, double> p;
  for (int b = -20; b <= 20; ++b) p[b] = 1e-2;
  for (int b = 80; b <= 120; ++b) p[b] = 1e-5;
  for (int b = -110; b < -90; ++b) p[b] = 1e-6;
  WelchEstimator est(
      {.fft_size = n, .overlap = 0.0, .window = WindowKind::rectangular, .sample_rate_hz = fs});
  est.add(bin_tones(3 * n, n, p));
  // Channels 50 kHz wide at 100 kHz spacing: edges at +-25 kHz, fall in empty bins.
  const AdjacentChannelPower r =
      adjacent_channel_power(est.psd(), {.bandwidth_hz = 50e3, .spacing_hz = 100e3});
  CHECK(r.main_power == Approx(41 * 1e-2).epsilon(1e-5));
  CHECK(r.upper_db == Approx(linear_to_db(41e-5 / 41e-2)).margin(1e-4));
  CHECK(r.lower_db == Approx(linear_to_db(20e-6 / 41e-2)).margin(1e-4));
  // A channel edge through the middle of an occupied bin takes half of that bin's power.
  const double half = band_power(est.psd(), 0.0, 20.0 * df);  // bin 0 half, bins 1..19, bin 20 half
  CHECK(half == Approx(20 * 1e-2).epsilon(1e-5));
  CHECK_THROWS_AS(adjacent_channel_power(est.psd(), {.bandwidth_hz = 50e3, .spacing_hz = 1e6}), ConfigError);
  CHECK_THROWS_AS(adjacent_channel_power(est.psd(), {.bandwidth_hz = 0.0, .spacing_hz = 1e5}), ConfigError);
}

TEST_CASE("band power wraps around the periodic spectrum", "[spectrum]") {
  // A hand-made density of 4 bins at fs = 4 Hz: bins centred -2, -1, 0, 1 Hz, width 1 Hz.
  Spectrum s;
  s.frequency_hz = {-2, -1, 0, 1};
  s.values = {1, 2, 3, 4};
  s.sample_rate_hz = 4;
  s.bin_spacing_hz = 1;
  CHECK(band_power(s, -2.5, 1.5) == Approx(10));
  CHECK(band_power(s, -0.25, 0.25) == Approx(1.5));
  CHECK(band_power(s, 1.0, 2.0) == Approx(0.5 * 4 + 0.5 * 1));  // across +fs/2 into bin -2
  CHECK_THROWS_AS(band_power(s, 1.0, 0.0), ConfigError);
}

TEST_CASE("spectral mask verdicts", "[spectrum]") {
  // Hand-made density: in-band 1e-3 for |f| <= 2 Hz, a spur of 1e-6 at +3 Hz (-30 dBc), floor
  // 1e-9 (-60 dBc) elsewhere. Mask: 0 dBc to 2.5 Hz, step to -40 dBc out to 8 Hz, sloping to
  // -50 dBc at 10 Hz.
  Spectrum s;
  s.sample_rate_hz = 32;
  s.bin_spacing_hz = 1;
  for (int b = -16; b < 16; ++b) {
    s.frequency_hz.push_back(b);
    s.values.push_back(std::abs(b) <= 2 ? 1e-3 : (b == 3 ? 1e-6 : 1e-9));
  }
  SpectralMask mask{.points = {{0, 0}, {2.5, 0}, {2.5, -40}, {8, -40}, {10, -50}}};
  CHECK(mask_limit_db(mask, 2.5) == -40);  // at a step the lower limit
  CHECK(mask_limit_db(mask, 9) == Approx(-45));
  CHECK(std::isnan(mask_limit_db(mask, 11)));
  MaskVerdict v = mask_check(s, mask);
  CHECK_FALSE(v.pass);
  CHECK(v.worst_margin_db == Approx(-10).margin(1e-9));
  CHECK(v.worst_frequency_hz == 3);
  CHECK(v.reference_db == Approx(-30));
  CHECK(v.bins_checked == 21);  // |f| <= 10
  s.values[16 + 3] = 1e-9;      // remove the spur
  v = mask_check(s, mask);
  CHECK(v.pass);
  CHECK(v.worst_margin_db == Approx(0).margin(1e-9));  // in-band at 0 dBc exactly on the limit
  // Absolute limits in dB/Hz, one-sided.
  SpectralMask abs_mask{
      .points = {{-16, -50}, {-3, -50}}, .reference = MaskReference::absolute, .mirror = false};
  v = mask_check(s, abs_mask);
  CHECK(v.pass);
  CHECK(v.worst_margin_db == Approx(40));
  CHECK(v.bins_checked == 14);
  CHECK_THROWS_AS(mask_check(s, SpectralMask{.points = {{3, 0}, {1, 0}}}), ConfigError);
  CHECK_THROWS_AS(mask_check(s, SpectralMask{.points = {{-1, 0}, {1, 0}}}), ConfigError);
  CHECK_THROWS_AS(mask_check(s, SpectralMask{.points = {{1, 0}}}), ConfigError);
}

TEST_CASE("Welch configuration errors", "[spectrum]") {
  CHECK_THROWS_AS(WelchEstimator({.fft_size = 1}), ConfigError);
  CHECK_THROWS_AS(WelchEstimator({.fft_size = 64, .overlap = 1.0}), ConfigError);
  CHECK_THROWS_AS(WelchEstimator({.fft_size = 64, .overlap = 0.999}), ConfigError);
  CHECK_THROWS_AS(WelchEstimator({.fft_size = 64, .overlap = -0.1}), ConfigError);
  CHECK_THROWS_AS(WelchEstimator({.fft_size = 64, .sample_rate_hz = 0.0}), ConfigError);
  CHECK_THROWS_AS(window_from_name("gauss"), ConfigError);
  CHECK(window_from_name("blackman-harris4") == WindowKind::blackman_harris4);
}
