// figures: waterfall and theory plots on top of the plot module.
#include "qamsight/figures.hpp"

#include <algorithm>
#include <cmath>

#include "qamsight/plot.hpp"
#include "qamsight/theory.hpp"

namespace qamsight {

std::string modulation_display_name(const std::string& m) {
  if (m == "bpsk") return "BPSK";
  if (m == "qpsk" || m == "4qam") return "QPSK";
  if (m.size() > 3 && m.compare(m.size() - 3, 3, "qam") == 0) return m.substr(0, m.size() - 3) + "-QAM";
  if (m.size() > 3 && m.compare(m.size() - 3, 3, "psk") == 0) return m.substr(0, m.size() - 3) + "-PSK";
  return m;
}

namespace {

std::vector<std::string> modulations_of(const SweepResult& r) {
  std::vector<std::string> mods;
  for (const auto& p : r.points)
    if (std::find(mods.begin(), mods.end(), p.spec.modulation) == mods.end()) mods.push_back(p.spec.modulation);
  return mods;
}

}  // namespace

std::string waterfall_svg(const SweepResult& r, const std::string& title) {
  const bool eb = r.config.snr_kind == SnrKind::eb_n0;
  const std::string pct = std::to_string(static_cast<int>(std::lround(100.0 * r.config.confidence)));
  plot::Figure fig(title.empty() ? "Bit error rate in AWGN, Gray mapping" : title);
  // Lowest decade: one below the smallest measured rate (or upper bound), at most 1e-12.
  double lowest = 0.1;
  double xmin = INFINITY, xmax = -INFINITY;
  for (const auto& p : r.points) {
    const double v = p.counts.bit_errors > 0 ? p.ber_low : p.ber_high;
    if (v > 0 && std::isfinite(v)) lowest = std::min(lowest, v);
    const double x = eb ? p.spec.eb_n0_db : p.spec.es_n0_db;
    xmin = std::min(xmin, x);
    xmax = std::max(xmax, x);
  }
  const double ymin = std::max(1e-12, std::pow(10.0, std::floor(std::log10(lowest)) - 0.0));
  fig.y_axis({.label = "bit error rate", .scale = plot::Scale::log10, .min = ymin, .max = 1.0});
  if (!(xmax > xmin)) {
    xmin -= 1.0;
    xmax += 1.0;
  }
  fig.x_axis({.label = eb ? "E_{b}/N_{0} [dB] (information bits)" : "E_{s}/N_{0} [dB] at the matched-filter output",
              .min = std::floor(xmin - 1.0),
              .max = std::ceil(xmax + 1.0)});
  const auto mods = modulations_of(r);
  const std::vector<double> none;
  const plot::Color grey{90, 90, 90};
  fig.line(none, none, {.label = "lines: exact AWGN theory", .color = grey});
  fig.points(none, none, {.label = "markers: simulated, " + pct + "% interval", .color = grey, .marker = plot::Marker::circle});
  for (std::size_t i = 0; i < mods.size(); ++i) {
    const auto& m = mods[i];
    const plot::Color color = plot::palette_color(i);
    if (theory::has_reference(m)) {
      std::vector<double> tx, ty;
      const double k = Constellation::from_name(m).bits_per_symbol();
      const double lo = xmin - 1.0, hi = xmax + 1.0;
      for (int j = 0; j <= 400; ++j) {
        const double x = lo + (hi - lo) * j / 400.0;
        const double ebn0 = eb ? x : theory::eb_n0_db_from_es_n0_db(x, k);
        const double b = theory::ber_for(m, ebn0);
        if (b < ymin * 1e-3) break;
        tx.push_back(x);
        ty.push_back(b);
      }
      fig.line(tx, ty, {.color = color, .line_width = 1.6});
    }
    std::vector<double> x, y;
    plot::ErrorBars bars;
    for (const auto& p : r.points) {
      if (p.spec.modulation != m) continue;
      x.push_back(eb ? p.spec.eb_n0_db : p.spec.es_n0_db);
      y.push_back(p.counts.bit_errors > 0 ? p.ber : std::nan(""));
      bars.low.push_back(p.ber_low);
      bars.high.push_back(p.ber_high);
    }
    fig.points(x, y, {.label = modulation_display_name(m), .color = color}, bars);
  }
  return fig.svg();
}

std::string theory_svg(const std::vector<std::string>& mods, const std::vector<double>& grid) {
  plot::Figure fig("Exact BER in AWGN, Gray mapping");
  fig.x_axis({.label = "E_{b}/N_{0} [dB]"});
  fig.y_axis({.label = "bit error rate", .scale = plot::Scale::log10, .min = 1e-10, .max = 1.0});
  std::vector<double> xs;
  if (!grid.empty()) {
    const double lo = *std::min_element(grid.begin(), grid.end());
    const double hi = *std::max_element(grid.begin(), grid.end());
    for (int j = 0; j <= 400; ++j) xs.push_back(lo + (hi - lo) * j / 400.0);
  }
  for (std::size_t i = 0; i < mods.size(); ++i) {
    std::vector<double> x, y;
    for (double e : xs) {
      const double b = theory::ber_for(mods[i], e);
      if (b < 1e-13) break;
      x.push_back(e);
      y.push_back(b);
    }
    fig.line(x, y, {.label = modulation_display_name(mods[i]), .color = plot::palette_color(i)});
  }
  return fig.svg();
}

}  // namespace qamsight
