// spectrum: Welch PSD estimation, windows, band power, occupied bandwidth, ACPR and mask checks.
#include "qamsight/spectrum.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>

namespace qamsight {

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

struct CosineTerms {
  const double* a;
  std::size_t count;
};

CosineTerms cosine_terms(WindowKind kind) noexcept {
  // Coefficient sources: see WindowKind in spectrum.hpp.
  static constexpr double kRect[] = {1.0};
  static constexpr double kHann[] = {0.5, 0.5};
  static constexpr double kBh4[] = {0.35875, 0.48829, 0.14128, 0.01168};
  static constexpr double kFlat[] = {0.21557895, 0.41663158, 0.277263158, 0.083578947, 0.006947368};
  switch (kind) {
    case WindowKind::rectangular:
      return {kRect, 1};
    case WindowKind::hann:
      return {kHann, 2};
    case WindowKind::blackman_harris4:
      return {kBh4, 4};
    case WindowKind::flat_top:
      return {kFlat, 5};
  }
  return {kRect, 1};
}

void require_spectrum(const Spectrum& s, const char* what) {
  if (s.values.empty() || s.frequency_hz.size() != s.values.size() || !(s.bin_spacing_hz > 0.0) ||
      !std::isfinite(s.bin_spacing_hz)) {
    throw ConfigError(what, "a spectrum with " + std::to_string(s.values.size()) + " values",
                      "a non-empty spectrum with one frequency per value and a bin spacing > 0");
  }
}

// Power of each bin (density times bin width) and its running sum from the lowest edge.
struct Cumulative {
  std::vector<double> power;  // per bin
  std::vector<double> sum;    // sum[j] = power of bins 0..j-1; sum[N] = total
  double low_edge = 0.0;      // lower edge of bin 0
  double df = 1.0;

  explicit Cumulative(const Spectrum& s)
      : power(s.size()),
        sum(s.size() + 1, 0.0),
        low_edge(s.frequency_hz[0] - 0.5 * s.bin_spacing_hz),
        df(s.bin_spacing_hz) {
    for (std::size_t k = 0; k < s.size(); ++k) {
      power[k] = s.density(k) * df;
      sum[k + 1] = sum[k] + power[k];
    }
  }
  double total() const noexcept { return sum.back(); }
  // Integral of the periodic density from low_edge to f.
  double at(double f) const noexcept {
    const double n_bins = static_cast<double>(power.size());
    const double u = (f - low_edge) / df;
    const double periods = std::floor(u / n_bins);
    const double r = u - periods * n_bins;
    auto j = static_cast<std::size_t>(std::max(0.0, std::floor(r)));
    double frac = r - static_cast<double>(j);
    if (j >= power.size()) {  // r rounded up to n_bins
      j = power.size() - 1;
      frac = 1.0;
    }
    return periods * total() + sum[j] + frac * power[j];
  }
  // Smallest frequency in the base period where the integral reaches target (0 < target <= total).
  double inverse(double target) const noexcept {
    const auto it = std::lower_bound(sum.begin() + 1, sum.end(), target);
    const auto j = static_cast<std::size_t>(it - sum.begin()) - 1;
    const double frac = power[j] > 0.0 ? (target - sum[j]) / power[j] : 0.0;
    return low_edge + (static_cast<double>(j) + std::clamp(frac, 0.0, 1.0)) * df;
  }
};

}  // namespace

std::string_view window_name(WindowKind kind) noexcept {
  switch (kind) {
    case WindowKind::rectangular:
      return "rectangular";
    case WindowKind::hann:
      return "hann";
    case WindowKind::blackman_harris4:
      return "blackman-harris4";
    case WindowKind::flat_top:
      return "flat-top";
  }
  return "rectangular";
}

std::string_view window_display_name(WindowKind kind) noexcept {
  switch (kind) {
    case WindowKind::rectangular:
      return "rectangular";
    case WindowKind::hann:
      return "Hann";
    case WindowKind::blackman_harris4:
      return "Blackman-Harris 4-term";
    case WindowKind::flat_top:
      return "flat-top";
  }
  return "rectangular";
}

WindowKind window_from_name(std::string_view name) {
  for (WindowKind k :
       {WindowKind::rectangular, WindowKind::hann, WindowKind::blackman_harris4, WindowKind::flat_top}) {
    if (name == window_name(k)) return k;
  }
  throw ConfigError("window", std::string(name), "rectangular, hann, blackman-harris4, flat-top");
}

std::vector<double> window_coefficients(WindowKind kind, std::size_t size) {
  if (size < 1) throw ConfigError("window size", "0", "1 or more");
  const CosineTerms t = cosine_terms(kind);
  std::vector<double> w(size);
  for (std::size_t n = 0; n < size; ++n) {
    double v = 0.0, sign = 1.0;
    for (std::size_t k = 0; k < t.count; ++k, sign = -sign) {
      // The argument is reduced to [0, 2 pi) in integers so large windows keep full accuracy.
      const std::size_t m = (k * n) % size;
      v += sign * t.a[k] * std::cos(2.0 * std::numbers::pi * static_cast<double>(m) / size);
    }
    w[n] = v;
  }
  return w;
}

WindowProperties window_properties(WindowKind kind, std::size_t size) {
  const std::vector<double> w = window_coefficients(kind, size);
  double sum = 0.0, energy = 0.0;
  cf64 half_bin{0.0, 0.0};
  for (std::size_t n = 0; n < size; ++n) {
    sum += w[n];
    energy += w[n] * w[n];
    half_bin += w[n] * std::polar(1.0, std::numbers::pi * static_cast<double>(n) / size);
  }
  WindowProperties p;
  p.coherent_gain = sum / static_cast<double>(size);
  p.enbw_bins = static_cast<double>(size) * energy / (sum * sum);
  p.scalloping_loss_db = -20.0 * std::log10(std::abs(half_bin) / sum);
  return p;
}

double Spectrum::density(std::size_t k) const noexcept {
  return scaling == SpectrumScaling::density ? values[k] : values[k] / resolution_bandwidth_hz;
}

// ---------------------------------------------------------------------------------------------
// WelchEstimator

namespace {

WelchConfig validated(const WelchConfig& c) {
  require_range("WelchConfig.fft_size", static_cast<double>(c.fft_size), 2.0, 4194304.0);
  require_range("WelchConfig.overlap", c.overlap, 0.0, 1.0);
  const auto shared = static_cast<std::size_t>(std::llround(c.overlap * c.fft_size));
  if (c.overlap >= 1.0 || shared >= c.fft_size) {
    throw ConfigError("WelchConfig.overlap", format_number(c.overlap),
                      "0 <= overlap < 1 leaving a hop of at least one sample");
  }
  require_range_open_low("WelchConfig.sample_rate_hz", c.sample_rate_hz, 0.0, 1e18);
  return c;
}

}  // namespace

WelchEstimator::WelchEstimator(const WelchConfig& config)
    : config_(validated(config)),
      hop_(config_.fft_size - static_cast<std::size_t>(std::llround(config_.overlap * config_.fft_size))),
      window_(window_coefficients(config_.window, config_.fft_size)),
      properties_(window_properties(config_.window, config_.fft_size)),
      plan_(config_.fft_size, FftDirection::forward),
      pending_(config_.fft_size),
      work_(config_.fft_size),
      accumulated_(config_.fft_size, 0.0) {
  for (double w : window_) {
    window_sum_ += w;
    window_energy_ += w * w;
  }
  const std::size_t n = config_.fft_size;
  for (std::size_t shift = hop_; shift < n; shift += hop_) {
    double c = 0.0;
    for (std::size_t i = 0; i + shift < n; ++i) c += window_[i] * window_[i + shift];
    const double rho = c / window_energy_;
    overlap_rho2_.push_back(rho * rho);
  }
}

void WelchEstimator::transform_segment() noexcept {
  const std::size_t n = config_.fft_size;
  for (std::size_t i = 0; i < n; ++i) {
    work_[i] = cf64(pending_[i].real(), pending_[i].imag()) * window_[i];
  }
  plan_.execute(work_, work_);
  for (std::size_t k = 0; k < n; ++k) accumulated_[k] += std::norm(work_[k]);
  ++segments_;
}

void WelchEstimator::add(std::span<const cf32> samples) noexcept {
  const std::size_t n = config_.fft_size;
  while (!samples.empty()) {
    const std::size_t take = std::min(n - filled_, samples.size());
    std::copy_n(samples.begin(), take, pending_.begin() + static_cast<std::ptrdiff_t>(filled_));
    filled_ += take;
    samples = samples.subspan(take);
    if (filled_ == n) {
      transform_segment();
      // The next segment starts hop samples later; what it shares with this one moves down.
      std::copy(pending_.begin() + static_cast<std::ptrdiff_t>(hop_), pending_.end(), pending_.begin());
      filled_ = n - hop_;
    }
  }
}

void WelchEstimator::merge(const WelchEstimator& other) {
  const WelchConfig& o = other.config_;
  if (o.fft_size != config_.fft_size || o.overlap != config_.overlap || o.window != config_.window ||
      o.sample_rate_hz != config_.sample_rate_hz) {
    throw ConfigError("WelchEstimator::merge", "an estimator with another configuration",
                      "the same fft_size, overlap, window and sample_rate_hz");
  }
  for (std::size_t k = 0; k < accumulated_.size(); ++k) accumulated_[k] += other.accumulated_[k];
  segments_ += other.segments_;
}

void WelchEstimator::reset() noexcept {
  std::fill(accumulated_.begin(), accumulated_.end(), 0.0);
  segments_ = 0;
  filled_ = 0;
}

double WelchEstimator::resolution_bandwidth_hz() const noexcept {
  return properties_.enbw_bins * config_.sample_rate_hz / static_cast<double>(config_.fft_size);
}

double WelchEstimator::equivalent_dof() const noexcept {
  const double k = static_cast<double>(segments_);
  if (segments_ == 0) return 0.0;
  double s = 0.0;
  for (std::size_t m = 1; m < segments_ && m <= overlap_rho2_.size(); ++m) {
    s += (1.0 - static_cast<double>(m) / k) * overlap_rho2_[m - 1];
  }
  return 2.0 * k / (1.0 + 2.0 * s);
}

Spectrum WelchEstimator::psd() const { return spectrum(SpectrumScaling::density); }
Spectrum WelchEstimator::power_per_bin() const { return spectrum(SpectrumScaling::power_per_bin); }

Spectrum WelchEstimator::spectrum(SpectrumScaling scaling) const {
  const std::size_t n = config_.fft_size;
  const double fs = config_.sample_rate_hz;
  Spectrum s;
  s.scaling = scaling;
  s.sample_rate_hz = fs;
  s.bin_spacing_hz = fs / static_cast<double>(n);
  s.resolution_bandwidth_hz = resolution_bandwidth_hz();
  s.window = config_.window;
  s.window_properties = properties_;
  s.segments = segments_;
  s.overlap = static_cast<double>(n - hop_) / static_cast<double>(n);
  s.equivalent_dof = equivalent_dof();
  s.frequency_hz.resize(n);
  s.values.resize(n);
  const double denominator =
      static_cast<double>(segments_) *
      (scaling == SpectrumScaling::density ? fs * window_energy_ : window_sum_ * window_sum_);
  const std::size_t half = n / 2;
  for (std::size_t j = 0; j < n; ++j) {
    s.frequency_hz[j] = (static_cast<double>(j) - static_cast<double>(half)) * s.bin_spacing_hz;
    s.values[j] = segments_ == 0 ? kNan : accumulated_[(j + n - half) % n] / denominator;
  }
  return s;
}

// ---------------------------------------------------------------------------------------------
// Measurements on a spectrum

double band_power(const Spectrum& s, double low_hz, double high_hz) {
  require_spectrum(s, "band_power spectrum");
  if (!std::isfinite(low_hz) || !std::isfinite(high_hz) || high_hz < low_hz ||
      high_hz - low_hz > s.sample_rate_hz * (1.0 + 1e-12)) {
    throw ConfigError("band_power band", format_number(low_hz) + " to " + format_number(high_hz) + " Hz",
                      "finite edges, low <= high, width <= the sample rate");
  }
  const Cumulative c(s);
  return c.at(high_hz) - c.at(low_hz);
}

double total_power(const Spectrum& s) noexcept {
  double sum = 0.0;
  for (std::size_t k = 0; k < s.size(); ++k) sum += s.density(k);
  return sum * s.bin_spacing_hz;
}

SpectralPeak spectral_peak(const Spectrum& s) {
  require_spectrum(s, "spectral_peak spectrum");
  return spectral_peak(s, -kInf, kInf);
}

SpectralPeak spectral_peak(const Spectrum& s, double low_hz, double high_hz) {
  require_spectrum(s, "spectral_peak spectrum");
  SpectralPeak p{0, kNan, kNan};
  for (std::size_t k = 0; k < s.size(); ++k) {
    const double f = s.frequency_hz[k];
    if (f < low_hz || f > high_hz || !std::isfinite(s.values[k])) continue;
    if (!(p.value >= s.values[k])) p = {k, f, s.values[k]};
  }
  return p;
}

OccupiedBandwidth occupied_bandwidth(const Spectrum& s, double fraction) {
  require_spectrum(s, "occupied_bandwidth spectrum");
  if (!(fraction > 0.0 && fraction < 1.0)) {
    throw ConfigError("occupied bandwidth fraction", format_number(fraction), "0 < fraction < 1");
  }
  const Cumulative c(s);
  const double total = c.total();
  if (!(total > 0.0) || !std::isfinite(total)) return {kNan, kNan, kNan, kNan};
  const double tail = 0.5 * (1.0 - fraction) * total;
  OccupiedBandwidth o;
  o.lower_hz = c.inverse(tail);
  o.upper_hz = c.inverse(total - tail);
  o.bandwidth_hz = o.upper_hz - o.lower_hz;
  o.total_power = total;
  return o;
}

AdjacentChannelPower adjacent_channel_power(const Spectrum& s, const AdjacentChannels& ch) {
  require_spectrum(s, "adjacent_channel_power spectrum");
  require_range_open_low("AdjacentChannels.bandwidth_hz", ch.bandwidth_hz, 0.0, s.sample_rate_hz);
  require_range_open_low("AdjacentChannels.spacing_hz", ch.spacing_hz, 0.0, s.sample_rate_hz);
  const double half = 0.5 * s.sample_rate_hz * (1.0 + 1e-12);
  const double low = ch.center_hz - ch.spacing_hz - 0.5 * ch.bandwidth_hz;
  const double high = ch.center_hz + ch.spacing_hz + 0.5 * ch.bandwidth_hz;
  if (!std::isfinite(ch.center_hz) || low < -half || high > half) {
    throw ConfigError("AdjacentChannels", format_number(low) + " to " + format_number(high) + " Hz",
                      "all three channels within +-" + format_number(0.5 * s.sample_rate_hz) + " Hz");
  }
  const Cumulative c(s);
  const auto band = [&](double mid) {
    return c.at(mid + 0.5 * ch.bandwidth_hz) - c.at(mid - 0.5 * ch.bandwidth_hz);
  };
  AdjacentChannelPower r;
  r.main_power = band(ch.center_hz);
  r.lower_power = band(ch.center_hz - ch.spacing_hz);
  r.upper_power = band(ch.center_hz + ch.spacing_hz);
  r.lower_db = linear_to_db(r.lower_power / r.main_power);
  r.upper_db = linear_to_db(r.upper_power / r.main_power);
  return r;
}

double mask_limit_db(const SpectralMask& mask, double offset_hz) noexcept {
  const auto& p = mask.points;
  double limit = kNan;
  for (std::size_t i = 0; i + 1 < p.size(); ++i) {
    const double a = p[i].offset_hz, b = p[i + 1].offset_hz;
    if (!(offset_hz >= a && offset_hz <= b)) continue;
    const double v = b > a ? p[i].limit_db + (p[i + 1].limit_db - p[i].limit_db) * (offset_hz - a) / (b - a)
                           : std::min(p[i].limit_db, p[i + 1].limit_db);
    limit = std::isnan(limit) ? v : std::min(limit, v);
  }
  return limit;
}

MaskVerdict mask_check(const Spectrum& s, const SpectralMask& mask) {
  require_spectrum(s, "mask_check spectrum");
  const auto& p = mask.points;
  if (p.size() < 2) {
    throw ConfigError("SpectralMask.points", std::to_string(p.size()) + " points", "2 or more");
  }
  for (std::size_t i = 0; i < p.size(); ++i) {
    if (!std::isfinite(p[i].offset_hz) || !std::isfinite(p[i].limit_db) ||
        (i > 0 && p[i].offset_hz < p[i - 1].offset_hz) || (mask.mirror && p[i].offset_hz < 0.0)) {
      throw ConfigError(
          "SpectralMask.points[" + std::to_string(i) + "]",
          format_number(p[i].offset_hz) + " Hz, " + format_number(p[i].limit_db) + " dB",
          mask.mirror ? "finite, offsets >= 0 and non-decreasing" : "finite, offsets non-decreasing");
    }
  }
  if (!std::isfinite(mask.center_hz)) {
    throw ConfigError("SpectralMask.center_hz", format_number(mask.center_hz), "finite");
  }
  MaskVerdict v;
  v.worst_margin_db = kInf;
  v.worst_frequency_hz = kNan;
  if (mask.reference == MaskReference::relative_to_peak) {
    const SpectralPeak peak = spectral_peak(s);
    v.reference_db = peak.value > 0.0 ? linear_to_db(peak.value) : kNan;
    if (!std::isfinite(v.reference_db)) return v;  // no usable spectrum: nothing checked
  }
  for (std::size_t k = 0; k < s.size(); ++k) {
    const double value = s.values[k];
    if (std::isnan(value)) continue;
    double offset = s.frequency_hz[k] - mask.center_hz;
    if (mask.mirror) offset = std::fabs(offset);
    const double limit = mask_limit_db(mask, offset);
    if (std::isnan(limit)) continue;
    ++v.bins_checked;
    const double margin = v.reference_db + limit - (value > 0.0 ? linear_to_db(value) : -kInf);
    if (margin < v.worst_margin_db) {
      v.worst_margin_db = margin;
      v.worst_frequency_hz = s.frequency_hz[k];
    }
  }
  v.pass = !(v.worst_margin_db < 0.0);
  return v;
}

}  // namespace qamsight
