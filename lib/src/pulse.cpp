// pulse: raised-cosine closed forms, tap design, the polyphase interpolator and the decimator.
#include "qamsight/pulse.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>
#include <type_traits>

#include "pulse_kernels.hpp"
#include "qamsight/detail/kernels.hpp"

namespace qamsight {

namespace {

constexpr double kPi = std::numbers::pi;
constexpr std::size_t kMaxTaps = 65536;

// sin(pi x) with exact argument reduction: remainder() is exact, and the folds 1 - r and
// -1 - r are exact for the r they apply to (Sterbenz), so integers give exactly 0 and large
// arguments keep full relative accuracy.
double sin_pi(double x) noexcept {
  double r = std::remainder(x, 2.0);  // [-1, 1]
  if (r > 0.5) {
    r = 1.0 - r;
  } else if (r < -0.5) {
    r = -1.0 - r;
  }
  return std::sin(kPi * r);
}

// cos(pi x) = sin(pi (1/2 - |r|)), r the exact remainder of x modulo 2.
double cos_pi(double x) noexcept {
  const double r = std::fabs(std::remainder(x, 2.0));  // [0, 1]
  return std::sin(kPi * (0.5 - r));
}

// sin(pi y) / (pi y), 1 at 0.
double sinc(double y) noexcept { return y == 0.0 ? 1.0 : sin_pi(y) / (kPi * y); }

bool roll_off_ok(double beta) noexcept { return beta > 0.0 && beta <= 1.0; }

void check_taps(std::span<const double> taps) {
  if (taps.empty() || taps.size() > kMaxTaps)
    throw ConfigError("taps", std::to_string(taps.size()) + " taps", "1 to 65536 taps");
  for (double t : taps)
    if (!std::isfinite(t)) throw ConfigError("taps", format_number(t), "finite values");
}

void check_sps(int sps) {
  if (sps < 1 || sps > 64) throw ConfigError("samples_per_symbol", std::to_string(sps), "integer, 1 to 64");
}

std::size_t round_up(std::size_t n, std::size_t m) noexcept { return (n + m - 1) / m * m; }

}  // namespace

// ---------------------------------------------------------------------------------------------
// Closed forms
// ---------------------------------------------------------------------------------------------

double root_raised_cosine_pulse(double tau, double roll_off) noexcept {
  const double beta = roll_off;
  if (!roll_off_ok(beta) || !std::isfinite(tau)) return std::numeric_limits<double>::quiet_NaN();
  const double t = std::fabs(tau);
  const double x = 4.0 * beta * t;
  if (x < 0.5) {
    // Near 0: divide the numerator by pi t analytically (sinc form); 1 - x^2 >= 3/4 here.
    const double s = (1.0 - beta) * sinc((1.0 - beta) * t);
    const double c = (4.0 * beta / kPi) * cos_pi((1.0 + beta) * t);
    return (s + c) / ((1.0 - x) * (1.0 + x));
  }
  // Away from 0, with d = 1 - 4 beta t and u = pi t:
  //   sin(u(1-beta)) + 4 beta t cos(u(1+beta))
  //     = [sin(u(1-beta)) + cos(u(1+beta))] - d cos(u(1+beta))
  //     = 2 sin(pi d / 4) cos(u - pi/4) - d cos(u(1+beta))      (sum-to-product, u beta = pi x/4)
  // so the factor d of the denominator pi t d (1 + x) cancels exactly and the point
  // d = 0 (|t| = 1/(4 beta)) is an ordinary value with sin(pi d/4)/d -> pi/4.
  const double d = 1.0 - x;
  const double s = d == 0.0 ? kPi / 4.0 : sin_pi(d / 4.0) / d;
  return (2.0 * s * cos_pi(t - 0.25) - cos_pi((1.0 + beta) * t)) / (kPi * t * (1.0 + x));
}

double raised_cosine_pulse(double tau, double roll_off) noexcept {
  const double beta = roll_off;
  if (!roll_off_ok(beta) || !std::isfinite(tau)) return std::numeric_limits<double>::quiet_NaN();
  const double t = std::fabs(tau);
  // cos(pi beta t) / (1 - y^2) with y = 2 beta t, d = 1 - y: cos(pi y / 2) = sin(pi d / 2),
  // 1 - y^2 = d (1 + y), so sin(pi d / 2) / d -> pi/2 at the point |t| = 1/(2 beta).
  const double y = 2.0 * beta * t;
  const double d = 1.0 - y;
  const double q = d == 0.0 ? kPi / 2.0 : sin_pi(d / 2.0) / d;
  return sinc(t) * q / (1.0 + y);
}

double raised_cosine_spectrum(double f, double roll_off) noexcept {
  const double beta = roll_off;
  if (!roll_off_ok(beta) || std::isnan(f)) return std::numeric_limits<double>::quiet_NaN();
  const double a = std::fabs(f);
  const double f1 = 0.5 * (1.0 - beta);
  if (a <= f1) return 1.0;
  if (a >= 0.5 * (1.0 + beta)) return 0.0;
  return 0.5 * (1.0 + std::cos(kPi / beta * (a - f1)));
}

// ---------------------------------------------------------------------------------------------
// Tap design
// ---------------------------------------------------------------------------------------------

void check_pulse_spec(const PulseSpec& spec) {
  if (spec.family != PulseFamily::root_raised_cosine && spec.family != PulseFamily::raised_cosine)
    throw ConfigError("family", std::to_string(static_cast<int>(spec.family)),
                      "root_raised_cosine, raised_cosine");
  require_range_open_low("roll_off", spec.roll_off, 0.0, 1.0);
  check_sps(spec.samples_per_symbol);
  const int span = spec.span_symbols;
  // The smallest even span with span * roll_off >= 1 (and >= 4); a tiny relative slack keeps
  // e.g. roll_off = 0.1, span 10 allowed although 10 * 0.1 rounds to 1 - 1 ulp.
  int min_span = static_cast<int>(std::ceil(1.0 / spec.roll_off * (1.0 - 1e-12)));
  min_span = std::max(4, min_span + (min_span % 2));
  if (span < 4 || span > 256 || span % 2 != 0 || span < min_span) {
    std::string allowed = "even, 4 to 256, with span_symbols * roll_off >= 1";
    if (min_span <= 256) {
      allowed += " (here at least " + std::to_string(min_span) + ")";
    } else {
      allowed += " (no allowed span for this roll_off: it needs roll_off >= 1/256)";
    }
    throw ConfigError("span_symbols", std::to_string(span), allowed);
  }
}

std::size_t pulse_tap_count(const PulseSpec& spec) {
  check_pulse_spec(spec);
  return static_cast<std::size_t>(spec.span_symbols) * static_cast<std::size_t>(spec.samples_per_symbol) + 1;
}

std::vector<double> pulse_taps(const PulseSpec& spec) {
  const std::size_t n = pulse_tap_count(spec);
  const std::size_t centre = (n - 1) / 2;
  const double sps = spec.samples_per_symbol;
  std::vector<double> taps(n);
  for (std::size_t i = 0; i <= centre; ++i) {
    const double tau = static_cast<double>(centre - i) / sps;  // exact ratio of integers, rounded once
    const double v = spec.family == PulseFamily::root_raised_cosine
                         ? root_raised_cosine_pulse(tau, spec.roll_off)
                         : raised_cosine_pulse(tau, spec.roll_off);
    taps[i] = v;
    taps[n - 1 - i] = v;  // exactly symmetric
  }
  double energy = 0.0;
  for (double t : taps) energy += t * t;
  const double scale = 1.0 / std::sqrt(energy);
  for (double& t : taps) t *= scale;
  return taps;
}

double matched_cascade_isi_power(const PulseSpec& spec) {
  const std::vector<double> h = pulse_taps(spec);
  const std::size_t n = h.size();
  const std::size_t sps = static_cast<std::size_t>(spec.samples_per_symbol);
  // The matched filter of a real even pulse is the pulse, so the cascade sampled at lag k T
  // is the autocorrelation of the taps at lag k * sps (symmetric in k).
  auto autocorr = [&](std::size_t lag) {
    double acc = 0.0;
    for (std::size_t m = lag; m < n; ++m) acc += h[m] * h[m - lag];
    return acc;
  };
  const double peak = autocorr(0);
  double isi = 0.0;
  for (std::size_t lag = sps; lag < n; lag += sps) {
    const double c = autocorr(lag);
    isi += 2.0 * c * c;
  }
  return isi / (peak * peak);
}

// ---------------------------------------------------------------------------------------------
// PolyphaseInterpolator
// ---------------------------------------------------------------------------------------------

namespace {
// Symbols copied into the delay line per pass (a multiple of every kernel block).
constexpr std::size_t kInterpChunk = 512;
static_assert(kInterpChunk % (detail::kBlockLanes<double> / 2) == 0 &&
              kInterpChunk % (detail::kBlockLanes<float> / 2) == 0);
}  // namespace

template <class Sample>
PolyphaseInterpolator<Sample>::PolyphaseInterpolator(std::span<const double> taps, int samples_per_symbol)
    : sps_(samples_per_symbol), tap_count_(taps.size()) {
  check_taps(taps);
  check_sps(samples_per_symbol);
  const std::size_t L = static_cast<std::size_t>(sps_);
  phase_len_ = (tap_count_ + L - 1) / L;
  const std::size_t K = phase_len_;
  // Row p, entry i multiplies symbol q - (K-1-i) for output q*L + p: tap h[(K-1-i) L + p].
  phase_taps_.assign(L * K, Real(0));
  for (std::size_t p = 0; p < L; ++p)
    for (std::size_t i = 0; i < K; ++i) {
      const std::size_t m = (K - 1 - i) * L + p;
      if (m < tap_count_) phase_taps_[p * K + i] = static_cast<Real>(taps[m]);
    }
  line_.assign(K - 1 + kInterpChunk, Sample(0));
}

template <class Sample>
PolyphaseInterpolator<Sample>::PolyphaseInterpolator(const PulseSpec& spec)
    : PolyphaseInterpolator(pulse_taps(spec), spec.samples_per_symbol) {}

template <class Sample>
void PolyphaseInterpolator<Sample>::process(std::span<const Sample> symbols,
                                            std::span<Sample> samples) noexcept {
  QAMSIGHT_ASSERT(samples.size() == symbols.size() * static_cast<std::size_t>(sps_),
                  "interpolator output length must be samples_per_symbol times the input length");
  const std::size_t L = static_cast<std::size_t>(sps_);
  const std::size_t K = phase_len_;
  std::size_t done = 0;
  while (done < symbols.size()) {
    const std::size_t q_count = std::min(kInterpChunk, symbols.size() - done);
    std::copy_n(symbols.data() + done, q_count, line_.data() + (K - 1));
    const Real* line = reinterpret_cast<const Real*>(line_.data());
    Sample* out = samples.data() + done * L;
    // Whole blocks of outputs (pulse_kernels.hpp); float runs the dispatched kernel (AVX2 where
    // the CPU has it, the same bits either way).
    if constexpr (std::is_same_v<Real, float>) {
      detail::kernels().interpolate_f32(phase_taps_.data(), L, K, line, q_count, reinterpret_cast<float*>(out));
    } else {
      detail::interpolate_chunk(phase_taps_.data(), L, K, line, q_count, out);
    }
    // Keep the last K-1 symbols as history (forward copy to lower addresses is overlap-safe).
    std::copy(line_.begin() + q_count, line_.begin() + q_count + (K - 1), line_.begin());
    done += q_count;
  }
}

template <class Sample>
void PolyphaseInterpolator<Sample>::reset() noexcept {
  std::fill(line_.begin(), line_.end(), Sample(0));
}

// ---------------------------------------------------------------------------------------------
// MatchedDecimator
// ---------------------------------------------------------------------------------------------

template <class Sample>
MatchedDecimator<Sample>::MatchedDecimator(std::span<const double> taps, int samples_per_symbol,
                                           int outputs_per_symbol, int phase)
    : sps_(samples_per_symbol), tap_count_(taps.size()) {
  check_taps(taps);
  check_sps(samples_per_symbol);
  if (outputs_per_symbol < 1 || outputs_per_symbol > samples_per_symbol ||
      samples_per_symbol % outputs_per_symbol != 0)
    throw ConfigError("outputs_per_symbol", std::to_string(outputs_per_symbol),
                      "a divisor of samples_per_symbol (" + std::to_string(samples_per_symbol) + ")");
  step_ = samples_per_symbol / outputs_per_symbol;
  if (phase < 0 || phase >= step_)
    throw ConfigError("phase", std::to_string(phase),
                      "0 to samples_per_symbol / outputs_per_symbol - 1 (" + std::to_string(step_ - 1) + ")");
  phase_ = phase;
  skip_ = static_cast<std::size_t>(phase_);
  padded_len_ = round_up(tap_count_, detail::kDotStep<Real>);
  taps2_.assign(2 * padded_len_, Real(0));
  for (std::size_t i = 0; i < tap_count_; ++i) {
    // Window entry padded_len-1-i holds x[n - i].
    const std::size_t j = padded_len_ - 1 - i;
    taps2_[2 * j] = taps2_[2 * j + 1] = static_cast<Real>(taps[i]);
  }
  chunk_ = std::max<std::size_t>(4096, padded_len_);
  line_.assign(padded_len_ - 1 + chunk_, Sample(0));
}

template <class Sample>
MatchedDecimator<Sample>::MatchedDecimator(const PulseSpec& spec, int outputs_per_symbol, int phase)
    : MatchedDecimator(pulse_taps(spec), spec.samples_per_symbol, outputs_per_symbol, phase) {}

template <class Sample>
std::size_t MatchedDecimator<Sample>::output_length(std::size_t input_length) const noexcept {
  if (input_length <= skip_) return 0;
  return (input_length - skip_ - 1) / static_cast<std::size_t>(step_) + 1;
}

template <class Sample>
void MatchedDecimator<Sample>::process(std::span<const Sample> in, std::span<Sample> out) noexcept {
  QAMSIGHT_ASSERT(out.size() == output_length(in.size()),
                  "decimator output length must equal output_length(input length)");
  const std::size_t hist = padded_len_ - 1;
  const std::size_t step = static_cast<std::size_t>(step_);
  const Real* t2 = taps2_.data();
  const std::size_t n2 = 2 * padded_len_;
  std::size_t done = 0;
  std::size_t m = 0;
  while (done < in.size()) {
    const std::size_t n = std::min(chunk_, in.size() - done);
    std::copy_n(in.data() + done, n, line_.data() + hist);
    // The window of the sample at chunk position j starts at line_[j]; outputs for j = skip_,
    // skip_ + step, ... below n.
    const Real* line = reinterpret_cast<const Real*>(line_.data());
    if constexpr (std::is_same_v<Real, float>) {
      m += detail::kernels().decimate_f32(t2, n2, line, skip_, n, step, reinterpret_cast<float*>(out.data() + m));
    } else {
      m += detail::decimate_chunk(t2, n2, line, skip_, n, step, out.data() + m);
    }
    std::size_t j = skip_;
    if (j < n) j += ((n - 1 - j) / step + 1) * step;  // the first window start at or past n
    skip_ = j - n;
    std::copy(line_.begin() + n, line_.begin() + n + hist, line_.begin());  // overlap-safe
    done += n;
  }
}

template <class Sample>
void MatchedDecimator<Sample>::reset() noexcept {
  std::fill(line_.begin(), line_.end(), Sample(0));
  skip_ = static_cast<std::size_t>(phase_);
}

template class PolyphaseInterpolator<cf32>;
template class PolyphaseInterpolator<cf64>;
template class MatchedDecimator<cf32>;
template class MatchedDecimator<cf64>;

}  // namespace qamsight
