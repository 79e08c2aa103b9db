// evm: least-squares carrier fit, data-aided and decision-directed EVM / MER measurement.
#include <algorithm>
#include <cmath>
#include <numbers>
#include <string>

#include "qamsight/evm.hpp"
#include "qamsight/fft.hpp"

namespace qamsight {

namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

// S(f) = sum y[n] e^{-j 2 pi f n}. The phasor runs by recursion and is re-anchored on the exact
// value every 512 symbols, so rounding does not build up over long captures.
cf64 rotated_sum(std::span<const cf64> y, double f) {
  const cf64 step = std::polar(1.0, -kTwoPi * f);
  cf64 sum{0.0, 0.0}, p{1.0, 0.0};
  for (std::size_t n = 0; n < y.size(); ++n) {
    if ((n & 511u) == 0) p = std::polar(1.0, -kTwoPi * std::remainder(f * static_cast<double>(n), 1.0));
    sum += y[n] * p;
    p *= step;
  }
  return sum;
}

// Maximises |S(f)| on [lo, hi] by golden-section search (the interval holds one lobe).
double golden_peak(std::span<const cf64> y, double lo, double hi) {
  const double r = (std::sqrt(5.0) - 1.0) / 2.0;
  double a = lo, b = hi;
  double c = b - r * (b - a), d = a + r * (b - a);
  double fc = std::abs(rotated_sum(y, c)), fd = std::abs(rotated_sum(y, d));
  const double tol = 1e-10 / static_cast<double>(std::max<std::size_t>(y.size(), 1));
  for (int it = 0; it < 200 && (b - a) > tol; ++it) {
    if (fc >= fd) {
      b = d, d = c, fd = fc;
      c = b - r * (b - a);
      fc = std::abs(rotated_sum(y, c));
    } else {
      a = c, c = d, fc = fd;
      d = a + r * (b - a);
      fd = std::abs(rotated_sum(y, d));
    }
  }
  return 0.5 * (a + b);
}

// The frequency in [-max_f, max_f] (cycles per sample of y) that maximises |S(f)|: the peak of
// a zero-padded FFT (at least 4 points per bin of the capture), refined by golden section.
double frequency_search(std::span<const cf64> y, double max_f) {
  const std::size_t n = y.size();
  const std::size_t k = fft_good_size(std::max<std::size_t>(4 * n, 16));
  std::vector<cf64> buf(k, cf64{0.0, 0.0});
  std::copy(y.begin(), y.end(), buf.begin());
  const FftPlanD plan(k, FftDirection::forward);
  plan.execute(buf, buf);
  double best = -1.0, f_best = 0.0;
  for (std::size_t i = 0; i < k; ++i) {
    const double f = i < (k + 1) / 2 ? static_cast<double>(i) / static_cast<double>(k)
                                     : (static_cast<double>(i) - static_cast<double>(k)) / static_cast<double>(k);
    if (std::abs(f) > max_f) continue;
    const double m = std::norm(buf[i]);
    if (m > best) best = m, f_best = f;
  }
  const double step = 1.0 / static_cast<double>(k);
  return golden_peak(y, std::max(f_best - step, -max_f), std::min(f_best + step, max_f));
}

std::vector<cf64> products(std::span<const cf32> r, std::span<const cf32> s) {
  std::vector<cf64> y(r.size());
  for (std::size_t i = 0; i < r.size(); ++i) y[i] = cf64(r[i]) * std::conj(cf64(s[i]));
  return y;
}

double power_sum(std::span<const cf32> s) {
  double p = 0.0;
  for (const auto& v : s) p += std::norm(cf64(v));
  return p;
}

// The gain actually divided out, given the fitted one and what the options remove.
cf64 applied_gain(cf64 fitted, const EvmOptions& o) {
  const double m = std::abs(fitted);
  if (!(m > 0.0) || !std::isfinite(m)) return {1.0, 0.0};
  const cf64 phase = o.remove_phase ? fitted / m : cf64{1.0, 0.0};
  return (o.remove_gain ? m : 1.0) * phase;
}

void correct(std::span<const cf32> r, cf64 g, double f, std::vector<cf32>& z) {
  z.resize(r.size());
  const cf64 inv = 1.0 / g;
  const cf64 step = std::polar(1.0, -kTwoPi * f);
  cf64 p{1.0, 0.0};
  for (std::size_t n = 0; n < r.size(); ++n) {
    if ((n & 511u) == 0) p = std::polar(1.0, -kTwoPi * std::remainder(f * static_cast<double>(n), 1.0));
    const cf64 v = cf64(r[n]) * p * inv;
    z[n] = cf32(static_cast<float>(v.real()), static_cast<float>(v.imag()));
    p *= step;
  }
}

// Rotational symmetry order used for the blind start (0: none known).
unsigned symmetry_order(const Constellation& c) {
  switch (c.family()) {
    case ConstellationFamily::square_qam:
      return 4;
    case ConstellationFamily::psk:
      return c.order();
    case ConstellationFamily::bpsk:
      return 2;
    default:
      return 0;
  }
}

void check_options(const EvmOptions& o) {
  require_range_open_low("max_frequency", o.max_frequency, 0.0, 0.5);
  if (o.max_iterations < 1 || o.max_iterations > 1000) {
    throw ConfigError("max_iterations", std::to_string(o.max_iterations), "1 to 1000");
  }
  if (o.remove_frequency && !o.remove_phase) {
    throw ConfigError("remove_frequency", "true", "only together with remove_phase = true");
  }
}

}  // namespace

CarrierFit fit_carrier(std::span<const cf32> received, std::span<const cf32> reference, bool fit_frequency,
                       double max_frequency) {
  if (received.size() < 2) throw ConfigError("received", std::to_string(received.size()) + " symbols", "at least 2");
  if (reference.size() != received.size()) {
    throw ConfigError("reference", std::to_string(reference.size()) + " symbols",
                      "as many as received (" + std::to_string(received.size()) + ")");
  }
  require_range_open_low("max_frequency", max_frequency, 0.0, 0.5);
  const double ps = power_sum(reference);
  if (!(ps > 0.0)) throw ConfigError("reference", "all zero", "symbols with power");
  const auto y = products(received, reference);
  CarrierFit fit;
  fit.frequency = fit_frequency ? frequency_search(y, max_frequency) : 0.0;
  fit.gain = rotated_sum(y, fit.frequency) / ps;
  return fit;
}

EvmMeasurement measure_evm(std::span<const cf32> received, std::span<const cf32> reference,
                           const Constellation& constellation, const EvmOptions& options) {
  check_options(options);
  const std::size_t n = received.size();
  if (n < 2) throw ConfigError("received", std::to_string(n) + " symbols", "at least 2");
  if (options.data_aided && reference.size() != n) {
    throw ConfigError("reference", std::to_string(reference.size()) + " symbols",
                      "as many as received (" + std::to_string(n) + ") for a data-aided measurement");
  }
  if (!options.data_aided && !reference.empty()) {
    throw ConfigError("reference", std::to_string(reference.size()) + " symbols",
                      "empty for a decision-directed measurement");
  }
  const bool fit_any = options.remove_frequency || options.remove_phase || options.remove_gain;

  EvmMeasurement m;
  m.symbols = n;
  m.data_aided = options.data_aided;
  m.normalisation = options.normalisation;
  m.normalisation_power = options.normalisation == EvmNormalisation::peak_power ? constellation.peak_energy()
                                                                                 : constellation.average_energy();
  std::vector<cf32> z, refs;
  cf64 g{1.0, 0.0};
  double f = 0.0;

  if (options.data_aided) {
    if (fit_any) {
      const CarrierFit fit = fit_carrier(received, reference, options.remove_frequency, options.max_frequency);
      g = applied_gain(fit.gain, options);
      f = options.remove_frequency ? fit.frequency : 0.0;
    }
    correct(received, g, f, z);
    refs.assign(reference.begin(), reference.end());
  } else {
    // Blind start, then decisions and fits in turn until the decisions settle.
    const unsigned order = fit_any ? symmetry_order(constellation) : 0;
    cf64 moment{0.0, 0.0};
    for (const auto& p : constellation.points()) moment += std::pow(p, static_cast<int>(std::max(order, 1u)));
    moment /= static_cast<double>(constellation.order());
    if (order > 0 && std::abs(moment) > 1e-9) {
      std::vector<cf64> y(n);
      for (std::size_t i = 0; i < n; ++i) y[i] = std::pow(cf64(received[i]), static_cast<int>(order));
      const double mo = static_cast<double>(order);
      if (options.remove_frequency) f = frequency_search(y, std::min(0.5, mo * options.max_frequency)) / mo;
      const cf64 ratio = rotated_sum(y, mo * f) / static_cast<double>(n) / moment;
      g = applied_gain(std::polar(std::pow(std::abs(ratio), 1.0 / mo), std::arg(ratio) / mo), options);
    } else if (fit_any) {
      const double p = power_sum(received) / static_cast<double>(n);
      g = applied_gain(cf64(std::sqrt(p / constellation.average_energy()), 0.0), options);
    }
    std::vector<std::uint32_t> labels(n), previous;
    refs.resize(n);
    const auto points = constellation.points_f();
    unsigned it = 0;
    while (true) {
      correct(received, g, f, z);
      constellation.slice(z, labels);
      ++it;
      if (!fit_any || labels == previous || it > options.max_iterations) break;
      previous = labels;
      for (std::size_t i = 0; i < n; ++i) refs[i] = points[labels[i]];
      const double ps = power_sum(refs);
      if (!(ps > 0.0)) break;
      const auto y = products(received, refs);
      if (options.remove_frequency) {
        const double w = 2.0 / static_cast<double>(n);
        f = golden_peak(y, std::max(f - w, -options.max_frequency), std::min(f + w, options.max_frequency));
      }
      g = applied_gain(rotated_sum(y, f) / ps, options);
    }
    for (std::size_t i = 0; i < n; ++i) refs[i] = points[labels[i]];
    m.iterations = std::min(it, options.max_iterations);
  }

  double err = 0.0, ref = 0.0, peak = -1.0;
  std::vector<cf32> e(options.keep_error_vectors ? n : 0);
  for (std::size_t i = 0; i < n; ++i) {
    const cf64 d = cf64(z[i]) - cf64(refs[i]);
    const double p = std::norm(d);
    err += p;
    ref += std::norm(cf64(refs[i]));
    if (p > peak) peak = p, m.peak_index = i;
    if (options.keep_error_vectors) e[i] = cf32(static_cast<float>(d.real()), static_cast<float>(d.imag()));
  }
  const double nd = static_cast<double>(n);
  m.gain = g;
  m.frequency_offset = f;
  m.error_power = err / nd;
  m.reference_power = ref / nd;
  m.rms = std::sqrt(m.error_power / m.normalisation_power);
  m.rms_pct = 100.0 * m.rms;
  m.rms_db = 20.0 * std::log10(m.rms);
  const double peak_ratio = std::sqrt(peak / m.normalisation_power);
  m.peak_pct = 100.0 * peak_ratio;
  m.peak_db = 20.0 * std::log10(peak_ratio);
  m.mer_db = 10.0 * std::log10(ref / err);
  if (options.keep_error_vectors) {
    m.corrected = std::move(z);
    m.references = std::move(refs);
    m.error_vectors = std::move(e);
  }
  return m;
}

}  // namespace qamsight
