// sync: decision-directed / pilot-aided second-order carrier phase tracker at symbol rate.
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <string>

#include "qamsight/sync.hpp"

namespace qamsight {

namespace {
constexpr double kPi = std::numbers::pi;

inline double wrap_pi(double p) noexcept {
  if (p > kPi || p <= -kPi) p = std::remainder(p, 2.0 * kPi);
  if (p <= -kPi) p += 2.0 * kPi;
  return p;
}
}  // namespace

namespace {

// Posterior weights exp(d_i - max d), d_i = -|y - s_i|^2 / n0, skipping terms below e^-40.
constexpr double kSkipBelow = -40.0;

// Per-axis posterior mean over the levels (2 l - L + 1) a, l = 0 .. L - 1.
double axis_mean(double y, unsigned levels, double a, double n0) noexcept {
  // The nearest level has the largest exponent.
  const double pos = std::clamp(std::round((y / a + (levels - 1)) / 2.0), 0.0, static_cast<double>(levels - 1));
  const double nearest = (2.0 * pos - (levels - 1)) * a;
  const double dmax = -(y - nearest) * (y - nearest) / n0;
  double num = 0.0, den = 0.0;
  for (unsigned l = 0; l < levels; ++l) {
    const double x = (2.0 * l - (levels - 1.0)) * a;
    const double d = -(y - x) * (y - x) / n0 - dmax;
    if (d < kSkipBelow) continue;
    const double w = std::exp(d);
    num += w * x;
    den += w;
  }
  return num / den;
}

}  // namespace

cf64 soft_symbol(const Constellation& c, cf64 y, double n0) noexcept {
  if (c.family() == ConstellationFamily::square_qam) {
    const unsigned levels = c.levels_per_axis();
    const double a = c.qam_half_spacing();
    return {axis_mean(y.real(), levels, a, n0), axis_mean(y.imag(), levels, a, n0)};
  }
  const auto pts = c.points();
  double dmax = -std::numeric_limits<double>::infinity();
  for (const cf64& s : pts) dmax = std::max(dmax, -std::norm(y - s) / n0);
  cf64 num{};
  double den = 0.0;
  for (const cf64& s : pts) {
    const double d = -std::norm(y - s) / n0 - dmax;
    if (d < kSkipBelow) continue;
    const double w = std::exp(d);
    num += w * s;
    den += w;
  }
  return num / den;
}

PhaseLoopGains phase_loop_gains(double loop_bandwidth, double damping, unsigned order) {
  require_range_open_low("loop_bandwidth", loop_bandwidth, 0.0, 0.25);
  if (order != 1 && order != 2) throw ConfigError("order", std::to_string(order), "1 or 2");
  PhaseLoopGains g;
  if (order == 1) {
    g.kp = 4.0 * loop_bandwidth / (1.0 + 2.0 * loop_bandwidth);
    return g;
  }
  require_range("damping", damping, 0.25, 4.0);
  const double theta = loop_bandwidth / (damping + 0.25 / damping);
  const double d = 1.0 + 2.0 * damping * theta + theta * theta;
  g.kp = 4.0 * damping * theta / d;
  g.ki = 4.0 * theta * theta / d;
  return g;
}

PhaseTracker::PhaseTracker(const PhaseTrackerConfig& config, const Constellation& constellation)
    : config_(config), constellation_(constellation) {
  require_range_open_low("loop_bandwidth", config.loop_bandwidth, 0.0, 0.1);
  require_range("damping", config.damping, 0.25, 4.0);
  if (config.order != 1 && config.order != 2) {
    throw ConfigError("order", std::to_string(config.order), "1 or 2");
  }
  require_range("pilot_period", static_cast<double>(config.pilot_period), 0.0, 1048576.0);
  require_range("preamble_symbols", static_cast<double>(config.preamble_symbols), 0.0, 1073741824.0);
  require_range("initial_phase_rad", config.initial_phase_rad, -kPi, kPi);
  require_range("initial_frequency_rad", config.initial_frequency_rad, -kPi / 8.0, kPi / 8.0);
  if (config.detector == PhaseDetector::soft) {
    require_range_open_low("noise_variance", config.noise_variance, 0.0, 1e9);
  }
  symbol_gains_ = phase_loop_gains(config.loop_bandwidth, config.damping, config.order);
  pilot_gains_ = symbol_gains_;
  if (!config.decisions_between_pilots) {
    if (config.pilot_period == 0) {
      throw ConfigError("decisions_between_pilots", "false", "true unless pilot_period > 0");
    }
    const double b = config.loop_bandwidth * static_cast<double>(config.pilot_period);
    if (b > 0.1) {
      throw ConfigError("pilot_period", std::to_string(config.pilot_period),
                        "at most 0.1 / loop_bandwidth = " + format_number(0.1 / config.loop_bandwidth) +
                            " for the pilots-only loop (B_L P T <= 0.1)");
    }
    pilot_gains_ = phase_loop_gains(b, config.damping, config.order);
  }
  reset();
}

void PhaseTracker::reset() noexcept {
  theta_ = config_.initial_phase_rad;
  omega_ = config_.initial_frequency_rad;
  index_ = 0;
  error_sq_ = 0.0;
  updates_ = 0;
}

void PhaseTracker::set_noise_variance(double n0) {
  if (config_.detector == PhaseDetector::soft) require_range_open_low("noise_variance", n0, 0.0, 1e9);
  config_.noise_variance = n0;
}

double PhaseTracker::error_rms_rad() const noexcept {
  if (updates_ == 0) return std::numeric_limits<double>::quiet_NaN();
  return std::sqrt(error_sq_ / static_cast<double>(updates_));
}

void PhaseTracker::process(std::span<const cf32> in, std::span<cf32> out, std::span<const cf32> reference,
                           std::span<double> phase_estimate) noexcept {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  QAMSIGHT_ASSERT(phase_estimate.empty() || phase_estimate.size() >= in.size(),
                  "phase estimate buffer shorter than input");
  const std::uint64_t period = config_.pilot_period, preamble = config_.preamble_symbols;
  const bool decisions = config_.decisions_between_pilots;
  const bool soft = config_.detector == PhaseDetector::soft;
  const std::span<const cf32> points = constellation_.points_f();
  const double pilot_u = period > 0 ? static_cast<double>(period) : 1.0;
  double theta = theta_, omega = omega_, esq = 0.0;
  std::uint64_t updates = 0;
  for (std::size_t i = 0; i < in.size(); ++i) {
    const std::uint64_t k = index_ + i;
    const bool in_preamble = k < preamble;
    const bool pilot = period > 0 && k % period == 0;
    const cf64 rot = std::polar(1.0, -theta);
    const cf32 y = in[i] * cf32(static_cast<float>(rot.real()), static_cast<float>(rot.imag()));
    if (!phase_estimate.empty()) phase_estimate[i] = theta;
    const bool known = in_preamble || pilot;
    if (known || decisions) {
      cf64 d;
      if (known) {
        QAMSIGHT_ASSERT(i < reference.size(), "reference symbols missing for a pilot or preamble symbol");
        d = cf64(reference[i]);
      } else if (soft) {
        d = soft_symbol(constellation_, cf64(y), config_.noise_variance);
      } else {
        std::uint32_t label = 0;
        constellation_.slice(std::span<const cf32>(&y, 1), std::span<std::uint32_t>(&label, 1));
        d = cf64(points[label]);
      }
      const cf64 z = cf64(y) * std::conj(d);
      double e;
      if (soft) {
        e = z.imag();
      } else {
        e = (z.real() == 0.0 && z.imag() == 0.0) ? 0.0 : std::arg(z);
      }
      // Pilot updates of the pilots-only loop come once per period and use its own gains.
      const bool sparse = !decisions && !in_preamble;
      const PhaseLoopGains& g = sparse ? pilot_gains_ : symbol_gains_;
      omega += g.ki * e / (sparse ? pilot_u : 1.0);
      theta += g.kp * e;
      esq += e * e;
      ++updates;
    }
    out[i] = y;
    theta = wrap_pi(theta + omega);
  }
  theta_ = theta;
  omega_ = omega;
  index_ += in.size();
  error_sq_ += esq;
  updates_ += updates;
}

}  // namespace qamsight
