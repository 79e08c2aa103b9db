// channel: RF blocks (frequency offset, rotation, IQ imbalance, DC, amplifiers, ADC, multipath).
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>
#include <utility>

#include "qamsight/channel.hpp"

namespace qamsight {

namespace {
constexpr double kPi = std::numbers::pi;
constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr double kDeg = kPi / 180.0;

double frac_cycles(double c) noexcept { return c - std::floor(c); }

void require_finite_gain(const std::string& parameter, cf64 v) {
  if (!std::isfinite(v.real()) || !std::isfinite(v.imag())) {
    throw ConfigError(parameter,
                      format_number(v.real()) + (v.imag() < 0 ? "" : "+") + format_number(v.imag()) + "j",
                      "finite real and imaginary parts");
  }
}

// E[f(|x|^2)] for |x|^2 exponential with mean mu (circular Gaussian x). With t = |x|^2 / mu and
// t = e^y, the integrand f(mu e^y) e^{-e^y} e^y decays like e^{y} or faster at y -> -inf (f(0) is
// finite) and double-exponentially at +inf, so the trapezoid rule on y converges geometrically.
template <class F>
double rayleigh_mean(F f, double mu) {
  const double y0 = -46.0, y1 = std::log(80.0), h = 1.0 / 256.0;
  const auto n = static_cast<std::size_t>(std::ceil((y1 - y0) / h));
  double sum = 0.0;
  for (std::size_t i = 0; i <= n; ++i) {
    const double y = y0 + static_cast<double>(i) * h;
    const double t = std::exp(y);
    const double w = (i == 0 || i == n) ? 0.5 : 1.0;
    sum += w * f(mu * t) * std::exp(-t) * t;
  }
  return sum * h;
}

double backoff_db(double saturation, double mean) noexcept { return 10.0 * std::log10(saturation / mean); }

// The back-off figures shared by both amplifier models; `amp` has am_am(), the saturation
// powers and the AmplifierMeter of the samples it processed.
double metered_backoff_db(double saturation, double power_sum, std::uint64_t count) noexcept {
  if (count == 0) return std::numeric_limits<double>::quiet_NaN();
  return backoff_db(saturation, power_sum / static_cast<double>(count));
}

template <class Amp>
double values_output_backoff_db(const Amp& amp, double scale, std::span<const cf64> values) {
  if (values.empty()) throw ConfigError("input_values", "empty", "at least one value");
  double sum = 0.0;
  for (const cf64& v : values) {
    const double a = amp.am_am(scale * std::abs(v));
    sum += a * a;
  }
  return backoff_db(amp.output_saturation_power(), sum / static_cast<double>(values.size()));
}

template <class Amp>
double gaussian_output_backoff_db(const Amp& amp, double scale, double mean_input_power) {
  const double p = rayleigh_mean(
      [&amp](double u) {
        const double a = amp.am_am(std::sqrt(u));
        return a * a;
      },
      scale * scale * mean_input_power);
  return backoff_db(amp.output_saturation_power(), p);
}

void validate_drive(double ibo, double mean_power) {
  require_range("input_backoff_db", ibo, -20.0, 40.0);
  require_range_open_low("mean_input_power", mean_power, 0.0, 1e30);
}
}  // namespace

// ---------------------------------------------------------------------------------------------
// Frequency offset and rotation.

FrequencyOffset::FrequencyOffset(const FrequencyOffsetConfig& config) : config_(config) {
  require_range_open_low("sample_rate_hz", config.sample_rate_hz, 0.0, 1e12);
  const double half = 0.5 * config.sample_rate_hz;
  require_range("offset_hz", config.offset_hz, -half, half);
  require_range("initial_phase_deg", config.initial_phase_deg, -360.0, 360.0);
  step_ = config.offset_hz / config.sample_rate_hz;
  initial_ = frac_cycles(config.initial_phase_deg / 360.0);
  cycles_ = initial_;
}

void FrequencyOffset::process(std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  // A double phasor recursion within runs of kRun samples, re-anchored at each run from the
  // cycle accumulator: the recursion's rounding (~kRun x 1e-16) never accumulates across runs,
  // and the sin/cos cost is paid once per run.
  constexpr std::size_t kRun = 256;
  const cf64 step = std::polar(1.0, kTwoPi * step_);
  double c = cycles_;
  for (std::size_t i = 0; i < in.size(); i += kRun) {
    const std::size_t m = std::min(kRun, in.size() - i);
    cf64 p = std::polar(1.0, kTwoPi * c);
    for (std::size_t j = 0; j < m; ++j) {
      out[i + j] = in[i + j] * cf32(static_cast<float>(p.real()), static_cast<float>(p.imag()));
      p *= step;
    }
    c = frac_cycles(c + static_cast<double>(m) * step_);
  }
  cycles_ = c;
}

PhaseRotation::PhaseRotation(const PhaseRotationConfig& config) : config_(config) {
  require_range("rotation_deg", config.rotation_deg, -360.0, 360.0);
  const double a = config.rotation_deg * kDeg;
  phasor_ = cf32(static_cast<float>(std::cos(a)), static_cast<float>(std::sin(a)));
}

void PhaseRotation::process(std::span<const cf32> in, std::span<cf32> out) const noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  for (std::size_t i = 0; i < in.size(); ++i) out[i] = in[i] * phasor_;
}

// ---------------------------------------------------------------------------------------------
// IQ imbalance and DC offset.

IqImbalance::IqImbalance(const IqImbalanceConfig& config) : config_(config) {
  require_range("gain_db", config.gain_db, -10.0, 10.0);
  require_range("phase_deg", config.phase_deg, -45.0, 45.0);
  const double g = std::pow(10.0, config.gain_db / 20.0), phi = config.phase_deg * kDeg;
  mu_ = 0.5 * (1.0 + g * std::polar(1.0, phi));
  nu_ = 0.5 * (1.0 - g * std::polar(1.0, -phi));
  g_sin_ = static_cast<float>(g * std::sin(phi));
  g_cos_ = static_cast<float>(g * std::cos(phi));
}

double IqImbalance::image_rejection_ratio_db() const noexcept {
  const double n = std::norm(nu_);
  if (n == 0.0) return std::numeric_limits<double>::infinity();
  return 10.0 * std::log10(std::norm(mu_) / n);
}

void IqImbalance::process(std::span<const cf32> in, std::span<cf32> out) const noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  for (std::size_t i = 0; i < in.size(); ++i) {
    const float a = in[i].real(), b = in[i].imag();
    out[i] = cf32(a, g_sin_ * a + g_cos_ * b);
  }
}

DcOffset::DcOffset(const DcOffsetConfig& config) : config_(config) {
  require_finite_gain("offset", config.offset);
  require_range("offset (magnitude)", std::abs(config.offset), 0.0, 10.0);
  require_range_open_low("signal_rms", config.signal_rms, 0.0, 1e30);
  const cf64 v = config.offset * config.signal_rms;
  value_ = cf32(static_cast<float>(v.real()), static_cast<float>(v.imag()));
}

void DcOffset::process(std::span<const cf32> in, std::span<cf32> out) const noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  for (std::size_t i = 0; i < in.size(); ++i) out[i] = in[i] + value_;
}

// ---------------------------------------------------------------------------------------------
// Saleh amplifier.

SalehAmplifier::SalehAmplifier(const SalehConfig& config) : config_(config) {
  require_range_open_low("alpha_a", config.alpha_a, 0.0, 1e6);
  require_range_open_low("beta_a", config.beta_a, 0.0, 1e6);
  require_range("alpha_phi", config.alpha_phi, -100.0, 100.0);
  require_range("beta_phi", config.beta_phi, 0.0, 1e6);
  validate_drive(config.input_backoff_db, config.mean_input_power);
  scale_ =
      std::sqrt(input_saturation_power() / (config.mean_input_power * db_to_linear(config.input_backoff_db)));
  out_scale_ = config.normalise_gain ? static_cast<float>(1.0 / (scale_ * config.alpha_a)) : 1.0f;
}

double SalehAmplifier::am_am(double r) const noexcept {
  return config_.alpha_a * r / (1.0 + config_.beta_a * r * r);
}
double SalehAmplifier::am_pm_rad(double r) const noexcept {
  return config_.alpha_phi * r * r / (1.0 + config_.beta_phi * r * r);
}
double SalehAmplifier::input_saturation_power() const noexcept { return 1.0 / config_.beta_a; }
double SalehAmplifier::output_saturation_power() const noexcept {
  return config_.alpha_a * config_.alpha_a / (4.0 * config_.beta_a);
}

void SalehAmplifier::process(std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  const double s = scale_, aa = config_.alpha_a, ba = config_.beta_a;
  const double ap = config_.alpha_phi, bp = config_.beta_phi;
  double pin = 0.0, pout = 0.0;
  for (std::size_t i = 0; i < in.size(); ++i) {
    const double r2 = s * s * std::norm(cf64(in[i]));
    const double g = aa / (1.0 + ba * r2);  // A(r) / r
    const double phi = ap * r2 / (1.0 + bp * r2);
    pin += r2;
    pout += g * g * r2;
    const auto k = static_cast<float>(s * g);
    const auto p = static_cast<float>(phi);
    out[i] = in[i] * (k * out_scale_) * cf32(std::cos(p), std::sin(p));
  }
  meter_.input_power += pin;
  meter_.output_power += pout;
  meter_.count += in.size();
}

double SalehAmplifier::measured_output_backoff_db() const noexcept {
  return metered_backoff_db(output_saturation_power(), meter_.output_power, meter_.count);
}
double SalehAmplifier::measured_input_backoff_db() const noexcept {
  return metered_backoff_db(input_saturation_power(), meter_.input_power, meter_.count);
}

double SalehAmplifier::predicted_output_backoff_db(std::span<const cf64> values) const {
  return values_output_backoff_db(*this, scale_, values);
}

double SalehAmplifier::predicted_output_backoff_db_gaussian() const {
  return gaussian_output_backoff_db(*this, scale_, config_.mean_input_power);
}

// ---------------------------------------------------------------------------------------------
// Rapp amplifier.

RappAmplifier::RappAmplifier(const RappConfig& config) : config_(config) {
  require_range("smoothness", config.smoothness, 0.1, 100.0);
  require_range_open_low("saturation_amplitude", config.saturation_amplitude, 0.0, 1e30);
  require_range_open_low("gain", config.gain, 0.0, 1e30);
  validate_drive(config.input_backoff_db, config.mean_input_power);
  scale_ =
      std::sqrt(input_saturation_power() / (config.mean_input_power * db_to_linear(config.input_backoff_db)));
  out_scale_ = config.normalise_gain ? static_cast<float>(1.0 / (scale_ * config.gain)) : 1.0f;
}

double RappAmplifier::am_am(double r) const noexcept {
  const double p2 = 2.0 * config_.smoothness;
  const double u = config_.gain * r / config_.saturation_amplitude;
  // Written with u <= 1 or 1/u < 1 inside the power so that large p cannot overflow.
  if (u <= 1.0) return config_.gain * r / std::pow(1.0 + std::pow(u, p2), 1.0 / p2);
  return config_.saturation_amplitude / std::pow(1.0 + std::pow(u, -p2), 1.0 / p2);
}
double RappAmplifier::input_saturation_power() const noexcept {
  const double r = config_.saturation_amplitude / config_.gain;
  return r * r;
}
double RappAmplifier::output_saturation_power() const noexcept {
  return config_.saturation_amplitude * config_.saturation_amplitude;
}

void RappAmplifier::process(std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  const double s = scale_, p2 = 2.0 * config_.smoothness, inv_p2 = 1.0 / p2;
  const double gr = config_.gain / config_.saturation_amplitude;
  double pin = 0.0, pout = 0.0;
  for (std::size_t i = 0; i < in.size(); ++i) {
    const double r = s * std::abs(cf64(in[i]));
    const double u = gr * r;
    // A(r) / r, finite at r = 0.
    const double g = u <= 1.0 ? config_.gain / std::pow(1.0 + std::pow(u, p2), inv_p2)
                              : config_.gain / (u * std::pow(1.0 + std::pow(u, -p2), inv_p2));
    pin += r * r;
    pout += g * g * r * r;
    out[i] = in[i] * (static_cast<float>(s * g) * out_scale_);
  }
  meter_.input_power += pin;
  meter_.output_power += pout;
  meter_.count += in.size();
}

double RappAmplifier::measured_output_backoff_db() const noexcept {
  return metered_backoff_db(output_saturation_power(), meter_.output_power, meter_.count);
}
double RappAmplifier::measured_input_backoff_db() const noexcept {
  return metered_backoff_db(input_saturation_power(), meter_.input_power, meter_.count);
}

double RappAmplifier::predicted_output_backoff_db(std::span<const cf64> values) const {
  return values_output_backoff_db(*this, scale_, values);
}

double RappAmplifier::predicted_output_backoff_db_gaussian() const {
  return gaussian_output_backoff_db(*this, scale_, config_.mean_input_power);
}

// ---------------------------------------------------------------------------------------------
// Quantiser.

Quantiser::Quantiser(const QuantiserConfig& config) : config_(config) {
  require_range("bits", static_cast<double>(config.bits), 1.0, 24.0);
  if (config.clip_mode == ClipMode::full_scale) {
    require_range_open_low("full_scale", config.full_scale, 0.0, 1e30);
    fs_ = config.full_scale;
  } else {
    require_range("loading_db", config.loading_db, -20.0, 40.0);
    require_range_open_low("signal_power", config.signal_power, 0.0, 1e30);
    fs_ = std::sqrt(0.5 * config.signal_power) * std::pow(10.0, config.loading_db / 20.0);
  }
  const double levels = std::ldexp(1.0, static_cast<int>(config.bits));
  step_ = 2.0 * fs_ / levels;
  inv_step_ = 1.0 / step_;
  kmax_ = 0.5 * levels - 1.0;
}

void Quantiser::process(std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  const double kmin = -kmax_ - 1.0;
  std::uint64_t clipped = 0;
  auto rail = [&](float v) {
    double k = std::floor(static_cast<double>(v) * inv_step_);
    if (k > kmax_) {
      k = kmax_;
      ++clipped;
    } else if (k < kmin) {
      k = kmin;
      ++clipped;
    }
    return static_cast<float>((k + 0.5) * step_);
  };
  for (std::size_t i = 0; i < in.size(); ++i) {
    const float a = rail(in[i].real()), b = rail(in[i].imag());
    out[i] = cf32(a, b);
  }
  clipped_ += clipped;
}

// ---------------------------------------------------------------------------------------------
// Multipath.

MultipathConfig MultipathConfig::from_tap_vector(std::span<const cf64> taps, bool normalise_energy) {
  MultipathConfig c;
  c.taps.clear();
  for (std::size_t k = 0; k < taps.size(); ++k) c.taps.push_back(MultipathTap{k, taps[k]});
  c.normalise_energy = normalise_energy;
  return c;
}

MultipathChannel::MultipathChannel(const MultipathConfig& config) : taps_(config.taps) {
  require_range("taps (count)", static_cast<double>(taps_.size()), 1.0, 4096.0);
  double energy = 0.0;
  for (std::size_t i = 0; i < taps_.size(); ++i) {
    const std::string name = "taps[" + std::to_string(i) + "]";
    require_range(name + ".delay_samples", static_cast<double>(taps_[i].delay_samples), 0.0, 65536.0);
    require_finite_gain(name + ".gain", taps_[i].gain);
    for (std::size_t j = 0; j < i; ++j) {
      if (taps_[j].delay_samples == taps_[i].delay_samples) {
        throw ConfigError(name + ".delay_samples", std::to_string(taps_[i].delay_samples),
                          "distinct from the other taps (taps[" + std::to_string(j) + "] has it)");
      }
    }
    energy += std::norm(taps_[i].gain);
    max_delay_ = std::max(max_delay_, taps_[i].delay_samples);
  }
  if (config.normalise_energy) {
    if (!(energy > 0.0)) {
      throw ConfigError("taps (energy)", format_number(energy), "greater than 0 with normalise_energy");
    }
    const double k = 1.0 / std::sqrt(energy);
    for (MultipathTap& t : taps_) t.gain *= k;
  }
  for (const MultipathTap& t : taps_) {
    delay_.push_back(t.delay_samples);
    gain_.push_back(cf32(static_cast<float>(t.gain.real()), static_cast<float>(t.gain.imag())));
  }
  history_.assign(max_delay_, cf32(0.0f, 0.0f));
  next_history_.assign(max_delay_, cf32(0.0f, 0.0f));
}

void MultipathChannel::reset() noexcept { std::fill(history_.begin(), history_.end(), cf32(0.0f, 0.0f)); }

void MultipathChannel::process(std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  const std::size_t n = in.size(), d = max_delay_, taps = delay_.size();
  if (n == 0) return;
  // The delay line after this call: the last d samples of [history, in]. Saved first because
  // out may alias in.
  for (std::size_t j = 0; j < d; ++j) {
    const std::size_t q = n + j;  // index into [history (d), in (n)]
    next_history_[j] = q < d ? history_[q] : in[q - d];
  }
  // Backwards, so that in-place operation only overwrites samples no later output needs.
  std::size_t i = n;
  while (i > d) {
    --i;
    cf32 acc(0.0f, 0.0f);
    for (std::size_t k = 0; k < taps; ++k) acc += gain_[k] * in[i - delay_[k]];
    out[i] = acc;
  }
  while (i > 0) {
    --i;
    cf32 acc(0.0f, 0.0f);
    for (std::size_t k = 0; k < taps; ++k) {
      const std::size_t dk = delay_[k];
      acc += gain_[k] * (i >= dk ? in[i - dk] : history_[d + i - dk]);
    }
    out[i] = acc;
  }
  std::swap(history_, next_history_);
}

}  // namespace qamsight
