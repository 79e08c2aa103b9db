// modem: built-in and custom constellations, mapping, and hard slicing.
#include "qamsight/modem.hpp"

#include "qamsight/detail/kernels.hpp"

#include <algorithm>
#include <bit>
#include <cmath>
#include <numbers>
#include <numeric>

namespace qamsight {

namespace {
bool is_power_of_two(std::size_t m) { return m >= 2 && (m & (m - 1)) == 0; }
}  // namespace

const std::vector<std::string>& Constellation::builtin_names() {
  static const std::vector<std::string> names = {"bpsk",  "qpsk",   "8psk",   "16qam",
                                                 "64qam", "256qam", "1024qam"};
  return names;
}

Constellation Constellation::from_name(std::string_view name) {
  if (name == "bpsk") return bpsk();
  if (name == "qpsk" || name == "4qam") return square_qam(4);
  if (name == "8psk") return psk(8);
  if (name == "16qam") return square_qam(16);
  if (name == "64qam") return square_qam(64);
  if (name == "256qam") return square_qam(256);
  if (name == "1024qam") return square_qam(1024);
  std::string allowed;
  for (const auto& n : builtin_names()) allowed += (allowed.empty() ? "" : ", ") + n;
  throw ConfigError("modulation", "'" + std::string(name) + "'", allowed);
}

Constellation Constellation::square_qam(unsigned order) {
  const unsigned bits = static_cast<unsigned>(std::countr_zero(order));
  if (order < 4 || !is_power_of_two(order) || bits % 2 != 0 || bits > 20) {
    throw ConfigError("qam order", std::to_string(order), "4^n for n = 1..10 (4, 16, ..., 1048576)");
  }
  Constellation c;
  c.name_ = order == 4 ? "qpsk" : std::to_string(order) + "qam";
  c.family_ = ConstellationFamily::square_qam;
  c.bits_ = bits;
  c.levels_ = 1u << (bits / 2);
  const unsigned L = c.levels_;
  c.half_spacing_ = std::sqrt(3.0 / (2.0 * (order - 1.0)));
  c.axis_gray_.resize(L);
  for (unsigned i = 0; i < L; ++i) c.axis_gray_[i] = gray_encode(i);
  c.points_.assign(order, cf64{});
  const unsigned half = bits / 2;
  for (unsigned ii = 0; ii < L; ++ii) {
    for (unsigned iq = 0; iq < L; ++iq) {
      const std::uint32_t label = (gray_encode(ii) << half) | gray_encode(iq);
      c.points_[label] = cf64((2.0 * ii - (L - 1.0)) * c.half_spacing_,
                              (2.0 * iq - (L - 1.0)) * c.half_spacing_);
    }
  }
  c.finish();
  return c;
}

Constellation Constellation::psk(unsigned order) {
  if (order < 4 || !is_power_of_two(order) || order > 1024) {
    throw ConfigError("psk order", std::to_string(order), "a power of two from 4 to 1024");
  }
  Constellation c;
  c.name_ = std::to_string(order) + "psk";
  c.family_ = ConstellationFamily::psk;
  c.bits_ = static_cast<unsigned>(std::countr_zero(order));
  c.points_.assign(order, cf64{});
  for (unsigned i = 0; i < order; ++i) {
    c.points_[gray_encode(i)] = std::polar(1.0, 2.0 * std::numbers::pi * i / order);
  }
  c.finish();
  return c;
}

Constellation Constellation::bpsk() {
  Constellation c;
  c.name_ = "bpsk";
  c.family_ = ConstellationFamily::bpsk;
  c.bits_ = 1;
  c.points_ = {cf64(-1.0, 0.0), cf64(1.0, 0.0)};
  c.finish();
  return c;
}

Constellation Constellation::custom(std::string name, std::vector<cf64> points,
                                    std::vector<std::uint32_t> labels, bool normalise) {
  const std::size_t m = points.size();
  if (!is_power_of_two(m) || m > (1u << 16)) {
    throw ConfigError("points", std::to_string(m) + " points", "a power of two from 2 to 65536");
  }
  if (labels.size() != m) {
    throw ConfigError("labels", std::to_string(labels.size()) + " labels",
                      "one label per point (" + std::to_string(m) + ")");
  }
  std::vector<bool> seen(m, false);
  for (auto l : labels) {
    if (l >= m || seen[l]) {
      throw ConfigError("labels", std::to_string(l),
                        "a permutation of 0.." + std::to_string(m - 1) + " (each label once)");
    }
    seen[l] = true;
  }
  double energy = 0.0;
  for (const auto& p : points) {
    if (!std::isfinite(p.real()) || !std::isfinite(p.imag())) {
      throw ConfigError("points", "non-finite point", "finite complex values");
    }
    energy += std::norm(p);
  }
  energy /= static_cast<double>(m);
  if (!(energy > 0.0)) throw ConfigError("points", "all zero", "at least one non-zero point");
  Constellation c;
  c.name_ = name.empty() ? "custom" : std::move(name);
  c.family_ = ConstellationFamily::custom;
  c.bits_ = static_cast<unsigned>(std::countr_zero(m));
  c.points_.assign(m, cf64{});
  const double scale = normalise ? 1.0 / std::sqrt(energy) : 1.0;
  for (std::size_t i = 0; i < m; ++i) c.points_[labels[i]] = points[i] * scale;
  c.finish();
  return c;
}

void Constellation::finish() {
  points_f_.resize(points_.size());
  std::transform(points_.begin(), points_.end(), points_f_.begin(),
                 [](cf64 p) { return cf32(static_cast<float>(p.real()), static_cast<float>(p.imag())); });
}

double Constellation::average_energy() const noexcept {
  double e = 0.0;
  for (const auto& p : points_) e += std::norm(p);
  return e / static_cast<double>(points_.size());
}

double Constellation::peak_energy() const noexcept {
  double e = 0.0;
  for (const auto& p : points_) e = std::max(e, std::norm(p));
  return e;
}

double Constellation::min_distance() const noexcept {
  double d2 = INFINITY;
  for (std::size_t i = 0; i < points_.size(); ++i)
    for (std::size_t j = i + 1; j < points_.size(); ++j) d2 = std::min(d2, std::norm(points_[i] - points_[j]));
  return std::sqrt(d2);
}

void Constellation::map_labels(std::span<const std::uint32_t> labels, std::span<cf32> out) const {
  QAMSIGHT_ASSERT(out.size() >= labels.size(), "output shorter than input");
  // Vectorised table lookup (detail/kernels.hpp), identical on every path.
  detail::kernels().map_labels(labels.data(), labels.size(), order() - 1,
                               reinterpret_cast<const float*>(points_f_.data()), reinterpret_cast<float*>(out.data()));
}

void Constellation::bits_to_labels(std::span<const std::uint8_t> bits,
                                   std::span<std::uint32_t> labels) const {
  QAMSIGHT_ASSERT(bits.size() % bits_ == 0, "bit count is not a multiple of bits per symbol");
  QAMSIGHT_ASSERT(labels.size() >= bits.size() / bits_, "label buffer too short");
  const std::size_t n = bits.size() / bits_;
  for (std::size_t s = 0; s < n; ++s) {
    std::uint32_t l = 0;
    for (unsigned b = 0; b < bits_; ++b) l = (l << 1) | (bits[s * bits_ + b] & 1u);
    labels[s] = l;
  }
}

void Constellation::labels_to_bits(std::span<const std::uint32_t> labels,
                                   std::span<std::uint8_t> bits) const {
  QAMSIGHT_ASSERT(bits.size() >= labels.size() * bits_, "bit buffer too short");
  for (std::size_t s = 0; s < labels.size(); ++s)
    for (unsigned b = 0; b < bits_; ++b)
      bits[s * bits_ + b] = static_cast<std::uint8_t>((labels[s] >> (bits_ - 1 - b)) & 1u);
}

void Constellation::map_bits(std::span<const std::uint8_t> bits, std::span<cf32> out) const {
  QAMSIGHT_ASSERT(bits.size() % bits_ == 0, "bit count is not a multiple of bits per symbol");
  const std::size_t n = bits.size() / bits_;
  QAMSIGHT_ASSERT(out.size() >= n, "output shorter than symbol count");
  for (std::size_t s = 0; s < n; ++s) {
    std::uint32_t l = 0;
    for (unsigned b = 0; b < bits_; ++b) l = (l << 1) | (bits[s * bits_ + b] & 1u);
    out[s] = points_f_[l];
  }
}

std::uint32_t Constellation::slice_exhaustive(cf32 sample) const noexcept {
  std::uint32_t best = 0;
  float best_d = INFINITY;
  for (std::uint32_t l = 0; l < points_f_.size(); ++l) {
    const float d = std::norm(sample - points_f_[l]);
    if (d < best_d) {
      best_d = d;
      best = l;
    }
  }
  return best;
}

void Constellation::slice(std::span<const cf32> in, std::span<std::uint32_t> labels) const {
  QAMSIGHT_ASSERT(labels.size() >= in.size(), "label buffer too short");
  const std::size_t n = in.size();
  switch (family_) {
    case ConstellationFamily::square_qam:
      // Level index = floor((x/d + L)/2), clamped: decision boundaries sit at even x/d. The
      // kernel clamps before truncating, which equals the floor of the clamped coordinate.
      detail::kernels().slice_square_qam(reinterpret_cast<const float*>(in.data()), n,
                                         static_cast<float>(1.0 / half_spacing_), levels_, bits_ / 2,
                                         labels.data());
      break;
    case ConstellationFamily::bpsk:
      for (std::size_t i = 0; i < n; ++i) labels[i] = in[i].real() >= 0.0f ? 1u : 0u;
      break;
    case ConstellationFamily::psk: {
      const double m = order();
      const double k = m / (2.0 * std::numbers::pi);
      const auto mask = static_cast<long>(order() - 1);
      for (std::size_t i = 0; i < n; ++i) {
        const double a = std::atan2(static_cast<double>(in[i].imag()), static_cast<double>(in[i].real()));
        const long idx = std::lround(a * k) & mask;
        labels[i] = gray_encode(static_cast<std::uint32_t>(idx));
      }
      break;
    }
    case ConstellationFamily::custom:
      for (std::size_t i = 0; i < n; ++i) labels[i] = slice_exhaustive(in[i]);
      break;
  }
}

void Constellation::slice_points(std::span<const cf32> in, std::span<cf32> out) const {
  QAMSIGHT_ASSERT(out.size() >= in.size(), "output shorter than input");
  constexpr std::size_t kChunk = 256;
  std::uint32_t labels[kChunk];
  for (std::size_t i = 0; i < in.size(); i += kChunk) {
    const std::size_t m = std::min(kChunk, in.size() - i);
    slice(in.subspan(i, m), std::span<std::uint32_t>(labels, m));
    for (std::size_t j = 0; j < m; ++j) out[i + j] = points_f_[labels[j]];
  }
}

}  // namespace qamsight
