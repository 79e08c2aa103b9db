// figures_signal: SVG figures of measured signals: spectra with masks, eye diagrams, constellations.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "qamsight/plot.hpp"
#include "qamsight/spectrum.hpp"
#include "qamsight/views.hpp"

namespace qamsight {

/// Options of spectrum_svg().
struct SpectrumFigureOptions {
  std::string title{};  ///< default "Power spectral density" / "Power per bin"
  /// Drawn as a limit line, checked with mask_check() and reported as a PASS/FAIL note with
  /// the worst margin and where it occurs.
  std::optional<SpectralMask> mask{};
  /// Plot dB relative to the spectrum's largest value instead of dB of its own units.
  bool relative_to_peak = false;
  double y_min_db = plot::kAuto;  ///< kAuto: the noise floor less a few dB, at most 140 dB
  double y_max_db = plot::kAuto;  ///< below the peak; kAuto: above the peak, in 10 dB steps
  /// Added to the frequencies shown (for example a carrier frequency, to label the axis in RF
  /// terms); the unit (Hz, kHz, MHz, GHz) follows the largest frequency shown.
  double frequency_shift_hz = 0.0;
  std::string frequency_label{};  ///< default "frequency" (shifted) or "baseband frequency"
  bool annotate = true;           ///< note RBW, window and number of averages
  int width = 860;
  int height = 520;
};

/// The spectrum in dB over the full two-sided band, with the optional mask. The y axis reads
/// dB/Hz for a density and dB for power per bin (0 dB = unit power), or dB relative to the
/// peak. Bins of zero power are left out of the line.
std::string spectrum_svg(const Spectrum& spectrum, const SpectrumFigureOptions& options = {});

/// Options of eye_svg().
struct EyeFigureOptions {
  std::string title{};  ///< default "Eye diagram, in-phase" / "Eye diagram, quadrature"
  EyeComponent component = EyeComponent::in_phase;
  /// The log colour scale spans this many decades below the densest cell (fainter cells get
  /// the lowest colour, so rare excursions stay visible; empty cells stay blank). 1 to 12.
  double density_decades = 4.0;
  int width = 760;
  int height = 520;
};

/// The eye diagram as a density heat map: time in symbol periods (-1 to 1, the decision
/// instant at 0) across, amplitude up, colour the weight of each cell relative to the
/// densest one on a log scale.
std::string eye_svg(const EyeDiagram& eye, const EyeFigureOptions& options = {});

/// A received symbol and its ideal point, drawn as an error vector.
struct ErrorVectorMark {
  cf32 received{};
  cf32 ideal{};
};

/// Options of constellation_svg().
struct ConstellationFigureOptions {
  std::string title{};                           ///< default "Constellation density"
  std::vector<cf64> reference_points{};          ///< ideal points, drawn as small crosses
  std::vector<ErrorVectorMark> error_vectors{};  ///< a handful of symbols, drawn as arrows
  /// As in EyeFigureOptions, but the colours start no lower than a single count, so a sparse
  /// density still spans the whole colour range.
  double density_decades = 3.0;
  int size = 640;  ///< height in px; the plot area is square
};

/// The constellation density as a heat map over the density's square extent (log colour
/// relative to the densest cell), ideal points overlaid as crosses, error vectors from the
/// ideal point to the received symbol.
std::string constellation_svg(const ConstellationDensity& density,
                              const ConstellationFigureOptions& options = {});

}  // namespace qamsight
