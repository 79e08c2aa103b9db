// views: eye-diagram and constellation-density accumulators (2-D histograms for figures).
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

#include "qamsight/core.hpp"

namespace qamsight {

/// The rail of a complex signal shown by an eye diagram.
enum class EyeComponent { in_phase, quadrature };

/// Configuration of an EyeDiagram.
struct EyeConfig {
  double samples_per_symbol = 8.0;  ///< 1 to 1024; need not be an integer
  /// Position, in samples from the first sample added, of one decision instant (symbol
  /// centre); the others follow every samples_per_symbol. Any finite value.
  double decision_offset = 0.0;
  std::size_t time_bins = 128;       ///< columns across the two symbol periods, 8 to 4096
  std::size_t amplitude_bins = 128;  ///< rows, 8 to 4096
  double amplitude_min = -1.5;       ///< extent of the rows (amplitude_min < amplitude_max)
  double amplitude_max = 1.5;
  bool quadrature = true;  ///< also accumulate the Q rail (complex input only)
};

/// An eye diagram as a density: the signal around every decision instant, from one symbol
/// period before to one after (time -1 to +1 in symbol periods, 0 at the decision instant),
/// overlaid in a grid of time_bins x amplitude_bins cells.
///
/// The trace between samples is the straight line through them (linear interpolation), and a
/// cell holds the time the trace spends in it, in units of one column's width: each column of
/// each trace adds exactly 1, spread over the cells the line crosses in that column. So steep
/// edges draw as continuous strokes and the eye is smooth even at 2 to 4 samples per symbol,
/// and the total weight of a rail is traces() x time_bins (cells plus outside()).
///
/// Consecutive traces overlap by one symbol period, so every sample appears in two traces.
/// Streaming: add() may be called with any lengths; the last two symbol periods are kept, so
/// the traces are those of one call with the whole stream. A trace that would need samples
/// before the first one added is skipped. add() allocates nothing and does not throw.
/// One thread per instance; merge() combines instances (for example one per thread).
class EyeDiagram {
 public:
  /// Throws ConfigError for values outside the ranges of EyeConfig.
  explicit EyeDiagram(const EyeConfig& config);

  /// Complex samples: the I rail, and Q if configured.
  void add(std::span<const cf32> samples) noexcept;
  /// A real signal (the I rail only); asserts that the diagram has no Q rail.
  void add(std::span<const float> samples) noexcept;
  /// Adds the histograms of another diagram of the same configuration; throws ConfigError
  /// otherwise. The other's stream position is not carried over.
  void merge(const EyeDiagram& other);
  void reset() noexcept;

  const EyeConfig& config() const noexcept { return config_; }
  /// Weights of a rail, row-major: values[row * time_bins + column], row 0 at amplitude_min
  /// (the plot::HeatMap layout). Empty for the Q rail of a diagram without one.
  std::span<const double> histogram(EyeComponent component) const noexcept;
  /// Weight of a rail that fell above or below the amplitude extent.
  double outside(EyeComponent component) const noexcept;
  std::uint64_t traces() const noexcept { return traces_; }

  /// Centre of a column in symbol periods (-1 to 1) and of a row in amplitude units.
  double column_time(std::size_t column) const noexcept;
  double row_amplitude(std::size_t row) const noexcept;

 private:
  template <class Sample>
  void push(std::span<const Sample> samples) noexcept;
  void render(std::int64_t trace) noexcept;
  void render_rail(double position, int rail, std::vector<double>& hist, double& outside) noexcept;

  EyeConfig config_;
  std::vector<double> hist_i_, hist_q_;
  double outside_i_ = 0.0, outside_q_ = 0.0;
  std::uint64_t traces_ = 0;
  std::vector<cf32> ring_;  // the last samples, indexed by absolute sample number & mask
  std::uint64_t ring_mask_ = 0;
  std::uint64_t received_ = 0;  // samples added so far
  std::int64_t next_trace_ = 0;
  std::int64_t first_trace_ = 0;
};

/// Configuration of a ConstellationDensity.
struct ConstellationDensityConfig {
  std::size_t bins = 200;  ///< cells per axis, 2 to 4096
  double extent = 1.5;     ///< the square [-extent, extent)^2 in signal units, > 0
};

/// A constellation as a density: received symbols counted in a square grid of bins x bins
/// cells over [-extent, extent) on both axes (half-open cells, so a point on the upper edge
/// is outside). Counts are integers, so merging in any order gives the same totals.
/// add() allocates nothing and does not throw. One thread per instance.
class ConstellationDensity {
 public:
  /// Throws ConfigError for values outside the ranges of ConstellationDensityConfig.
  explicit ConstellationDensity(const ConstellationDensityConfig& config);

  void add(std::span<const cf32> symbols) noexcept;
  /// Throws ConfigError if the configurations differ.
  void merge(const ConstellationDensity& other);
  void reset() noexcept;

  const ConstellationDensityConfig& config() const noexcept { return config_; }
  /// Counts, row-major: counts[q_bin * bins + i_bin], row 0 at -extent (quadrature upwards,
  /// the plot::HeatMap layout).
  std::span<const std::uint64_t> counts() const noexcept { return counts_; }
  std::uint64_t inside() const noexcept { return inside_; }
  /// Symbols outside the extent or with a non-finite coordinate.
  std::uint64_t outside() const noexcept { return outside_; }
  /// Cell index of a symbol, or -1 if it falls outside.
  std::ptrdiff_t cell_of(cf32 symbol) const noexcept;
  /// Centre of bin i on either axis.
  double bin_center(std::size_t i) const noexcept;

 private:
  ConstellationDensityConfig config_;
  double scale_ = 1.0;  // bins per signal unit
  std::vector<std::uint64_t> counts_;
  std::uint64_t inside_ = 0, outside_ = 0;
};

}  // namespace qamsight
