// evm_figures: SVG figures of an EVM measurement: constellation with error vectors, EVM per symbol.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string>
#include <vector>

#include "qamsight/evm.hpp"
#include "qamsight/plot.hpp"

namespace qamsight {

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

std::string fixed(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  return buf;
}

void check_inputs(const EvmMeasurement& m, const EvmFigureOptions& o) {
  const std::size_t n = m.symbols;
  if (n == 0 || m.error_vectors.size() != n || m.corrected.size() != n || m.references.size() != n) {
    throw ConfigError("error_vectors", std::to_string(m.error_vectors.size()) + " of " + std::to_string(n) + " symbols",
                      "a measurement made with keep_error_vectors (one per symbol, at least one symbol)");
  }
  if (o.max_points < 100 || o.max_points > 1000000) {
    throw ConfigError("max_points", std::to_string(o.max_points), "100 to 1000000");
  }
  if (o.max_vectors > 100000) throw ConfigError("max_vectors", std::to_string(o.max_vectors), "0 to 100000");
  if (!(m.normalisation_power > 0.0) || !std::isfinite(m.normalisation_power)) {
    throw ConfigError("normalisation_power", fixed(m.normalisation_power, 6), "finite and > 0");
  }
}

// Evenly spaced indices into [0, n), at most `count` of them, always with `must` (if < n), sorted.
std::vector<std::size_t> thinned(std::size_t n, std::size_t count, std::size_t must) {
  std::vector<std::size_t> idx;
  if (count == 0 || n == 0) return idx;
  const std::size_t k = std::min(n, count);
  idx.reserve(k + 1);
  for (std::size_t i = 0; i < k; ++i) {
    idx.push_back(static_cast<std::size_t>((static_cast<long double>(i) * n) / k));
  }
  if (must < n) idx.push_back(must);
  std::sort(idx.begin(), idx.end());
  idx.erase(std::unique(idx.begin(), idx.end()), idx.end());
  return idx;
}

std::string thinning_note(std::size_t drawn, std::size_t n) {
  return drawn < n ? " (" + std::to_string(drawn) + " of " + std::to_string(n) + " symbols drawn)" : std::string();
}

std::string mode_text(const EvmMeasurement& m) { return m.data_aided ? "data-aided" : "decision-directed"; }

}  // namespace

std::string evm_constellation_svg(const EvmMeasurement& m, const Constellation& c, const EvmFigureOptions& o) {
  check_inputs(m, o);
  const std::size_t n = m.symbols;
  // Everything in units of sqrt(P_ref), so that the ideal points sit where the EVM percentages
  // are measured from (for the library's unit-energy constellations this changes nothing).
  const double unit = 1.0 / std::sqrt(m.normalisation_power);
  const std::vector<std::size_t> pts = thinned(n, o.max_points, m.peak_index);
  const std::vector<std::size_t> vec = thinned(n, o.max_vectors, o.max_vectors > 0 ? m.peak_index : n);

  std::vector<double> zx, zy;
  zx.reserve(pts.size());
  zy.reserve(pts.size());
  double extent = 0.0;
  for (std::size_t i : pts) {
    const double x = m.corrected[i].real() * unit, y = m.corrected[i].imag() * unit;
    if (!std::isfinite(x) || !std::isfinite(y)) continue;
    zx.push_back(x);
    zy.push_back(y);
    extent = std::max({extent, std::fabs(x), std::fabs(y)});
  }
  std::vector<double> px, py;
  for (const cf64& p : c.points()) {
    px.push_back(p.real() * unit);
    py.push_back(p.imag() * unit);
    extent = std::max({extent, std::fabs(p.real() * unit), std::fabs(p.imag() * unit)});
  }
  // Error vectors as one broken polyline: reference, corrected, gap.
  std::vector<double> ex, ey;
  ex.reserve(3 * vec.size());
  ey.reserve(3 * vec.size());
  for (std::size_t i : vec) {
    ex.push_back(m.references[i].real() * unit);
    ey.push_back(m.references[i].imag() * unit);
    ex.push_back(m.corrected[i].real() * unit);
    ey.push_back(m.corrected[i].imag() * unit);
    ex.push_back(kNan);
    ey.push_back(kNan);
  }
  const double peak_x[] = {m.corrected[m.peak_index].real() * unit};
  const double peak_y[] = {m.corrected[m.peak_index].imag() * unit};

  if (!(extent > 0.0) || !std::isfinite(extent)) extent = 1.0;
  const double lim = 1.12 * extent;
  std::string title = o.title;
  if (title.empty()) {
    title = c.name() + " constellation, " + mode_text(m) + " RMS EVM " + fixed(m.rms_pct, 2) + " % (" +
            fixed(m.rms_db, 1) + " dB)";
  }
  plot::Figure fig(title);
  fig.size(860, 680)
      .x_axis({.label = "in-phase", .min = -lim, .max = lim})
      .y_axis({.label = "quadrature", .min = -lim, .max = lim})
      .legend(plot::LegendPlace::outside_right);
  fig.points(zx, zy,
             {.label = "measured" + thinning_note(pts.size(), n), .color = plot::palette_color(0),
              .marker = plot::Marker::circle, .marker_size = 3.0, .opacity = 0.45});
  if (!vec.empty()) {
    fig.line(ex, ey,
             {.label = "error vectors (" + std::to_string(vec.size()) + ")", .color = plot::palette_color(1),
              .marker = plot::Marker::none, .line_width = 1.0, .opacity = 0.8});
  }
  fig.points(px, py,
             {.label = "ideal points", .color = plot::palette_color(6), .marker = plot::Marker::cross,
              .marker_size = 9.0});
  fig.points(peak_x, peak_y,
             {.label = "peak " + fixed(m.peak_pct, 1) + " % (symbol " + std::to_string(m.peak_index) + ")",
              .color = plot::palette_color(3), .marker = plot::Marker::diamond, .marker_size = 11.0});
  return fig.svg();
}

std::string evm_symbols_svg(const EvmMeasurement& m, const EvmFigureOptions& o) {
  check_inputs(m, o);
  const std::size_t n = m.symbols;
  const double scale = 100.0 / std::sqrt(m.normalisation_power);
  const std::vector<std::size_t> pts = thinned(n, o.max_points, m.peak_index);
  std::vector<double> x, y;
  x.reserve(pts.size());
  y.reserve(pts.size());
  for (std::size_t i : pts) {
    x.push_back(static_cast<double>(i));
    y.push_back(std::abs(cf64(m.error_vectors[i])) * scale);
  }
  // Block RMS over about 200 blocks: the trend (drifts, bursts) that single symbols hide.
  const std::size_t block = std::max<std::size_t>(1, (n + 199) / 200);
  std::vector<double> bx, by;
  for (std::size_t start = 0; start < n; start += block) {
    const std::size_t end = std::min(n, start + block);
    double sum = 0.0;
    for (std::size_t i = start; i < end; ++i) sum += std::norm(cf64(m.error_vectors[i]));
    bx.push_back(0.5 * static_cast<double>(start + end - 1));
    by.push_back(std::sqrt(sum / static_cast<double>(end - start)) * scale);
  }
  const double peak_x[] = {static_cast<double>(m.peak_index)};
  const double peak_y[] = {std::abs(cf64(m.error_vectors[m.peak_index])) * scale};

  double top = peak_y[0];
  const bool limit = std::isfinite(o.limit_pct) && o.limit_pct > 0.0;
  if (limit) top = std::max(top, o.limit_pct);
  if (!(top > 0.0) || !std::isfinite(top)) top = 1.0;
  std::string title = o.title;
  if (title.empty()) title = "EVM per symbol, " + mode_text(m) + " (" + std::to_string(n) + " symbols)";
  plot::Figure fig(title);
  fig.size(900, 520)
      .x_axis({.label = "symbol index", .min = 0.0, .max = static_cast<double>(std::max<std::size_t>(n, 2) - 1)})
      .y_axis({.label = "EVM [%]", .min = 0.0, .max = 1.08 * top})
      .legend(plot::LegendPlace::outside_right);
  fig.points(x, y,
             {.label = "per symbol" + thinning_note(pts.size(), n), .color = plot::palette_color(5),
              .marker = plot::Marker::circle, .marker_size = 3.0, .opacity = 0.5});
  fig.line(bx, by,
           {.label = "RMS of " + std::to_string(block) + "-symbol blocks", .color = plot::palette_color(0),
            .marker = plot::Marker::none, .line_width = 2.0});
  fig.points(peak_x, peak_y,
             {.label = "peak " + fixed(m.peak_pct, 2) + " % (symbol " + std::to_string(m.peak_index) + ")",
              .color = plot::palette_color(3), .marker = plot::Marker::diamond, .marker_size = 11.0});
  fig.hline(m.rms_pct, {.label = "RMS EVM " + fixed(m.rms_pct, 2) + " %", .color = plot::palette_color(6),
                        .dash = plot::Dash::dashed, .line_width = 1.5});
  if (limit) {
    fig.hline(o.limit_pct, {.label = "limit " + fixed(o.limit_pct, 2) + " %", .color = plot::palette_color(1),
                            .dash = plot::Dash::solid, .line_width = 2.0});
  }
  return fig.svg();
}

}  // namespace qamsight
