// plot: standalone SVG 1.1 figures (x-y series, log axes, heat maps, bars) for reports and the CLI.
#pragma once

#include <cstddef>
#include <cstdint>
#include <limits>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"

// Every qamsight figure (BER waterfalls, spectra with masks, eye diagrams, constellation
// densities, EVM budgets, MODCOD against elevation) is one Figure: a title, one set of axes
// and the layers drawn in it. A Figure is a plain value: build it with the chained setters,
// copy it, and call svg() as often as needed (the output is a pure function of the contents).
//
//   std::vector<double> ebn0 = ..., ber = ..., lo = ..., hi = ...;
//   std::string svg = plot::Figure("Square QAM in AWGN")
//       .x_axis({.label = "E_{b}/N_{0} [dB]"})
//       .y_axis({.label = "BER", .scale = plot::Scale::log10, .min = 1e-7, .max = 1})
//       .line(ebn0, ber, {.label = "16-QAM theory", .color = plot::palette_color(1)})
//       .points(ebn0, ber, {.label = "16-QAM simulated", .color = plot::palette_color(1)},
//               {.low = lo, .high = hi})
//       .hline(1e-6, {.label = "target BER"})
//       .svg();
//   plot::write_svg_file("waterfall.svg", svg);
//
// Conventions
// - Sizes are CSS pixels (SVG user units). Fonts are 'DejaVu Sans', Verdana, sans-serif; the
//   layout estimates text widths from DejaVu Sans advance widths (Verdana's are nearly the
//   same, Arial's and Helvetica's narrower), so margins hold the labels on any of them.
// - Text (titles, labels, legend entries, notes) is XML-escaped. Two markups are recognised:
//   "^{...}" raises its content as a superscript and "_{...}" lowers it as a subscript
//   (for example "E_{b}/N_{0}" or "10^{-3}"). Control characters and malformed UTF-8 are
//   replaced, so any byte string gives well-formed output.
// - Points that cannot be drawn are skipped and never reach the SVG: non-finite coordinates,
//   magnitudes above 1e300, and on a log axis values below 1e-300 (so every value <= 0).
//   A skipped point breaks a line into separate pieces. Empty series are allowed (they
//   still get a legend entry).
// - All data layers are clipped to the plot area, geometrically (lines, bands and cells are
//   cut at the frame, so coordinates stay bounded) and by an SVG clipPath.
// - The only ids in the output are "<prefix>-plot-area" (the clipPath), "<prefix>-heatmap",
//   "<prefix>-colorbar" and "<prefix>-legend". The prefix defaults to "qs" plus a hash of the
//   figure's drawing, so different figures inlined into one HTML page do not share ids (up
//   to a 32-bit hash collision); set id_prefix() explicitly to inline the same figure twice.
// - Heat-map files grow with the number of colour runs: one <rect> (about 70 bytes) per run
//   of equal colour in a row. Bin data to about one cell per pixel or coarser.
// - svg() returns the <svg> element alone (no XML declaration, which XML 1.0 does not require
//   for UTF-8), so the string is both a valid standalone .svg file and clean to inline.
//
// Threading: a Figure is a value with no shared state; distinct figures may be built and
// rendered on different threads.
namespace qamsight::detail {
class PlotRenderer;
}  // namespace qamsight::detail

namespace qamsight::plot {

/// Marks an axis limit or a colour limit as automatic.
inline constexpr double kAuto = std::numeric_limits<double>::quiet_NaN();

/// An opaque sRGB colour.
struct Color {
  std::uint8_t r = 0;
  std::uint8_t g = 0;
  std::uint8_t b = 0;

  /// "#rrggbb", lower case.
  std::string hex() const;
  friend bool operator==(const Color&, const Color&) = default;
};

/// Parses "#rrggbb" or "#rgb"; throws ConfigError otherwise.
Color color_from_hex(std::string_view hex);

/// Series colour number `index` of the default qualitative palette, cycling after seven.
/// The colours are Okabe and Ito's colour-universal-design set (2008), chosen to stay
/// distinct under the common colour-vision deficiencies, without its yellow (too faint
/// as a thin line on white): blue, vermillion, bluish green, reddish purple, orange,
/// sky blue, black.
Color palette_color(std::size_t index) noexcept;

/// The viridis colormap (S. van der Walt and N. Smith, 2015; perceptually uniform and
/// readable in grey scale) at t in [0, 1] (clamped; NaN gives the t = 0 colour). 256 levels,
/// level floor(256 t) capped at 255, the same quantisation as the published table.
Color viridis(double t) noexcept;

enum class Scale { linear, log10 };
enum class Dash { solid, dashed, dotted, dash_dot };
/// Marker shapes. `automatic` means none for lines, steps and bands, and for points the
/// shapes circle, square, triangle, diamond, cross in turn (one per points series).
enum class Marker { automatic, none, circle, square, triangle, diamond, cross };
/// Where the legend goes. `automatic` picks the inside corner that covers no data, trying
/// top-right, top-left, bottom-left, bottom-right, and places the legend outside to the
/// right of the plot when every corner would cover data.
enum class LegendPlace { automatic, top_right, top_left, bottom_right, bottom_left, outside_right, hidden };
/// Decade labels of a log axis: "10" with a raised exponent, or plain numbers
/// ("0.01" ... "1000") with "1e-3" style outside that range.
enum class LogLabels { superscript, e_notation };
/// A step line holds each value after its x (post, like a lookup table of thresholds) or
/// before it (pre).
enum class StepAt { post, pre };
enum class Anchor { start, middle, end };

/// One axis. Limits left at kAuto are found from the data and rounded outwards to the
/// outer ticks (linear) or to whole decades (log); a heat map's edges are used exactly.
struct Axis {
  std::string label{};
  Scale scale = Scale::linear;
  double min = kAuto;
  double max = kAuto;
  bool grid = true;
  LogLabels log_labels = LogLabels::superscript;
};

/// Appearance of one series.
struct Style {
  std::string label{};           ///< legend text; empty keeps the series out of the legend
  std::optional<Color> color{};  ///< default: palette_color(number of series added before)
  Dash dash = Dash::solid;
  Marker marker = Marker::automatic;
  double line_width = 1.8;     ///< px
  double marker_size = 8.0;    ///< px, the marker's width
  double opacity = 1.0;        ///< of strokes and markers (low values for eye traces)
  double fill_opacity = 0.22;  ///< of the fill of band() and area()
};

/// Vertical error bars: absolute low and high ends per point (not offsets), for example
/// the ends of a confidence interval. On a log axis a low end <= 0 or below the axis is
/// drawn down to the axis bottom with an arrowhead: the bar then shows an upper bound only.
/// A point whose own value cannot be drawn (a zero error count) still shows its bar.
struct ErrorBars {
  std::vector<double> low{};
  std::vector<double> high{};
};

/// A horizontal or vertical reference line across the plot area (a limit, a target).
struct RefLine {
  std::string label{};           ///< written beside the line, inside the plot area
  std::optional<Color> color{};  ///< default dark grey
  Dash dash = Dash::dashed;
  double line_width = 1.3;
};

/// A text annotation placed at a data coordinate.
struct Note {
  Anchor anchor = Anchor::start;
  double font_size = 12.0;
  std::optional<Color> color{};  ///< default dark grey
  double dx = 0.0;               ///< pixel offset from the data point (right positive)
  double dy = 0.0;               ///< pixel offset from the data point (down positive)
};

/// A grid of values drawn as coloured cells with a colour bar beside the plot (constellation
/// density, eye-diagram density). Cells of equal colour that touch along a row are written
/// as one rectangle. Non-finite values, and values <= 0 with log colours, are left blank.
struct HeatMap {
  std::size_t columns = 0;
  std::size_t rows = 0;
  std::vector<double> values{};  ///< row-major, rows * columns; row 0 is at y_min
  double x_min = 0.0;            ///< outer edges of the grid in data units
  double x_max = 1.0;
  double y_min = 0.0;
  double y_max = 1.0;
  Scale color_scale = Scale::linear;
  double value_min = kAuto;  ///< colour limits; kAuto: the data range
  double value_max = kAuto;
  std::string colorbar_label{};
};

/// One group of a bar chart: a value per category.
struct BarGroup {
  std::string label{};           ///< legend text (the legend appears with two or more groups)
  std::vector<double> values{};  ///< one per category; non-finite values draw no bar
  std::optional<Color> color{};  ///< default palette_color(group index)
};

/// A bar chart. Bars start at zero (at the axis bottom on a log value axis). With
/// horizontal bars the value axis is the x axis and the categories run top to bottom in
/// the given order; with vertical bars the value axis is y and categories run left to right.
/// Several groups give grouped bars side by side within each category.
struct Bars {
  std::vector<std::string> categories{};
  std::vector<BarGroup> groups{};
  bool horizontal = true;
  bool value_labels = true;  ///< write each value at the end of its bar
  int value_decimals = 1;
  std::string value_suffix{};  ///< appended to value labels, for example " %"
};

/// Resolved geometry of a figure: where data coordinates land in the picture. Pixel
/// coordinates grow right and down from the figure's top-left corner.
struct Layout {
  double plot_left = 0.0;
  double plot_top = 0.0;
  double plot_width = 0.0;
  double plot_height = 0.0;
  // Axis limits after automatic rounding. In a bar chart the category axis runs from -0.5
  // to categories - 0.5 with category k at k (for horizontal bars category 0 is at the top,
  // so y_min is drawn at the top edge there).
  double x_min = 0.0;
  double x_max = 1.0;
  double y_min = 0.0;
  double y_max = 1.0;
  std::vector<double> x_ticks{};  ///< labelled tick values
  std::vector<double> y_ticks{};
  LegendPlace legend = LegendPlace::hidden;  ///< the placement used (never automatic)
};

/// Linear ticks at multiples of a "nice" step (1, 2 or 5 times a power of ten).
struct LinearTicks {
  double lo = 0.0;  ///< range covered (extended to the outer ticks if asked)
  double hi = 1.0;
  double step = 1.0;
  std::vector<double> values{};       ///< each the double nearest to its decimal value
  std::vector<std::string> labels{};  ///< same decimals for all, no float noise ("0.3")
};

/// Ticks for [lo, hi]: the smallest nice step that gives at most max_ticks ticks. With
/// extend the range grows to the enclosing multiples of the step (auto limits); without,
/// only the multiples inside [lo, hi] are kept. Labels switch to "2.5e6" style when the
/// values reach 1e6 or the step is below 1e-4. Throws ConfigError unless lo < hi are finite
/// and max_ticks >= 2.
LinearTicks nice_ticks(double lo, double hi, int max_ticks, bool extend = true);

/// The powers of ten inside [lo, hi] (0 < lo < hi), each the double nearest to 10^k.
std::vector<double> decade_ticks(double lo, double hi);

/// A figure with one set of axes. See the notes at the top of this header.
class Figure {
 public:
  explicit Figure(std::string title = {});

  Figure& title(std::string title);
  /// Picture size in px (default 760 x 520); each in 240..4000, else ConfigError.
  Figure& size(int width, int height);
  /// Axis settings. Throws ConfigError for limits that cannot work (non-positive on a log
  /// axis, min >= max).
  Figure& x_axis(Axis axis);
  Figure& y_axis(Axis axis);
  Figure& legend(LegendPlace place);
  /// Prefix of the ids in the output: a letter, then letters, digits, '_' or '-'.
  Figure& id_prefix(std::string prefix);

  // x-y layers. Data are copied. x and y (and low/high) must have equal lengths, else
  // ConfigError; bars() and the x-y layers cannot be mixed in one figure (ConfigError).
  /// A polyline through the points (markers too if style.marker names a shape).
  Figure& line(std::span<const double> x, std::span<const double> y, Style style = {});
  /// Markers at the points, with optional error bars (empty ErrorBars: none).
  Figure& points(std::span<const double> x, std::span<const double> y, Style style = {},
                 ErrorBars errors = {});
  /// A step line (MODCOD against elevation, a spectral mask given by its segments).
  Figure& step(std::span<const double> x, std::span<const double> y, Style style = {},
               StepAt at = StepAt::post);
  /// The area between two curves, filled, with its outline (a confidence band, a mask).
  Figure& band(std::span<const double> x, std::span<const double> low, std::span<const double> high,
               Style style = {});
  /// The area between a curve and the bottom of the plot, filled, with the curve drawn.
  Figure& area(std::span<const double> x, std::span<const double> y, Style style = {});
  /// Reference lines at a finite data value (ConfigError otherwise). In a bar chart only
  /// lines across the value axis are allowed.
  Figure& hline(double y, RefLine line = {});
  Figure& vline(double x, RefLine line = {});
  /// Text at a data point (skipped if the point is outside the plot area).
  Figure& text(double x, double y, std::string text, Note note = {});
  /// The heat-map layer, drawn beneath the series; a second call replaces the first.
  /// Throws ConfigError if values.size() != rows * columns or the edges are not increasing.
  Figure& heatmap(HeatMap map);
  /// Makes this figure a bar chart; a second call replaces the first. Throws ConfigError
  /// if a group does not have one value per category.
  Figure& bars(Bars chart);

  /// Where everything goes; svg() draws with exactly this geometry.
  Layout layout() const;
  /// The complete <svg> element.
  std::string svg() const;

 private:
  friend class ::qamsight::detail::PlotRenderer;
  enum class Kind { line, points, step, band, area };
  struct Series {
    Kind kind = Kind::line;
    std::vector<double> x{}, y{}, y2{};
    Style style{};
    Color color{};
    Marker marker = Marker::none;
    ErrorBars errors{};
    StepAt step_at = StepAt::post;
  };
  struct Ref {
    bool horizontal = true;
    double value = 0.0;
    RefLine line{};
  };
  struct Text {
    double x = 0.0, y = 0.0;
    std::string text{};
    Note note{};
  };
  struct Content {
    std::string title{};
    int width = 760;
    int height = 520;
    Axis x{}, y{};
    LegendPlace legend = LegendPlace::automatic;
    std::string id_prefix{};
    std::vector<Series> series{};
    std::vector<Ref> refs{};
    std::vector<Text> texts{};
    std::optional<HeatMap> heatmap{};
    std::optional<Bars> bars{};
    std::size_t points_series = 0;  // for the automatic marker cycle
  };

  Series& add_series(Kind kind, std::span<const double> x, std::span<const double> y, Style style);
  Content c_;
};

/// Writes an SVG (or any text) to `path` atomically: the bytes go to a temporary file in
/// the same directory, which is renamed over `path` only when completely written, so a
/// failed run never leaves a truncated file. Throws InputError naming the path on failure
/// (and removes the temporary file).
void write_svg_file(const std::string& path, const std::string& svg);

}  // namespace qamsight::plot
