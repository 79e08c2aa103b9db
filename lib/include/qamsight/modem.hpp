// modem: constellations with explicit bit labels, mapping and hard slicing.
#pragma once

#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"

namespace qamsight {

/// The family a constellation belongs to; it selects the theory curve and the fast paths.
enum class ConstellationFamily { bpsk, psk, square_qam, custom };

/// A set of points, each with a bit label, scaled to unit average energy.
///
/// Labels are integers in [0, M); the label's bits are sent most significant bit first,
/// so bits b0 b1 ... b(k-1) of a symbol form label b0*2^(k-1) + ... + b(k-1).
///
/// Square M-QAM (M = 4^n) is Gray-mapped per axis: the high k/2 label bits select the
/// in-phase level and the low k/2 bits the quadrature level, each with the binary-reflected
/// Gray code of the level index counted from the most negative amplitude. QPSK is the
/// square 4-QAM. M-PSK places label gray(i) at angle 2 pi i / M. BPSK maps label 0 to -1
/// and label 1 to +1.
///
/// Immutable after construction; safe to share between threads.
class Constellation {
 public:
  /// Built-in constellations by name: bpsk, qpsk, 8psk, 16qam, 64qam, 256qam, 1024qam
  /// (also 4qam as an alias of qpsk). Throws ConfigError for other names.
  static Constellation from_name(std::string_view name);
  /// The names from_name accepts, in order of size.
  static const std::vector<std::string>& builtin_names();

  static Constellation square_qam(unsigned order);
  static Constellation psk(unsigned order);
  static Constellation bpsk();

  /// A user constellation: points and their labels (a permutation of 0..M-1, M a power
  /// of two, M >= 2). Scaled to unit average energy unless normalise is false.
  static Constellation custom(std::string name, std::vector<cf64> points,
                              std::vector<std::uint32_t> labels, bool normalise = true);

  const std::string& name() const noexcept { return name_; }
  ConstellationFamily family() const noexcept { return family_; }
  unsigned order() const noexcept { return static_cast<unsigned>(points_.size()); }
  unsigned bits_per_symbol() const noexcept { return bits_; }
  /// Point of each label: points()[label].
  std::span<const cf64> points() const noexcept { return points_; }
  std::span<const cf32> points_f() const noexcept { return points_f_; }
  double average_energy() const noexcept;
  double peak_energy() const noexcept;
  double min_distance() const noexcept;
  /// Levels per axis for square QAM (sqrt(M)); 0 otherwise.
  unsigned levels_per_axis() const noexcept { return levels_; }
  /// Half the spacing of adjacent levels for square QAM (amplitude of the innermost level).
  double qam_half_spacing() const noexcept { return half_spacing_; }

  /// Labels -> points.
  void map_labels(std::span<const std::uint32_t> labels, std::span<cf32> out) const;
  /// Bits (one per byte, 0 or 1, bits_per_symbol() per symbol) -> points.
  void map_bits(std::span<const std::uint8_t> bits, std::span<cf32> out) const;
  /// Labels -> bits (MSB first).
  void labels_to_bits(std::span<const std::uint32_t> labels, std::span<std::uint8_t> bits) const;
  /// Bits -> labels.
  void bits_to_labels(std::span<const std::uint8_t> bits, std::span<std::uint32_t> labels) const;

  /// Nearest-point hard decisions as labels. Square QAM slices each axis independently
  /// (O(1) per symbol); PSK slices by angle; other constellations search all points.
  void slice(std::span<const cf32> in, std::span<std::uint32_t> labels) const;
  /// Hard decisions as the ideal points (for decision-directed error vectors).
  void slice_points(std::span<const cf32> in, std::span<cf32> out) const;
  /// Reference minimum-distance slicer (exhaustive search), for tests of the fast paths.
  std::uint32_t slice_exhaustive(cf32 sample) const noexcept;

 private:
  Constellation() = default;
  void finish();

  std::string name_;
  ConstellationFamily family_ = ConstellationFamily::custom;
  unsigned bits_ = 0;
  unsigned levels_ = 0;
  double half_spacing_ = 0.0;
  std::vector<cf64> points_;
  std::vector<cf32> points_f_;
  std::vector<std::uint32_t> axis_gray_;  // square QAM: level index -> Gray bits of that axis
};

/// Binary-reflected Gray code of i and its inverse.
constexpr std::uint32_t gray_encode(std::uint32_t i) noexcept { return i ^ (i >> 1); }
constexpr std::uint32_t gray_decode(std::uint32_t g) noexcept {
  for (std::uint32_t s = 1; s < 32; s <<= 1) g ^= g >> s;
  return g;
}

}  // namespace qamsight
