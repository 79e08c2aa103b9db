// channel: phase noise blocks (Wiener walk from a linewidth; stationary noise from an SSB mask).
#include <algorithm>
#include <charconv>
#include <cmath>
#include <fstream>
#include <numbers>
#include <string>
#include <string_view>
#include <utility>

#include "qamsight/channel.hpp"

namespace qamsight {

namespace {
constexpr double kPi = std::numbers::pi;
constexpr double kTwoPi = 2.0 * std::numbers::pi;

// Increments are far below pi (the linewidth is limited to 0.1 fs, sigma < 0.8 rad), so one
// correction step keeps the phase in (-pi, pi].
inline double wrap_pi(double p) noexcept {
  if (p > kPi) p -= kTwoPi;
  if (p <= -kPi) p += kTwoPi;
  return p;
}

inline cf32 unit_phasor(double phase) noexcept {
  const auto p = static_cast<float>(phase);
  return {std::cos(p), std::sin(p)};
}

// expm1(y) / y, continuous at y = 0; the power-law segment integral needs it near s = -1.
inline double expm1_over(double y) noexcept {
  if (std::abs(y) < 1e-10) return 1.0 + 0.5 * y;
  return std::expm1(y) / y;
}

std::string_view trim(std::string_view s) {
  const auto b = s.find_first_not_of(" \t\r\n");
  if (b == std::string_view::npos) return {};
  const auto e = s.find_last_not_of(" \t\r\n");
  return s.substr(b, e - b + 1);
}

bool parse_double(std::string_view s, double& out) {
  s = trim(s);
  if (!s.empty() && s.front() == '+') s.remove_prefix(1);
  if (s.empty()) return false;
  const auto res = std::from_chars(s.data(), s.data() + s.size(), out);
  return res.ec == std::errc() && res.ptr == s.data() + s.size();
}
}  // namespace

// ---------------------------------------------------------------------------------------------
// Wiener phase noise.

WienerPhaseNoise::WienerPhaseNoise(const WienerPhaseNoiseConfig& config) : config_(config) {
  require_range_open_low("sample_rate_hz", config.sample_rate_hz, 0.0, 1e12);
  require_range("linewidth_hz", config.linewidth_hz, 0.0, 0.1 * config.sample_rate_hz);
  require_range("initial_phase_rad", config.initial_phase_rad, -kTwoPi, kTwoPi);
  sigma_ = std::sqrt(kTwoPi * config.linewidth_hz / config.sample_rate_hz);
  initial_ = wrap_pi(config.initial_phase_rad);
  phase_ = initial_;
}

void WienerPhaseNoise::process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  if (sigma_ == 0.0) {
    const cf32 r = unit_phasor(phase_);
    for (std::size_t i = 0; i < in.size(); ++i) out[i] = in[i] * r;
    return;
  }
  double p = phase_;
  for (std::size_t i = 0; i < in.size(); ++i) {
    p = wrap_pi(p + sigma_ * rng.gaussian());
    out[i] = in[i] * unit_phasor(p);
  }
  phase_ = p;
}

void WienerPhaseNoise::generate(RandomStream& rng, std::span<double> phase) noexcept {
  double p = phase_;
  for (double& v : phase) {
    if (sigma_ != 0.0) p = wrap_pi(p + sigma_ * rng.gaussian());
    v = p;
  }
  phase_ = p;
}

// ---------------------------------------------------------------------------------------------
// Phase-noise mask.

PhaseNoiseMask::PhaseNoiseMask(std::vector<PhaseNoisePoint> points) : points_(std::move(points)) {
  if (points_.size() < 2) {
    throw ConfigError("phase noise mask points", std::to_string(points_.size()), "at least 2");
  }
  for (std::size_t i = 0; i < points_.size(); ++i) {
    std::string idx = std::to_string(i);  // built in place: GCC 12 misreads "[" + s + "]" (-Wrestrict)
    idx.insert(0, 1, '[');
    idx.push_back(']');
    const double f = points_[i].offset_hz, l = points_[i].dbc_hz;
    if (!std::isfinite(f) || f <= 0.0) {
      throw ConfigError("phase noise mask offset_hz" + idx, format_number(f), "finite, > 0");
    }
    if (i > 0 && !(f > points_[i - 1].offset_hz)) {
      throw ConfigError(
          "phase noise mask offset_hz" + idx, format_number(f),
          "strictly greater than the previous offset " + format_number(points_[i - 1].offset_hz));
    }
    if (!std::isfinite(l) || l < -400.0 || l > 100.0) {
      throw ConfigError("phase noise mask dbc_hz" + idx, format_number(l), "finite, -400 to 100");
    }
  }
}

PhaseNoiseMask PhaseNoiseMask::from_csv(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path + ": cannot open phase noise mask file");
  std::vector<PhaseNoisePoint> points;
  std::vector<std::size_t> line_of;
  std::string raw;
  std::size_t line_no = 0;
  bool first_content = true;
  while (std::getline(in, raw)) {
    ++line_no;
    std::string_view line(raw);
    if (const auto hash = line.find('#'); hash != std::string_view::npos) line = line.substr(0, hash);
    line = trim(line);
    if (line.empty()) continue;
    const bool was_first = first_content;
    first_content = false;
    const auto comma = line.find(',');
    const std::string where = path + ":" + std::to_string(line_no) + ": ";
    if (comma == std::string_view::npos || line.find(',', comma + 1) != std::string_view::npos) {
      throw InputError(where + "expected two fields 'offset_hz,dbc_hz', got '" + std::string(line) + "'");
    }
    const auto a = trim(line.substr(0, comma)), b = trim(line.substr(comma + 1));
    if (was_first && a == "offset_hz" && b == "dbc_hz") continue;  // header
    PhaseNoisePoint p;
    if (!parse_double(a, p.offset_hz)) {
      throw InputError(where + "offset_hz '" + std::string(a) + "' is not a number");
    }
    if (!parse_double(b, p.dbc_hz)) {
      throw InputError(where + "dbc_hz '" + std::string(b) + "' is not a number");
    }
    if (!std::isfinite(p.offset_hz) || p.offset_hz <= 0.0) {
      throw InputError(where + "offset_hz = " + format_number(p.offset_hz) + " must be finite and > 0");
    }
    if (!std::isfinite(p.dbc_hz) || p.dbc_hz < -400.0 || p.dbc_hz > 100.0) {
      throw InputError(where + "dbc_hz = " + format_number(p.dbc_hz) + " must be finite, -400 to 100");
    }
    if (!points.empty() && !(p.offset_hz > points.back().offset_hz)) {
      throw InputError(where + "offset_hz = " + format_number(p.offset_hz) +
                       " must be greater than the previous offset " + format_number(points.back().offset_hz) +
                       " (line " + std::to_string(line_of.back()) + ")");
    }
    points.push_back(p);
    line_of.push_back(line_no);
  }
  if (points.size() < 2) {
    throw InputError(path + ": a phase noise mask needs at least 2 points, found " +
                     std::to_string(points.size()));
  }
  try {
    return PhaseNoiseMask(std::move(points));
  } catch (const ConfigError& e) {
    throw InputError(path + ": " + e.what());
  }
}

double PhaseNoiseMask::density(double f, MaskExtension below, MaskExtension above) const noexcept {
  if (!(f >= first_offset_hz())) {
    return below == MaskExtension::flat ? db_to_linear(points_.front().dbc_hz) : 0.0;
  }
  if (f > last_offset_hz()) {
    return above == MaskExtension::flat ? db_to_linear(points_.back().dbc_hz) : 0.0;
  }
  // Segment [i-1, i] holding f.
  auto it = std::upper_bound(points_.begin(), points_.end(), f,
                             [](double v, const PhaseNoisePoint& p) { return v < p.offset_hz; });
  if (it == points_.end()) --it;
  const PhaseNoisePoint& b = *it;
  const PhaseNoisePoint& a = *(it - 1);
  const double t = std::log(f / a.offset_hz) / std::log(b.offset_hz / a.offset_hz);
  return db_to_linear(a.dbc_hz + t * (b.dbc_hz - a.dbc_hz));
}

double PhaseNoiseMask::level_dbc_hz(double f) const noexcept { return linear_to_db(density(f)); }

double PhaseNoiseMask::integral(double f_lo, double f_hi) const noexcept {
  const double lo = std::max(f_lo, first_offset_hz());
  const double hi = std::min(f_hi, last_offset_hz());
  if (!(hi > lo)) return 0.0;
  double sum = 0.0;
  for (std::size_t i = 1; i < points_.size(); ++i) {
    const PhaseNoisePoint& a = points_[i - 1];
    const PhaseNoisePoint& b = points_[i];
    const double x0 = std::max(lo, a.offset_hz), x1 = std::min(hi, b.offset_hz);
    if (!(x1 > x0)) continue;
    // L(f) = La (f/fa)^s on the segment; integral over [x0, x1] with u = ln(f/fa):
    // La fa int e^{(s+1) u} du = La fa e^{(s+1) v0} (v1 - v0) expm1((s+1)(v1-v0)) / ((s+1)(v1-v0)).
    const double la = db_to_linear(a.dbc_hz);
    const double s = (b.dbc_hz - a.dbc_hz) / (10.0 * std::log10(b.offset_hz / a.offset_hz));
    const double v0 = std::log(x0 / a.offset_hz), v1 = std::log(x1 / a.offset_hz);
    const double x = s + 1.0;
    sum += la * a.offset_hz * std::exp(x * v0) * (v1 - v0) * expm1_over(x * (v1 - v0));
  }
  return sum;
}

double PhaseNoiseMask::phase_variance() const noexcept {
  return 2.0 * integral(first_offset_hz(), last_offset_hz());
}
double PhaseNoiseMask::rms_phase_rad() const noexcept { return std::sqrt(phase_variance()); }
double PhaseNoiseMask::rms_phase_deg() const noexcept { return rms_phase_rad() * 180.0 / kPi; }

// ---------------------------------------------------------------------------------------------
// Mask-shaped phase noise.

namespace {
constexpr std::size_t kMaxFilterLength = std::size_t{1} << 20;

// Validates the configuration against the mask and returns the filter length N.
std::size_t mask_filter_length(const PhaseNoiseMask& mask, const MaskPhaseNoiseConfig& config) {
  require_range_open_low("sample_rate_hz", config.sample_rate_hz, 0.0, 1e12);
  const double fs = config.sample_rate_hz;
  if (!(mask.first_offset_hz() < 0.5 * fs)) {
    throw ConfigError(
        "sample_rate_hz", format_number(fs),
        "greater than twice the first mask offset (" + format_number(mask.first_offset_hz()) + " Hz)");
  }
  if (config.filter_length != 0) {
    const std::size_t n = config.filter_length;
    if (n < 64 || n > kMaxFilterLength || (n & (n - 1)) != 0) {
      throw ConfigError("filter_length", std::to_string(n), "0 (automatic) or a power of two, 64 to 2^20");
    }
    return n;
  }
  const double want = std::max(256.0, std::ceil(8.0 * fs / mask.first_offset_hz()));
  if (want > static_cast<double>(kMaxFilterLength)) {
    throw ConfigError("sample_rate_hz", format_number(fs),
                      "at most 2^17 x first mask offset (" + format_number(mask.first_offset_hz()) +
                          " Hz), so that fs/N resolves the first offset with N <= 2^20 taps");
  }
  std::size_t n = 256;
  while (static_cast<double>(n) < want) n <<= 1;
  return n;
}
}  // namespace

MaskPhaseNoise::MaskPhaseNoise(const PhaseNoiseMask& mask, const MaskPhaseNoiseConfig& config)
    : mask_(mask),
      config_(config),
      n_(mask_filter_length(mask, config)),
      forward_(2 * n_, FftDirection::forward),
      inverse_(2 * n_, FftDirection::inverse),
      response_(2 * n_),
      work_(2 * n_),
      history_(n_),
      block_(2 * n_),
      used_(2 * n_) {
  const std::size_t n = n_, m = 2 * n_;
  const double fs = config.sample_rate_hz, df = fs / static_cast<double>(n);
  // Frequency-sampled amplitude response on the N-point grid (two-sided, real and even).
  std::vector<cf64> h(n);
  double var = 0.0;
  for (std::size_t k = 0; k < n; ++k) {
    const std::size_t kk = std::min(k, n - k);
    const double f = static_cast<double>(kk) * df;
    const double l = mask_.density(f, config.below_first, config.above_last);
    var += l * df;
    h[k] = cf64(std::sqrt(fs * l), 0.0);
  }
  synth_var_ = var;
  {
    const FftPlanD inv_n(n, FftDirection::inverse);
    inv_n.execute(h, h);
  }
  // Causal taps: circular shift by N/2 (zero-phase response centred in the filter), zero-padded
  // to 2N, transformed once; the 1/N of the design IFFT and the 1/(2N) of the overlap-save IFFT
  // are folded into the stored response.
  std::fill(work_.begin(), work_.end(), cf64(0.0, 0.0));
  for (std::size_t i = 0; i < n; ++i) {
    work_[i] = cf64(h[(i + n / 2) % n].real() / static_cast<double>(n), 0.0);
  }
  forward_.execute(work_, response_);
  const double inv_m = 1.0 / static_cast<double>(m);
  for (cf64& v : response_) v *= inv_m;
}

void MaskPhaseNoise::reset() noexcept {
  primed_ = false;
  used_ = 2 * n_;
}

void MaskPhaseNoise::refill(RandomStream& rng) noexcept {
  const std::size_t n = n_;
  if (!primed_) {
    for (double& v : history_) v = rng.gaussian();
    primed_ = true;
  }
  // Overlap-save for two consecutive blocks at once: the real part carries the input window
  // [history, new1] and the imaginary part [new1, new2]; the filter is real, so both results
  // come back separated in the real and imaginary parts.
  for (std::size_t i = 0; i < n; ++i) {
    const double g = rng.gaussian();
    work_[i] = cf64(history_[i], g);
    work_[n + i] = cf64(g, 0.0);
  }
  for (std::size_t i = 0; i < n; ++i) {
    const double g = rng.gaussian();
    work_[n + i] = cf64(work_[n + i].real(), g);
    history_[i] = g;
  }
  forward_.execute(work_, work_);
  for (std::size_t i = 0; i < 2 * n; ++i) work_[i] *= response_[i];
  inverse_.execute(work_, work_);
  for (std::size_t i = 0; i < n; ++i) {
    block_[i] = work_[n + i].real();
    block_[n + i] = work_[n + i].imag();
  }
  used_ = 0;
}

void MaskPhaseNoise::generate(RandomStream& rng, std::span<double> phase) noexcept {
  std::size_t i = 0;
  while (i < phase.size()) {
    if (used_ == block_.size()) refill(rng);
    const std::size_t take = std::min(phase.size() - i, block_.size() - used_);
    std::copy_n(block_.begin() + static_cast<std::ptrdiff_t>(used_), take,
                phase.begin() + static_cast<std::ptrdiff_t>(i));
    used_ += take;
    i += take;
  }
}

void MaskPhaseNoise::process(RandomStream& rng, std::span<const cf32> in, std::span<cf32> out) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  std::size_t i = 0;
  while (i < in.size()) {
    if (used_ == block_.size()) refill(rng);
    const std::size_t take = std::min(in.size() - i, block_.size() - used_);
    for (std::size_t j = 0; j < take; ++j) out[i + j] = in[i + j] * unit_phasor(block_[used_ + j]);
    used_ += take;
    i += take;
  }
}

}  // namespace qamsight
