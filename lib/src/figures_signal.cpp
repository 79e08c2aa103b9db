// figures_signal: spectrum (with mask verdict), eye-density and constellation-density figures.
#include "qamsight/figures_signal.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <string>
#include <vector>

namespace qamsight {

namespace {

constexpr double kNan = std::numeric_limits<double>::quiet_NaN();

struct FrequencyUnit {
  double scale;
  const char* name;
};

// The largest unit in which the biggest frequency shown is at least 1.
FrequencyUnit frequency_unit(double largest_hz) {
  const double a = std::fabs(largest_hz);
  if (a >= 1e9) return {1e9, "GHz"};
  if (a >= 1e6) return {1e6, "MHz"};
  if (a >= 1e3) return {1e3, "kHz"};
  return {1.0, "Hz"};
}

std::string fixed(double v, int decimals) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  return buf;
}

// Three significant digits, for notes ("3.91", "39.1", "391").
std::string three_digits(double v) {
  const double a = std::fabs(v);
  const int decimals = a >= 100.0 ? 0 : a >= 10.0 ? 1 : 2;
  return fixed(v, decimals);
}

std::string frequency_text(double hz, bool sign) {
  const FrequencyUnit u = frequency_unit(hz);
  std::string t = three_digits(hz / u.scale) + " " + u.name;
  if (sign && hz > 0.0) t = "+" + t;
  if (hz < 0.0) t = "\u2212" + t.substr(1);  // a true minus sign
  return t;
}

std::string count_text(std::uint64_t n) {
  // Thin-space thousands grouping reads well at figure sizes ("12 480").
  std::string digits = std::to_string(n), out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i > 0 && (digits.size() - i) % 3 == 0) out += "\u2009";
    out += digits[i];
  }
  return out;
}

// The square plot area of a density figure: widen or narrow the picture until the frame is
// as wide as it is tall (margins depend a little on the tick labels, so iterate).
void make_square(plot::Figure& fig, int height) {
  int width = height + 200;
  for (int i = 0; i < 4; ++i) {
    fig.size(width, height);
    const plot::Layout l = fig.layout();
    const int next = width + static_cast<int>(std::lround(l.plot_height - l.plot_width));
    if (next == width) break;
    width = std::clamp(next, 240, 4000);
  }
  fig.size(width, height);
}

}  // namespace

std::string spectrum_svg(const Spectrum& s, const SpectrumFigureOptions& o) {
  const bool density = s.scaling == SpectrumScaling::density;
  const SpectralPeak peak = spectral_peak(s);
  const double peak_db = peak.value > 0.0 ? linear_to_db(peak.value) : kNan;
  const double shift_db = o.relative_to_peak && std::isfinite(peak_db) ? peak_db : 0.0;
  const double shift_hz = o.frequency_shift_hz;
  const double f_lo = -0.5 * s.sample_rate_hz + shift_hz, f_hi = 0.5 * s.sample_rate_hz + shift_hz;
  const FrequencyUnit unit = frequency_unit(std::max(std::fabs(f_lo), std::fabs(f_hi)));

  std::vector<double> x(s.size()), y(s.size());
  std::vector<double> finite_db;
  for (std::size_t k = 0; k < s.size(); ++k) {
    x[k] = (s.frequency_hz[k] + shift_hz) / unit.scale;
    const double v = s.values[k];
    y[k] = v > 0.0 && std::isfinite(v) ? linear_to_db(v) - shift_db : kNan;
    if (std::isfinite(y[k])) finite_db.push_back(y[k]);
  }

  plot::Figure fig(o.title.empty() ? (density ? "Power spectral density" : "Power per bin") : o.title);
  fig.size(o.width, o.height);
  const std::string xname =
      o.frequency_label.empty() ? (shift_hz != 0.0 ? "frequency" : "baseband frequency") : o.frequency_label;
  fig.x_axis({.label = xname + " [" + unit.name + "]", .min = f_lo / unit.scale, .max = f_hi / unit.scale});

  // Mask line and verdict.
  std::vector<double> mx, my;
  std::optional<MaskVerdict> verdict;
  double mask_lo_db = kNan, mask_hi_db = kNan;
  if (o.mask) {
    const SpectralMask& m = *o.mask;
    verdict = mask_check(s, m);
    const double base =
        (m.reference == MaskReference::relative_to_peak ? verdict->reference_db : 0.0) - shift_db;
    if (std::isfinite(base)) {
      const auto put = [&](double offset, double limit) {
        mx.push_back((m.center_hz + offset + shift_hz) / unit.scale);
        my.push_back(base + limit);
        mask_lo_db = std::isnan(mask_lo_db) ? base + limit : std::min(mask_lo_db, base + limit);
        mask_hi_db = std::isnan(mask_hi_db) ? base + limit : std::max(mask_hi_db, base + limit);
      };
      if (m.mirror) {
        for (auto it = m.points.rbegin(); it != m.points.rend(); ++it) put(-it->offset_hz, it->limit_db);
        if (m.points.front().offset_hz > 0.0) {  // no limit around the centre: two pieces
          mx.push_back(kNan);
          my.push_back(kNan);
        }
      }
      for (const MaskPoint& p : m.points) put(p.offset_hz, p.limit_db);
    }
  }

  // Vertical range: the peak plus a little headroom, down to just below the noise floor (the
  // 2nd percentile, so a few deep nulls do not stretch the axis), in 10 dB steps.
  double ymax = o.y_max_db, ymin = o.y_min_db;
  if (!finite_db.empty()) {
    std::sort(finite_db.begin(), finite_db.end());
    const double top = finite_db.back();
    const double floor_db = finite_db[finite_db.size() / 50];
    double hi = 10.0 * std::ceil((top + 3.0) / 10.0);
    double lo = 10.0 * std::floor((floor_db - 5.0) / 10.0);
    if (std::isfinite(mask_hi_db)) hi = std::max(hi, 10.0 * std::ceil((mask_hi_db + 3.0) / 10.0));
    if (std::isfinite(mask_lo_db)) lo = std::min(lo, 10.0 * std::floor((mask_lo_db - 5.0) / 10.0));
    if (!std::isfinite(ymax)) ymax = hi;
    if (!std::isfinite(ymin)) ymin = std::max(lo, ymax - 140.0);
  }
  if (!std::isfinite(ymax)) ymax = std::isfinite(ymin) ? ymin + 100.0 : 0.0;
  if (!std::isfinite(ymin) || ymin >= ymax) ymin = ymax - 100.0;
  if (ymax - ymin < 20.0 && !std::isfinite(o.y_min_db)) ymin = ymax - 20.0;
  const std::string ylabel = o.relative_to_peak ? "level relative to peak [dB]"
                             : density          ? "power spectral density [dB/Hz]"
                                                : "power per bin [dB]";
  fig.y_axis({.label = ylabel, .min = ymin, .max = ymax});

  fig.line(x, y, {.label = o.mask ? "measured" : "", .color = plot::palette_color(0), .line_width = 1.2});
  if (!mx.empty()) {
    fig.line(mx, my, {.label = "mask limit", .color = plot::palette_color(1), .line_width = 1.8});
  }

  // Notes: measurement settings at the top left, the mask verdict below them.
  const double x_left = f_lo / unit.scale, y_top = ymax;
  double dy = 18.0;
  if (o.annotate) {
    std::string t = "RBW " + frequency_text(s.resolution_bandwidth_hz, false) + ", " +
                    std::string(window_display_name(s.window)) + " window, " + count_text(s.segments) +
                    (s.segments == 1 ? " segment" : " averages");
    if (s.overlap > 0.0) t += ", " + fixed(100.0 * s.overlap, 0) + "% overlap";
    fig.text(x_left, y_top, t, {.font_size = 12.0, .dx = 8.0, .dy = dy});
    dy += 18.0;
  }
  if (verdict) {
    std::string t;
    plot::Color c = plot::palette_color(2);
    // Where, as the offset from the mask centre: readable at any carrier frequency.
    const std::string where =
        std::isfinite(verdict->worst_frequency_hz)
            ? frequency_text(verdict->worst_frequency_hz - o.mask->center_hz, true) + " offset"
            : std::string("no bin");
    if (verdict->bins_checked == 0) {
      t = "mask: covers no bin of the spectrum";
      c = plot::Color{90, 90, 90};
    } else if (verdict->pass) {
      t = "mask: PASS, worst margin " + fixed(verdict->worst_margin_db, 1) + " dB at " + where;
    } else {
      t = "mask: FAIL, " + fixed(-verdict->worst_margin_db, 1) + " dB over the limit at " + where;
      c = plot::palette_color(1);
      // Mark the worst bin so the eye finds it at once.
      const auto k = static_cast<std::size_t>(
          std::find(s.frequency_hz.begin(), s.frequency_hz.end(), verdict->worst_frequency_hz) -
          s.frequency_hz.begin());
      if (k < s.size()) {
        const double wx[] = {x[k]}, wy[] = {y[k]};
        fig.points(wx, wy, {.color = c, .marker = plot::Marker::circle, .marker_size = 9.0});
      }
    }
    fig.text(x_left, y_top, t, {.font_size = 13.0, .color = c, .dx = 8.0, .dy = dy});
  }
  return fig.svg();
}

std::string eye_svg(const EyeDiagram& eye, const EyeFigureOptions& o) {
  require_range("EyeFigureOptions.density_decades", o.density_decades, 1.0, 12.0);
  const bool q = o.component == EyeComponent::quadrature;
  if (q && !eye.config().quadrature) {
    throw ConfigError("EyeFigureOptions.component", "quadrature", "in_phase for a diagram without a Q rail");
  }
  const EyeConfig& c = eye.config();
  const auto hist = eye.histogram(o.component);
  double top = 0.0;
  for (double v : hist) top = std::max(top, v);
  plot::HeatMap map;
  map.columns = c.time_bins;
  map.rows = c.amplitude_bins;
  map.values.assign(hist.begin(), hist.end());
  if (top > 0.0) {
    for (double& v : map.values) v /= top;
  }
  map.x_min = -1.0;
  map.x_max = 1.0;
  map.y_min = c.amplitude_min;
  map.y_max = c.amplitude_max;
  map.color_scale = plot::Scale::log10;
  map.value_min = std::pow(10.0, -o.density_decades);
  map.value_max = 1.0;
  map.colorbar_label = "density relative to peak";

  const std::string rail = q ? "quadrature" : "in-phase";
  std::string title = o.title.empty() ? "Eye diagram, " + rail + " rail" : o.title;
  plot::Figure fig(title);
  fig.size(o.width, o.height);
  // The stream facts go with the time axis: the eye fills the plot area, a note would hide it.
  const std::string sps = std::fabs(c.samples_per_symbol - std::round(c.samples_per_symbol)) < 1e-9
                              ? fixed(c.samples_per_symbol, 0)
                              : three_digits(c.samples_per_symbol);
  fig.x_axis({.label = "time from the decision instant [symbol periods]; " + count_text(eye.traces()) +
                       " traces at " + sps + " samples per symbol",
              .min = -1.0,
              .max = 1.0});
  fig.y_axis({.label = rail + " amplitude", .min = c.amplitude_min, .max = c.amplitude_max});
  fig.heatmap(std::move(map));
  fig.legend(plot::LegendPlace::hidden);
  return fig.svg();
}

std::string constellation_svg(const ConstellationDensity& d, const ConstellationFigureOptions& o) {
  require_range("ConstellationFigureOptions.density_decades", o.density_decades, 1.0, 12.0);
  require_range("ConstellationFigureOptions.size", o.size, 240.0, 4000.0);
  const std::size_t n = d.config().bins;
  const double e = d.config().extent;
  std::uint64_t top = 0;
  for (std::uint64_t v : d.counts()) top = std::max(top, v);
  // The colours start at a single count when that is above the decades floor, so a sparse
  // density still uses the whole colour range.
  const double colour_floor =
      top > 0 ? std::max(std::pow(10.0, -o.density_decades), 1.0 / static_cast<double>(top))
              : std::pow(10.0, -o.density_decades);
  plot::HeatMap map;
  map.columns = n;
  map.rows = n;
  map.values.resize(n * n);
  for (std::size_t i = 0; i < n * n; ++i) {
    map.values[i] = top > 0 ? static_cast<double>(d.counts()[i]) / static_cast<double>(top) : 0.0;
  }
  map.x_min = map.y_min = -e;
  map.x_max = map.y_max = e;
  map.color_scale = plot::Scale::log10;
  map.value_min = colour_floor < 1.0 ? colour_floor : 0.1;
  map.value_max = 1.0;
  map.colorbar_label = "density relative to peak";

  plot::Figure fig(o.title.empty() ? "Constellation density" : o.title);
  fig.x_axis({.label = "in-phase", .min = -e, .max = e});
  fig.y_axis({.label = "quadrature", .min = -e, .max = e});
  fig.heatmap(std::move(map));
  if (!o.reference_points.empty()) {
    std::vector<double> px, py;
    for (const cf64& p : o.reference_points) {
      px.push_back(p.real());
      py.push_back(p.imag());
    }
    fig.points(px, py,
               {.label = "ideal points",
                .color = plot::Color{255, 255, 255},
                .marker = plot::Marker::cross,
                .line_width = 1.4,
                .marker_size = 9.0});
  }
  if (!o.error_vectors.empty()) {
    std::vector<double> lx, ly, rx, ry;
    for (const ErrorVectorMark& v : o.error_vectors) {
      lx.insert(lx.end(), {v.ideal.real(), v.received.real(), kNan});
      ly.insert(ly.end(), {v.ideal.imag(), v.received.imag(), kNan});
      rx.push_back(v.received.real());
      ry.push_back(v.received.imag());
    }
    const plot::Color ev = plot::palette_color(1);
    fig.line(lx, ly, {.label = "error vectors", .color = ev, .line_width = 1.8});
    fig.points(rx, ry, {.color = ev, .marker = plot::Marker::circle, .marker_size = 6.0});
  }
  fig.text(-e, e,
           count_text(d.inside()) + " symbols" +
               (d.outside() > 0 ? ", " + count_text(d.outside()) + " outside the view" : ""),
           {.font_size = 12.0, .color = plot::Color{60, 60, 60}, .dx = 8.0, .dy = 16.0});
  make_square(fig, o.size);
  return fig.svg();
}

}  // namespace qamsight
