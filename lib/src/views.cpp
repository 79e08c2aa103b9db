// views: eye-diagram density by exact time-in-cell of the interpolated trace; constellation counts.
#include "qamsight/views.hpp"

#include <algorithm>
#include <bit>
#include <cmath>
#include <string>
#include <type_traits>

namespace qamsight {

namespace {

EyeConfig validated(const EyeConfig& c) {
  require_range("EyeConfig.samples_per_symbol", c.samples_per_symbol, 1.0, 1024.0);
  require_range("EyeConfig.decision_offset", c.decision_offset, -1e12, 1e12);
  require_range("EyeConfig.time_bins", static_cast<double>(c.time_bins), 8.0, 4096.0);
  require_range("EyeConfig.amplitude_bins", static_cast<double>(c.amplitude_bins), 8.0, 4096.0);
  require_range("EyeConfig.amplitude_min", c.amplitude_min, -1e30, 1e30);
  require_range("EyeConfig.amplitude_max", c.amplitude_max, -1e30, 1e30);
  if (!(c.amplitude_max > c.amplitude_min)) {
    throw ConfigError("EyeConfig.amplitude_max", format_number(c.amplitude_max),
                      "above amplitude_min = " + format_number(c.amplitude_min));
  }
  return c;
}

bool same(const EyeConfig& a, const EyeConfig& b) noexcept {
  return a.samples_per_symbol == b.samples_per_symbol && a.decision_offset == b.decision_offset &&
         a.time_bins == b.time_bins && a.amplitude_bins == b.amplitude_bins &&
         a.amplitude_min == b.amplitude_min && a.amplitude_max == b.amplitude_max &&
         a.quadrature == b.quadrature;
}

}  // namespace

EyeDiagram::EyeDiagram(const EyeConfig& config) : config_(validated(config)) {
  const std::size_t cells = config_.time_bins * config_.amplitude_bins;
  hist_i_.assign(cells, 0.0);
  if (config_.quadrature) hist_q_.assign(cells, 0.0);
  // A trace reads samples floor(p - sps) .. floor(p + sps) + 1 around its decision instant p.
  const auto span = static_cast<std::uint64_t>(std::ceil(2.0 * config_.samples_per_symbol)) + 4;
  ring_.assign(std::bit_ceil(span), cf32{});
  ring_mask_ = ring_.size() - 1;
  const double sps = config_.samples_per_symbol;
  auto m = static_cast<std::int64_t>(std::ceil((sps - config_.decision_offset) / sps));
  while (config_.decision_offset + static_cast<double>(m) * sps - sps < 0.0) ++m;
  while (config_.decision_offset + static_cast<double>(m - 1) * sps - sps >= 0.0) --m;
  first_trace_ = next_trace_ = m;
}

void EyeDiagram::render_rail(double p, int rail, std::vector<double>& hist, double& outside) noexcept {
  const double sps = config_.samples_per_symbol;
  const std::size_t columns = config_.time_bins, rows = config_.amplitude_bins;
  const double rows_d = static_cast<double>(rows);
  const double scale = rows_d / (config_.amplitude_max - config_.amplitude_min);
  const double amin = config_.amplitude_min;
  const double dt = 2.0 / static_cast<double>(columns);
  // Row coordinate of the interpolated trace at fractional sample position s.
  const auto at = [&](double s) {
    const double fl = std::floor(s);
    const double f = s - fl;
    const auto i = static_cast<std::uint64_t>(fl);
    const cf32 a = ring_[i & ring_mask_], b = ring_[(i + 1) & ring_mask_];
    const double va = rail == 0 ? a.real() : a.imag();
    const double vb = rail == 0 ? b.real() : b.imag();
    return (va + (vb - va) * f - amin) * scale;
  };
  // Spreads weight w evenly over the row interval between u0 and u1 in one column.
  const auto spread = [&](std::size_t col, double u0, double u1, double w) {
    const double lo = std::min(u0, u1), hi = std::max(u0, u1);
    if (!std::isfinite(lo) || !std::isfinite(hi)) {
      outside += w;
      return;
    }
    if (hi - lo <= 1e-9) {
      if (lo >= 0.0 && lo < rows_d) {
        hist[std::min(static_cast<std::size_t>(lo), rows - 1) * columns + col] += w;
      } else {
        outside += w;
      }
      return;
    }
    const double clo = std::max(lo, 0.0), chi = std::min(hi, rows_d);
    if (!(chi > clo)) {
      outside += w;
      return;
    }
    const double density = w / (hi - lo);
    const auto j0 = static_cast<std::size_t>(clo);
    const auto j1 = std::min(static_cast<std::size_t>(std::ceil(chi)), rows);
    for (std::size_t j = j0; j < j1; ++j) {
      const double overlap =
          std::min(chi, static_cast<double>(j + 1)) - std::max(clo, static_cast<double>(j));
      if (overlap > 0.0) hist[j * columns + col] += density * overlap;
    }
    outside += w * (1.0 - (chi - clo) / (hi - lo));
  };
  double s0 = p - sps;
  double u0 = at(s0);
  for (std::size_t col = 0; col < columns; ++col) {
    // The last edge is exactly p + sps, the latest position the ring is known to hold.
    const double s_end = col + 1 == columns ? p + sps : p + (-1.0 + dt * static_cast<double>(col + 1)) * sps;
    const double width = s_end - s0;
    // The column's stretch of trace is straight between samples: one piece per sample gap.
    double a = s0, ua = u0;
    while (a < s_end) {
      const double knot = std::floor(a) + 1.0;
      const double b = knot < s_end ? knot : s_end;
      const double ub = at(b);
      spread(col, ua, ub, (b - a) / width);
      a = b;
      ua = ub;
    }
    s0 = s_end;
    u0 = ua;
  }
}

void EyeDiagram::render(std::int64_t m) noexcept {
  const double p = config_.decision_offset + static_cast<double>(m) * config_.samples_per_symbol;
  render_rail(p, 0, hist_i_, outside_i_);
  if (config_.quadrature) render_rail(p, 1, hist_q_, outside_q_);
  ++traces_;
}

template <class Sample>
void EyeDiagram::push(std::span<const Sample> samples) noexcept {
  const double sps = config_.samples_per_symbol;
  const auto last_needed = [&](std::int64_t m) {
    const double p = config_.decision_offset + static_cast<double>(m) * sps;
    return static_cast<std::uint64_t>(std::floor(p + sps)) + 1;
  };
  std::uint64_t ready_at = last_needed(next_trace_);
  for (const Sample& x : samples) {
    if constexpr (std::is_same_v<Sample, float>) {
      ring_[received_ & ring_mask_] = cf32(x, 0.0f);
    } else {
      ring_[received_ & ring_mask_] = x;
    }
    ++received_;
    while (ready_at < received_) {
      render(next_trace_);
      ++next_trace_;
      ready_at = last_needed(next_trace_);
    }
  }
}

void EyeDiagram::add(std::span<const cf32> samples) noexcept { push(samples); }

void EyeDiagram::add(std::span<const float> samples) noexcept {
  QAMSIGHT_ASSERT(!config_.quadrature, "a real signal has no Q rail: set EyeConfig.quadrature = false");
  push(samples);
}

void EyeDiagram::merge(const EyeDiagram& other) {
  if (!same(config_, other.config_)) {
    throw ConfigError("EyeDiagram::merge", "a diagram with another configuration", "the same EyeConfig");
  }
  for (std::size_t i = 0; i < hist_i_.size(); ++i) hist_i_[i] += other.hist_i_[i];
  for (std::size_t i = 0; i < hist_q_.size(); ++i) hist_q_[i] += other.hist_q_[i];
  outside_i_ += other.outside_i_;
  outside_q_ += other.outside_q_;
  traces_ += other.traces_;
}

void EyeDiagram::reset() noexcept {
  std::fill(hist_i_.begin(), hist_i_.end(), 0.0);
  std::fill(hist_q_.begin(), hist_q_.end(), 0.0);
  std::fill(ring_.begin(), ring_.end(), cf32{});
  outside_i_ = outside_q_ = 0.0;
  traces_ = 0;
  received_ = 0;
  next_trace_ = first_trace_;
}

std::span<const double> EyeDiagram::histogram(EyeComponent c) const noexcept {
  return c == EyeComponent::in_phase ? std::span<const double>(hist_i_) : std::span<const double>(hist_q_);
}

double EyeDiagram::outside(EyeComponent c) const noexcept {
  return c == EyeComponent::in_phase ? outside_i_ : outside_q_;
}

double EyeDiagram::column_time(std::size_t column) const noexcept {
  return -1.0 + (static_cast<double>(column) + 0.5) * 2.0 / static_cast<double>(config_.time_bins);
}

double EyeDiagram::row_amplitude(std::size_t row) const noexcept {
  return config_.amplitude_min + (static_cast<double>(row) + 0.5) *
                                     (config_.amplitude_max - config_.amplitude_min) /
                                     static_cast<double>(config_.amplitude_bins);
}

// ---------------------------------------------------------------------------------------------

ConstellationDensity::ConstellationDensity(const ConstellationDensityConfig& config) : config_(config) {
  require_range("ConstellationDensityConfig.bins", static_cast<double>(config.bins), 2.0, 4096.0);
  require_range_open_low("ConstellationDensityConfig.extent", config.extent, 0.0, 1e30);
  scale_ = static_cast<double>(config_.bins) / (2.0 * config_.extent);
  counts_.assign(config_.bins * config_.bins, 0);
}

std::ptrdiff_t ConstellationDensity::cell_of(cf32 s) const noexcept {
  const double n = static_cast<double>(config_.bins);
  const double u = (static_cast<double>(s.real()) + config_.extent) * scale_;
  const double v = (static_cast<double>(s.imag()) + config_.extent) * scale_;
  if (!(u >= 0.0 && u < n && v >= 0.0 && v < n)) return -1;
  const std::size_t i = std::min(static_cast<std::size_t>(u), config_.bins - 1);
  const std::size_t q = std::min(static_cast<std::size_t>(v), config_.bins - 1);
  return static_cast<std::ptrdiff_t>(q * config_.bins + i);
}

void ConstellationDensity::add(std::span<const cf32> symbols) noexcept {
  for (const cf32& s : symbols) {
    const std::ptrdiff_t cell = cell_of(s);
    if (cell < 0) {
      ++outside_;
    } else {
      ++counts_[static_cast<std::size_t>(cell)];
      ++inside_;
    }
  }
}

void ConstellationDensity::merge(const ConstellationDensity& other) {
  if (other.config_.bins != config_.bins || other.config_.extent != config_.extent) {
    throw ConfigError("ConstellationDensity::merge", "a density with another configuration",
                      "the same bins and extent");
  }
  for (std::size_t i = 0; i < counts_.size(); ++i) counts_[i] += other.counts_[i];
  inside_ += other.inside_;
  outside_ += other.outside_;
}

void ConstellationDensity::reset() noexcept {
  std::fill(counts_.begin(), counts_.end(), 0);
  inside_ = outside_ = 0;
}

double ConstellationDensity::bin_center(std::size_t i) const noexcept {
  return -config_.extent + (static_cast<double>(i) + 0.5) / scale_;
}

}  // namespace qamsight
