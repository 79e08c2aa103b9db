// capture_rx: preamble search, timing, carrier, equaliser and PRBS check of recordings; blind mode.
#include "qamsight/capture_rx.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <array>
#include <boost/math/special_functions/beta.hpp>
#include <cmath>
#include <numbers>
#include <optional>

#include "qamsight/channel.hpp"
#include "qamsight/fft.hpp"
#include "qamsight/pulse.hpp"
#include "qamsight/sync.hpp"

namespace qamsight {

namespace {
constexpr double kPi = std::numbers::pi;
constexpr double kTwoPi = 2.0 * std::numbers::pi;

double wrap_pi(double a) noexcept {
  a = std::remainder(a, kTwoPi);
  return a <= -kPi ? a + kTwoPi : a;
}

// Least-squares slope of y against x = 0, 1, ..., n - 1 (scaled by `dx` per step).
double ls_slope(std::span<const double> y, double dx) noexcept {
  const double n = static_cast<double>(y.size());
  if (y.size() < 2) return 0.0;
  const double xm = (n - 1.0) / 2.0;
  double sxy = 0.0, sxx = 0.0, ym = 0.0;
  for (double v : y) ym += v;
  ym /= n;
  for (std::size_t i = 0; i < y.size(); ++i) {
    const double dxi = static_cast<double>(i) - xm;
    sxy += dxi * (y[i] - ym);
    sxx += dxi * dxi;
  }
  return sxy / sxx / dx;
}

// Unwraps phases in place (steps larger than pi are taken as wraps).
void unwrap(std::span<double> phase) noexcept {
  for (std::size_t i = 1; i < phase.size(); ++i) {
    phase[i] = phase[i - 1] + wrap_pi(phase[i] - phase[i - 1]);
  }
}

// Vertex offset of the parabola through (-1, a), (0, b), (1, c), clamped to [-1, 1].
double parabola_vertex(double a, double b, double c) noexcept {
  const double den = a - 2.0 * b + c;
  if (!(den < 0.0)) return 0.0;  // not a maximum
  return std::clamp(0.5 * (a - c) / den, -1.0, 1.0);
}

// The smallest power P in {2, 4, 8, 16, 32} with |E[a^P]| clearly non-zero (the constellation's
// rotational symmetry order), and that moment.
unsigned symmetry_power(const Constellation& c, cf64& moment) {
  for (unsigned p : {2u, 4u, 8u, 16u, 32u}) {
    cf64 m(0.0, 0.0);
    for (const cf64& a : c.points()) m += std::pow(a, static_cast<double>(p));
    m /= static_cast<double>(c.order());
    if (std::abs(m) > 0.05) {
      moment = m;
      return p;
    }
  }
  moment = cf64(1.0, 0.0);
  return 1;
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// InterpolatingMatchedFilter

InterpolatingMatchedFilter::InterpolatingMatchedFilter(double samples_per_symbol, double roll_off, int span_symbols,
                                                       int phases)
    : r_(samples_per_symbol), phases_(phases) {
  require_range("samples_per_symbol", samples_per_symbol, 1.0, 256.0);
  require_range_open_low("roll_off", roll_off, 0.0, 1.0);
  if (span_symbols < 4 || span_symbols > 256 || span_symbols % 2 != 0) {
    throw ConfigError("span_symbols", std::to_string(span_symbols), "even, 4 to 256");
  }
  if (phases < 16 || phases > 4096) throw ConfigError("phases", std::to_string(phases), "16 to 4096");
  half_ = span_symbols * r_ / 2.0;
  m_ = static_cast<std::ptrdiff_t>(std::ceil(half_));
  taps_ = static_cast<std::size_t>(2 * m_ + 2);
  bank_.assign(static_cast<std::size_t>(phases + 1) * taps_, 0.0f);
  const double scale = 1.0 / std::sqrt(r_);
  for (int j = 0; j <= phases; ++j) {
    const double delta = static_cast<double>(j) / phases;
    for (std::size_t k = 0; k < taps_; ++k) {
      const double d = delta + static_cast<double>(m_) - static_cast<double>(k);  // t - n
      if (std::abs(d) <= half_) {
        bank_[static_cast<std::size_t>(j) * taps_ + k] =
            static_cast<float>(root_raised_cosine_pulse(d / r_, roll_off) * scale);
      }
    }
  }
}

cf32 InterpolatingMatchedFilter::at(std::span<const cf32> x, double t) const noexcept {
  const double fl = std::floor(t);
  const double u = (t - fl) * phases_;
  int j = static_cast<int>(u);
  if (j >= phases_) j = phases_ - 1;
  const float f = static_cast<float>(u - j);
  const float* b0 = bank_.data() + static_cast<std::size_t>(j) * taps_;
  const float* b1 = b0 + taps_;
  const std::ptrdiff_t n0 = static_cast<std::ptrdiff_t>(fl) - m_;
  const std::ptrdiff_t len = static_cast<std::ptrdiff_t>(x.size());
  std::ptrdiff_t k0 = 0, k1 = static_cast<std::ptrdiff_t>(taps_);
  if (n0 < 0) k0 = -n0;
  if (n0 + k1 > len) k1 = len - n0;
  float re = 0.0f, im = 0.0f;
  for (std::ptrdiff_t k = k0; k < k1; ++k) {
    const float w = b0[k] + f * (b1[k] - b0[k]);
    const cf32 v = x[static_cast<std::size_t>(n0 + k)];
    re += w * v.real();
    im += w * v.imag();
  }
  return {re, im};
}

void InterpolatingMatchedFilter::sample(std::span<const cf32> x, double t0, double step,
                                        std::span<cf32> out) const noexcept {
  for (std::size_t k = 0; k < out.size(); ++k) out[k] = at(x, t0 + static_cast<double>(k) * step);
}

// ---------------------------------------------------------------------------------------------

std::string_view capture_status_name(CaptureStatus s) noexcept {
  switch (s) {
    case CaptureStatus::measured:
      return "measured";
    case CaptureStatus::no_preamble:
      return "no preamble found";
    case CaptureStatus::too_short:
      return "recording too short";
  }
  return "?";
}

double preamble_detection_threshold(double false_alarm_probability) {
  require_range("false_alarm_probability", false_alarm_probability, 1e-15, 1e-2);
  return boost::math::ibetac_inv(static_cast<double>(kPreambleSegments),
                                 static_cast<double>(kPreambleSymbols - kPreambleSegments), false_alarm_probability);
}

void validate(const CaptureRxConfig& c, double fs) {
  (void)Constellation::from_name(c.modulation);
  require_range_open_low("symbol_rate_hz", c.symbol_rate_hz, 0.0, 1e12);
  require_range_open_low("roll_off", c.roll_off, 0.0, 1.0);
  if (c.span_symbols < 4 || c.span_symbols > 256 || c.span_symbols % 2 != 0) {
    throw ConfigError("span_symbols", std::to_string(c.span_symbols), "even, 4 to 256");
  }
  if (c.frame.payload_symbols < 16 || c.frame.payload_symbols > (std::size_t{1} << 20)) {
    throw ConfigError("payload_symbols", std::to_string(c.frame.payload_symbols), "16 to 1048576");
  }
  require_range("false_alarm_probability", c.false_alarm_probability, 1e-15, 1e-2);
  if (c.equaliser_taps != 0 && (c.equaliser_taps < 3 || c.equaliser_taps > 63 || c.equaliser_taps % 2 == 0)) {
    throw ConfigError("equaliser_taps", std::to_string(c.equaliser_taps), "0 (none) or odd, 3 to 63");
  }
  require_range("equaliser_regularisation", c.equaliser_regularisation, 0.0, 1.0);
  require_range_open_low("tracker_bandwidth", c.tracker_bandwidth, 0.0, 0.1);
  require_range_open_low("timing_bandwidth", c.timing_bandwidth, 0.0, 0.05);
  if (c.blind_settle_symbols > (std::size_t{1} << 20)) {
    throw ConfigError("blind_settle_symbols", std::to_string(c.blind_settle_symbols), "0 to 1048576");
  }
  require_range_open_low("sample_rate_hz", fs, 0.0, 1e12);
  const double r = fs / c.symbol_rate_hz;
  if (!(r >= 1.0 + c.roll_off) || r > 256.0) {
    throw ConfigError("symbol_rate_hz", format_number(c.symbol_rate_hz),
                      "sample rate / (1 + roll-off) = " + format_number(fs / (1.0 + c.roll_off)) +
                          " Hz at most (the signal must be sampled without aliasing), and at least sample rate / 256");
  }
}

// ---------------------------------------------------------------------------------------------

struct CaptureReceiver::Impl {
  Impl(const CaptureRxConfig& c, double sample_rate)
      : cfg(c),
        fs(sample_rate),
        r(sample_rate / c.symbol_rate_hz),
        constellation(Constellation::from_name(c.modulation)),
        mf(sample_rate / c.symbol_rate_hz, c.roll_off, c.span_symbols),
        threshold(preamble_detection_threshold(c.false_alarm_probability)) {
    const auto p = preamble_symbols();
    conj_pre.resize(p.size());
    for (std::size_t k = 0; k < p.size(); ++k) conj_pre[k] = std::conj(p[k]);
    power = symmetry_power(constellation, moment);
    kurtosis = 0.0;
    for (const cf64& a : constellation.points()) kurtosis += std::norm(a) * std::norm(a);
    kurtosis /= constellation.order();
    timing_gains = phase_loop_gains(c.timing_bandwidth, 0.7071, 2);
    // Gardner S-curve slope for unit-energy symbols and the raised-cosine cascade (symbol units):
    // g(mu) = sum_n p(n - 1/2 + mu) [p(n - 1 + mu) - p(n + mu)].
    auto s_curve = [&](double mu) {
      double g = 0.0;
      for (int n = -60; n <= 60; ++n) {
        g += raised_cosine_pulse(n - 0.5 + mu, c.roll_off) *
             (raised_cosine_pulse(n - 1.0 + mu, c.roll_off) - raised_cosine_pulse(n + mu, c.roll_off));
      }
      return g;
    };
    const double h = 1e-4;
    ted_gain = (s_curve(h) - s_curve(-h)) / (2.0 * h);
  }

  // Segment correlations and metric at instant t (symbol 0 of the preamble), by direct evaluation.
  double metric_at(std::span<const cf32> x, double t, std::array<cf64, kPreambleSegments>* segments) const {
    double energy = 0.0, sum = 0.0;
    for (std::size_t s = 0; s < kPreambleSegments; ++s) {
      cf64 acc(0.0, 0.0);
      for (std::size_t l = 0; l < kPreambleSegmentSymbols; ++l) {
        const std::size_t k = s * kPreambleSegmentSymbols + l;
        const cf32 y = mf.at(x, t + static_cast<double>(k) * r);
        energy += std::norm(cf64(y));
        acc += cf64(y) * cf64(conj_pre[k]);
      }
      if (segments) (*segments)[s] = acc;
      sum += std::norm(acc);
    }
    return energy > 0.0 ? sum / (static_cast<double>(kPreambleSegmentSymbols) * energy) : 0.0;
  }

  CaptureMeasurement analyse(std::span<const cf32> x) const;
  CaptureMeasurement analyse_blind(std::span<const cf32> x) const;

  CaptureRxConfig cfg;
  double fs, r;
  Constellation constellation;
  InterpolatingMatchedFilter mf;
  double threshold;
  std::vector<cf32> conj_pre;
  unsigned power = 4;
  cf64 moment{1.0, 0.0};
  double kurtosis = 1.0;
  PhaseLoopGains timing_gains;
  double ted_gain = 0.0;
};

namespace {

// Least-squares (Tikhonov-regularised) FIR fit: rows of the T/2 grid g (row k starts at 2k) onto
// targets; returns the taps w with z_k = sum_j w_j g[2k + j].
std::vector<cf64> fit_equaliser(std::span<const cf32> grid, std::span<const cf32> targets, std::size_t taps,
                                double regularisation) {
  const std::size_t n = targets.size();
  Eigen::MatrixXcd a = Eigen::MatrixXcd::Zero(static_cast<Eigen::Index>(taps), static_cast<Eigen::Index>(taps));
  Eigen::VectorXcd b = Eigen::VectorXcd::Zero(static_cast<Eigen::Index>(taps));
  Eigen::VectorXcd row(static_cast<Eigen::Index>(taps));
  for (std::size_t k = 0; k < n; ++k) {
    for (std::size_t j = 0; j < taps; ++j) row(static_cast<Eigen::Index>(j)) = cf64(grid[2 * k + j]);
    a.noalias() += row.conjugate() * row.transpose();
    b.noalias() += row.conjugate() * cf64(targets[k]);
  }
  const double lambda = regularisation * a.diagonal().real().mean();
  a.diagonal().array() += lambda;
  const Eigen::VectorXcd w = a.ldlt().solve(b);
  return std::vector<cf64>(w.data(), w.data() + w.size());
}

void apply_equaliser(std::span<const cf32> grid, std::span<const cf64> w, std::span<cf32> out) {
  for (std::size_t k = 0; k < out.size(); ++k) {
    cf64 acc(0.0, 0.0);
    for (std::size_t j = 0; j < w.size(); ++j) acc += w[j] * cf64(grid[2 * k + j]);
    out[k] = cf32(acc);
  }
}

// Least-squares complex gain of z against references.
cf64 ls_gain(std::span<const cf32> z, std::span<const cf32> ref) {
  cf64 num(0.0, 0.0);
  double den = 0.0;
  for (std::size_t k = 0; k < z.size(); ++k) {
    num += cf64(z[k]) * std::conj(cf64(ref[k]));
    den += std::norm(cf64(ref[k]));
  }
  return den > 0.0 ? num / den : cf64(1.0, 0.0);
}

// Slope (rad per symbol) of the unwrapped tracker phase.
double phase_slope(std::vector<double> theta) {
  unwrap(theta);
  return ls_slope(theta, 1.0);
}

}  // namespace

CaptureMeasurement CaptureReceiver::Impl::analyse(std::span<const cf32> x) const {
  CaptureMeasurement out;
  out.blind = false;
  out.sample_rate_hz = fs;
  out.symbol_rate_hz = cfg.symbol_rate_hz;
  out.samples_per_symbol = r;
  out.detection_threshold = threshold;
  const std::size_t n_pre = kPreambleSymbols;
  const std::size_t seg = kPreambleSegmentSymbols;
  const double half = mf.half_length();
  const double len = static_cast<double>(x.size());
  if (len < (static_cast<double>(n_pre) + cfg.span_symbols) * r + 4.0) {
    out.status = CaptureStatus::too_short;
    out.message = "recording of " + std::to_string(x.size()) + " samples is shorter than one preamble (" +
                  format_number((static_cast<double>(n_pre) + cfg.span_symbols) * r) + " samples with the filter)";
    return out;
  }

  // 1-2. Matched filter on a grid of Q per symbol and the preamble metric at every position.
  const std::size_t q = 2;
  const double step = r / q;
  const std::size_t grid_len = static_cast<std::size_t>(std::floor((len - 1.0) / step)) + 1;
  std::vector<cf32> y(grid_len);
  mf.sample(x, 0.0, step, y);
  const std::size_t span_grid = (n_pre - 1) * q;
  const std::size_t positions = grid_len > span_grid ? grid_len - span_grid : 0;
  std::vector<double> cum(grid_len);  // per-phase running energy sums
  for (std::size_t i = 0; i < grid_len; ++i) cum[i] = std::norm(cf64(y[i])) + (i >= q ? cum[i - q] : 0.0);
  std::vector<float> metric(positions, 0.0f);
  double best_metric = 0.0;
  for (std::size_t i = 0; i < positions; ++i) {
    const double energy = cum[i + span_grid] - (i >= q ? cum[i - q] : 0.0);
    if (!(energy > 0.0)) continue;
    double sum = 0.0;
    for (std::size_t s = 0; s < kPreambleSegments; ++s) {
      float re = 0.0f, im = 0.0f;
      const cf32* yy = y.data() + i + s * seg * q;
      const cf32* pp = conj_pre.data() + s * seg;
      for (std::size_t l = 0; l < seg; ++l) {
        const cf32 a = yy[l * q], b = pp[l];
        re += a.real() * b.real() - a.imag() * b.imag();
        im += a.real() * b.imag() + a.imag() * b.real();
      }
      sum += static_cast<double>(re) * re + static_cast<double>(im) * im;
    }
    const double m = sum / (static_cast<double>(seg) * energy);
    metric[i] = static_cast<float>(m);
    best_metric = std::max(best_metric, m);
  }
  out.best_metric = best_metric;

  // Peaks: the maximum within one preamble length of the first crossing, then skip past it.
  std::vector<std::size_t> peaks;
  for (std::size_t i = 0; i < positions;) {
    if (metric[i] > threshold) {
      const std::size_t end = std::min(positions, i + n_pre * q);
      std::size_t best = i;
      for (std::size_t j = i; j < end; ++j) {
        if (metric[j] > metric[best]) best = j;
      }
      peaks.push_back(best);
      i = best + n_pre * q;
    } else {
      ++i;
    }
  }
  if (peaks.empty()) {
    out.status = CaptureStatus::no_preamble;
    out.message = "no preamble found: the largest detection metric " + format_number(best_metric) +
                  " stays below the threshold " + format_number(threshold) + " (false-alarm probability " +
                  format_number(cfg.false_alarm_probability) + " per position)";
    return out;
  }

  // 3a. Coarse fractional timing of each peak: parabola through the grid metric.
  std::vector<double> starts;
  for (std::size_t b : peaks) {
    double t = static_cast<double>(b) * step;
    if (b > 0 && b + 1 < positions) t += parabola_vertex(metric[b - 1], metric[b], metric[b + 1]) * step;
    starts.push_back(t);
  }

  const std::size_t frame_len = cfg.frame.frame_symbols();
  const std::size_t taps = cfg.equaliser_taps;
  const std::size_t centre = taps ? (taps - 1) / 2 : 0;
  const unsigned bits = constellation.bits_per_symbol();
  std::vector<cf32> scratch, z, zt, grid, ref, targets;
  std::vector<double> theta, phases;
  std::vector<std::uint32_t> labels;
  std::vector<cf32> decided;
  std::vector<double> noise_powers;
  const auto pre = preamble_symbols();

  for (std::size_t f = 0; f < starts.size(); ++f) {
    // 4. Coarse offset from the segment correlations at the coarse instant (their phases are
    // unaffected by the small timing error left).
    std::array<cf64, kPreambleSegments> cs{};
    (void)metric_at(x, starts[f], &cs);
    cf64 acc(0.0, 0.0);
    for (std::size_t s = 1; s < kPreambleSegments; ++s) acc += cs[s] * std::conj(cs[s - 1]);
    const double w_coarse = std::arg(acc) / static_cast<double>(seg);  // rad per symbol

    // Symbols whose matched-filter support lies inside the recording, up to the next preamble.
    double t0 = starts[f];
    const double last_t = len - 1.0 - half;
    if (last_t < t0) continue;
    std::size_t n = std::min<std::size_t>(frame_len, static_cast<std::size_t>(std::floor((last_t - t0) / r)) + 1);
    if (f + 1 < starts.size()) {
      n = std::min<std::size_t>(n, static_cast<std::size_t>(std::floor((starts[f + 1] - t0) / r + 0.5)));
    }
    if (n < n_pre) {
      out.notes.push_back("preamble at sample " + format_number(t0) + " skipped: only " + std::to_string(n) +
                          " symbols before the end");
      continue;
    }
    const bool truncated = n < frame_len;

    // De-rotate the raw samples around the frame (the matched filter then sees the signal at
    // its nominal band).
    const double margin = half + (static_cast<double>(centre) + 1.0) * r / 2.0 + r;
    const std::size_t lo = static_cast<std::size_t>(std::max(0.0, std::floor(t0 - margin)));
    const std::size_t hi =
        static_cast<std::size_t>(std::min(len - 1.0, std::ceil(t0 + static_cast<double>(n - 1) * r + margin)));
    scratch.resize(hi - lo + 1);
    for (std::size_t m = 0; m < scratch.size(); ++m) {
      const double ph = -w_coarse * (static_cast<double>(lo + m) - t0) / r;
      scratch[m] = cf32(cf64(x[lo + m]) * std::polar(1.0, ph));
    }
    // 3b. Fine timing on the de-rotated samples: a carrier offset would bias it (the pulse's
    // ISI slopes weighted by the preamble's autocorrelation turn into a real, asymmetric term).
    double t_local = t0 - static_cast<double>(lo);
    for (double h : {r / 8.0, r / 32.0}) {
      const double a = metric_at(scratch, t_local - h, nullptr), m0 = metric_at(scratch, t_local, nullptr),
                   c = metric_at(scratch, t_local + h, nullptr);
      t_local += parabola_vertex(a, m0, c) * h;
    }
    t0 = t_local + static_cast<double>(lo);
    const double peak_value = metric_at(scratch, t_local, nullptr);
    if (t0 + static_cast<double>(n - 1) * r > last_t) n = static_cast<std::size_t>(std::floor((last_t - t0) / r)) + 1;
    z.resize(n);
    mf.sample(scratch, t_local, r, z);

    // 5. Preamble least squares: residual offset, gain, noise.
    std::array<double, kPreambleSegments> seg_phase{};
    for (std::size_t s = 0; s < kPreambleSegments; ++s) {
      cf64 d(0.0, 0.0);
      for (std::size_t l = 0; l < seg; ++l) d += cf64(z[s * seg + l]) * cf64(conj_pre[s * seg + l]);
      seg_phase[s] = std::arg(d);
    }
    unwrap(seg_phase);
    const double w_resid = ls_slope(seg_phase, static_cast<double>(seg));
    for (std::size_t k = 0; k < n; ++k) z[k] *= cf32(std::polar(1.0, -w_resid * static_cast<double>(k)));
    const cf64 a = ls_gain(std::span<const cf32>(z.data(), n_pre), pre);
    double resid = 0.0;
    for (std::size_t k = 0; k < n_pre; ++k) resid += std::norm(cf64(z[k]) - a * cf64(pre[k]));
    const double sigma2 = resid / static_cast<double>(n_pre) / std::norm(a);
    const cf32 inv_a = cf32(1.0 / a);
    for (auto& v : z) v *= inv_a;

    // 6. Trim a cut-short frame where the power steps down to the noise (CUSUM change point).
    if (truncated && n > n_pre) {
      const double mid = 0.5 + sigma2;
      double sum = 0.0, best = 0.0;
      std::size_t cut = n_pre;
      for (std::size_t k = n_pre; k < n; ++k) {
        sum += std::norm(cf64(z[k])) - mid;
        if (sum >= best) {
          best = sum;
          cut = k + 1;
        }
      }
      n = cut;
      z.resize(n);
    }

    // 7. Equaliser input grid (T/2), with the same corrections as z.
    std::vector<cf64> w_eq;
    if (taps) {
      grid.resize(2 * (n - 1) + taps);
      for (std::size_t i = 0; i < grid.size(); ++i) {
        const double rel = (static_cast<double>(i) - static_cast<double>(centre)) / 2.0;  // in symbols
        const cf32 v = mf.at(scratch, t_local + rel * r);
        grid[i] = cf32(cf64(v) * std::polar(1.0, -w_resid * rel) / a);
      }
      w_eq = fit_equaliser(grid, pre, taps, cfg.equaliser_regularisation);
      apply_equaliser(grid, w_eq, z);
    }

    // 8. Phase tracking with the preamble as the known start.
    PhaseTrackerConfig tc;
    tc.loop_bandwidth = cfg.tracker_bandwidth;
    tc.preamble_symbols = n_pre;
    PhaseTracker tracker(tc, constellation);
    ref.assign(n, cf32{});
    std::copy(pre.begin(), pre.end(), ref.begin());
    zt.resize(n);
    theta.resize(n);
    tracker.process(z, zt, ref, theta);
    if (taps) {
      // Once more on the whole frame: decisions (re-rotated by the tracked phase) as targets.
      decided.resize(n);
      constellation.slice_points(zt, decided);
      targets.resize(n);
      for (std::size_t k = 0; k < n; ++k) {
        const cf32 d = k < n_pre ? pre[k] : decided[k];
        targets[k] = cf32(cf64(d) * std::polar(1.0, theta[k]));
      }
      w_eq = fit_equaliser(grid, targets, taps, cfg.equaliser_regularisation);
      apply_equaliser(grid, w_eq, z);
      tracker.reset();
      tracker.process(z, zt, ref, theta);
    }
    const double w_fine = phase_slope(theta);

    CaptureFrame fr;
    fr.symbol0_sample = t0;
    fr.metric = peak_value;
    fr.symbols = n;
    fr.cfo_coarse_hz = w_coarse * cfg.symbol_rate_hz / kTwoPi;
    fr.cfo_hz = (w_coarse + w_resid + w_fine) * cfg.symbol_rate_hz / kTwoPi;
    fr.gain = std::abs(a);
    fr.phase_rad = std::arg(a);
    fr.preamble_snr_db = -10.0 * std::log10(sigma2);
    const auto index = static_cast<std::uint32_t>(out.frames.size());
    out.frames.push_back(fr);
    noise_powers.push_back(sigma2);
    for (std::size_t k = n_pre; k < n; ++k) {
      out.received.push_back(zt[k]);
      out.frame_index.push_back(index);
    }
  }

  if (out.frames.empty()) {
    out.status = CaptureStatus::too_short;
    out.message = "preambles found, but none with a whole preamble inside the recording";
    return out;
  }

  // 9. Decisions, PRBS check, references.
  const std::size_t total = out.received.size();
  out.reference.resize(total);
  out.reference_known.assign(total, 0);
  constellation.slice_points(out.received, out.reference);
  if (cfg.prbs_payload && total > 0) {
    labels.resize(total);
    constellation.slice(out.received, labels);
    std::vector<std::uint8_t> rx_bits(total * bits), expected(total * bits);
    constellation.labels_to_bits(labels, rx_bits);
    PrbsCheckerConfig pc;
    pc.polynomial = cfg.frame.payload_prbs;
    pc.polarity = cfg.frame.payload_polarity;
    PrbsChecker checker(pc);
    checker.process(rx_bits, expected);
    out.prbs_checked = true;
    out.prbs_locked = checker.locked();
    out.prbs = checker.counts();
    std::vector<std::uint32_t> known_label(1);
    std::vector<cf32> known_point(1);
    for (std::size_t i = 0; i < total; ++i) {
      std::uint32_t label = 0;
      bool ok = true;
      for (unsigned b = 0; b < bits; ++b) {
        const std::uint8_t e = expected[i * bits + b];
        if (e > 1) {
          ok = false;
          break;
        }
        label = (label << 1) | e;
      }
      if (!ok) continue;
      known_label[0] = label;
      constellation.map_labels(known_label, known_point);
      out.reference[i] = known_point[0];
      out.reference_known[i] = 1;
    }
  }
  // Final least-squares gain per frame against the references.
  for (std::size_t f = 0, i = 0; f < out.frames.size(); ++f) {
    std::size_t j = i;
    while (j < total && out.frame_index[j] == f) ++j;
    if (j > i) {
      const cf32 g = cf32(1.0 / ls_gain(std::span<const cf32>(out.received.data() + i, j - i),
                                        std::span<const cf32>(out.reference.data() + i, j - i)));
      for (std::size_t k = i; k < j; ++k) out.received[k] *= g;
    }
    i = j;
  }

  double cfo = 0.0, coarse = 0.0, noise = 0.0;
  for (std::size_t f = 0; f < out.frames.size(); ++f) {
    cfo += out.frames[f].cfo_hz;
    coarse += out.frames[f].cfo_coarse_hz;
    noise += noise_powers[f];
  }
  const double nf = static_cast<double>(out.frames.size());
  out.cfo_hz = cfo / nf;
  out.cfo_coarse_hz = coarse / nf;
  out.snr_estimate_db = -10.0 * std::log10(noise / nf);
  out.timing_sample = out.frames.front().symbol0_sample;
  out.status = CaptureStatus::measured;
  out.message = std::to_string(out.frames.size()) + (out.frames.size() == 1 ? " frame, " : " frames, ") +
                std::to_string(total) + " payload symbols";
  if (out.prbs_checked && out.prbs.acquisitions == 0) {
    out.notes.push_back("the PRBS checker never locked: the references are the decisions");
  }
  return out;
}

CaptureMeasurement CaptureReceiver::Impl::analyse_blind(std::span<const cf32> x) const {
  CaptureMeasurement out;
  out.blind = true;
  out.sample_rate_hz = fs;
  out.symbol_rate_hz = cfg.symbol_rate_hz;
  out.samples_per_symbol = r;
  const double half = mf.half_length();
  const double len = static_cast<double>(x.size());
  const std::size_t min_symbols = 2 * cfg.blind_settle_symbols + 512;
  if (len < (static_cast<double>(min_symbols) + cfg.span_symbols) * r) {
    out.status = CaptureStatus::too_short;
    out.message = "recording of " + std::to_string(x.size()) + " samples is too short for blind recovery (" +
                  std::to_string(min_symbols) + " symbols at least)";
    return out;
  }

  // 1. Matched filter at the sample rate; spectral line of y^P.
  std::vector<cf32> y(x.size());
  mf.sample(x, 0.0, 1.0, y);
  double mean_power = 0.0;
  for (const auto& v : y) mean_power += std::norm(cf64(v));
  mean_power /= len;
  const std::size_t seg_max = 65536;
  std::size_t nfft = 1;
  while (nfft < std::min<std::size_t>(2 * x.size(), seg_max)) nfft <<= 1;
  const std::size_t seg_len = std::min(nfft, x.size());
  const std::size_t segments = std::max<std::size_t>(1, x.size() / seg_len);
  FftPlanD plan(nfft, FftDirection::forward);
  std::vector<cf64> buf(nfft);
  std::vector<double> spec(nfft, 0.0);
  for (std::size_t s = 0; s < segments; ++s) {
    std::fill(buf.begin(), buf.end(), cf64{});
    for (std::size_t n = 0; n < seg_len; ++n) {
      const double w = 0.5 - 0.5 * std::cos(kTwoPi * (static_cast<double>(n) + 0.5) / static_cast<double>(seg_len));
      buf[n] = w * std::pow(cf64(y[s * seg_len + n]) / std::sqrt(mean_power), static_cast<double>(power));
    }
    plan.execute(buf, buf);
    for (std::size_t k = 0; k < nfft; ++k) spec[k] += std::norm(buf[k]);
  }
  std::size_t kp = 0;
  for (std::size_t k = 1; k < nfft; ++k) {
    if (spec[k] > spec[kp]) kp = k;
  }
  const auto at_bin = [&](std::size_t k) { return std::log(std::max(spec[k % nfft], 1e-300)); };
  const double delta = parabola_vertex(at_bin(kp + nfft - 1), at_bin(kp), at_bin(kp + 1));
  double line = (static_cast<double>(kp) + delta) * fs / static_cast<double>(nfft);
  if (line >= fs / 2.0) line -= fs;
  const double df = line / power;
  out.cfo_coarse_hz = df;

  // De-rotated input (the channel module's frequency-offset block with the opposite offset).
  std::vector<cf32> xd(x.begin(), x.end());
  FrequencyOffset derotate(FrequencyOffsetConfig{-df, fs, 0.0});
  derotate.process(xd, xd);
  const float agc = static_cast<float>(1.0 / std::sqrt(mean_power));

  // 2. Gardner loop, two passes.
  const double t_first = half + r;
  const double t_last = len - 1.0 - half;
  const double kd = ted_gain / (1.0 - cfg.roll_off / 4.0);  // AGC sets the mean power, not the symbol power
  const auto run_loop = [&](double t, double omega, std::vector<cf32>* symbols, std::vector<double>* instants,
                            double& omega_end) {
    double t_prev = t - r;
    cf32 y_prev = agc * mf.at(xd, t_prev);
    while (t <= t_last) {
      const cf32 yk = agc * mf.at(xd, t);
      const cf32 ym = agc * mf.at(xd, 0.5 * (t_prev + t));
      const double e = (std::conj(cf64(ym)) * (cf64(y_prev) - cf64(yk))).real();
      const double d = e / kd;  // lateness in symbols
      if (symbols) symbols->push_back(yk);
      if (instants) instants->push_back(t);
      omega -= timing_gains.ki * d;
      t_prev = t;
      y_prev = yk;
      t += r * (1.0 + omega - timing_gains.kp * d);
    }
    omega_end = omega;
  };
  // Pass 1 converges; a straight line through its instants over the second half (a constant
  // symbol clock) gives the start and period for pass 2, which then runs converged from the start.
  std::vector<double> instants;
  instants.reserve(static_cast<std::size_t>(len / r) + 2);
  double omega_end = 0.0;
  run_loop(t_first, 0.0, nullptr, &instants, omega_end);
  const std::size_t k_half = instants.size() / 2;
  const double period = ls_slope(std::span<const double>(instants.data() + k_half, instants.size() - k_half), 1.0);
  double mean_k = 0.0, mean_t = 0.0;
  for (std::size_t k = k_half; k < instants.size(); ++k) {
    mean_k += static_cast<double>(k);
    mean_t += instants[k];
  }
  mean_k /= static_cast<double>(instants.size() - k_half);
  mean_t /= static_cast<double>(instants.size() - k_half);
  const double intercept = mean_t - period * mean_k;  // instant of symbol k: intercept + k period
  const double t_start = intercept + std::ceil((t_first - intercept) / period) * period;
  std::vector<cf32> z;
  z.reserve(static_cast<std::size_t>(len / r) + 2);
  double omega2 = 0.0;
  run_loop(t_start, period / r - 1.0, &z, nullptr, omega2);
  out.symbol_clock_ppm = (r / period - 1.0) * 1e6;
  const double r_eff = period;
  const std::size_t settle = std::min(cfg.blind_settle_symbols, z.size() / 4);
  z.erase(z.begin(), z.begin() + static_cast<std::ptrdiff_t>(settle));
  out.timing_sample = t_start + static_cast<double>(settle) * r_eff;

  // 3. Gain (M2M4), phase and residual offset (P-th power of blocks), tracker, DD gain.
  double m2 = 0.0, m4 = 0.0;
  for (const auto& v : z) {
    const double p = std::norm(cf64(v));
    m2 += p;
    m4 += p * p;
  }
  m2 /= static_cast<double>(z.size());
  m4 /= static_cast<double>(z.size());
  double s = (2.0 * m2 * m2 - m4) / (2.0 - kurtosis);
  s = s > 0.0 ? std::sqrt(s) : m2;
  s = std::min(s, m2);
  // As an SNR estimate M2M4 is reliable for constant-modulus constellations only: for QAM the
  // sample kurtosis of a finite record differs from E|a|^4 by ~1/sqrt(N), an error that swamps
  // the noise term at high SNR (the gain, which needs only ~1 %, is fine).
  bool constant_modulus = true;
  for (const cf64& a : constellation.points()) constant_modulus = constant_modulus && std::abs(std::norm(a) - 1.0) < 1e-9;
  if (constant_modulus) out.snr_estimate_db = m2 - s > 0.0 ? 10.0 * std::log10(s / (m2 - s)) : 99.0;
  const cf32 g0 = cf32(static_cast<float>(1.0 / std::sqrt(s)), 0.0f);
  for (auto& v : z) v *= g0;
  const std::size_t block = 256;
  const std::size_t blocks = z.size() / block;
  std::vector<cf64> bsum(blocks, cf64{});
  for (std::size_t b = 0; b < blocks; ++b) {
    for (std::size_t k = 0; k < block; ++k) bsum[b] += std::pow(cf64(z[b * block + k]), static_cast<double>(power));
  }
  cf64 acc(0.0, 0.0);
  for (std::size_t b = 1; b < blocks; ++b) acc += bsum[b] * std::conj(bsum[b - 1]);
  const double w_res = blocks > 1 ? std::arg(acc) / (static_cast<double>(power) * block) : 0.0;
  cf64 first(0.0, 0.0);
  for (std::size_t k = 0; k < std::min(block, z.size()); ++k) {
    first += std::pow(cf64(z[k]) * std::polar(1.0, -w_res * static_cast<double>(k)), static_cast<double>(power));
  }
  const double theta0 = wrap_pi((std::arg(first) - std::arg(moment)) / power);
  PhaseTrackerConfig tc;
  tc.loop_bandwidth = cfg.tracker_bandwidth;
  tc.initial_phase_rad = theta0;
  tc.initial_frequency_rad = std::clamp(w_res, -kPi / 8.0, kPi / 8.0);
  PhaseTracker tracker(tc, constellation);
  std::vector<cf32> zt(z.size());
  std::vector<double> theta(z.size());
  tracker.process(z, zt, {}, theta);
  std::vector<cf32> decided(z.size());
  for (int it = 0; it < 2; ++it) {
    constellation.slice_points(zt, decided);
    const cf32 g = cf32(1.0 / ls_gain(zt, decided));
    for (auto& v : zt) v *= g;
  }
  constellation.slice_points(zt, decided);
  out.cfo_hz = df + phase_slope(theta) * cfg.symbol_rate_hz / kTwoPi;
  out.received = std::move(zt);
  out.reference = std::move(decided);
  out.reference_known.assign(out.received.size(), 0);
  out.frame_index.assign(out.received.size(), 0);
  out.status = CaptureStatus::measured;
  out.message = "blind: " + std::to_string(out.received.size()) + " symbols recovered";
  out.notes.push_back("blind mode: decision-directed references (EVM biased low when symbol errors are not rare); "
                      "the constellation's rotational ambiguity is not resolved");
  return out;
}

// ---------------------------------------------------------------------------------------------

CaptureReceiver::CaptureReceiver(const CaptureRxConfig& config, double sample_rate_hz) {
  validate(config, sample_rate_hz);
  impl_ = std::make_unique<Impl>(config, sample_rate_hz);
}
CaptureReceiver::~CaptureReceiver() = default;
CaptureReceiver::CaptureReceiver(CaptureReceiver&&) noexcept = default;
CaptureReceiver& CaptureReceiver::operator=(CaptureReceiver&&) noexcept = default;

const CaptureRxConfig& CaptureReceiver::config() const noexcept { return impl_->cfg; }
const Constellation& CaptureReceiver::constellation() const noexcept { return impl_->constellation; }
double CaptureReceiver::detection_threshold() const noexcept { return impl_->threshold; }
const InterpolatingMatchedFilter& CaptureReceiver::matched_filter() const noexcept { return impl_->mf; }
CaptureMeasurement CaptureReceiver::analyse(std::span<const cf32> samples) const { return impl_->analyse(samples); }
CaptureMeasurement CaptureReceiver::analyse_blind(std::span<const cf32> samples) const {
  return impl_->analyse_blind(samples);
}

}  // namespace qamsight
