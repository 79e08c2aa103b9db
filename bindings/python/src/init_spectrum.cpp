// init_spectrum: Welch PSD of complex baseband samples and the band measurements on a spectrum.
#include "bindings.hpp"
#include "qamsight/spectrum.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

void init_spectrum(py::module_& m) {
  py::enum_<WindowKind>(m, "WindowKind", "Periodic data windows (rectangular, hann, blackman_harris4, flat_top).")
      .value("rectangular", WindowKind::rectangular)
      .value("hann", WindowKind::hann)
      .value("blackman_harris4", WindowKind::blackman_harris4)
      .value("flat_top", WindowKind::flat_top);
  m.def("window_name", [](WindowKind k) { return std::string(window_name(k)); }, "kind"_a,
        "'rectangular', 'hann', 'blackman-harris4', 'flat-top'.");
  m.def("window_display_name", [](WindowKind k) { return std::string(window_display_name(k)); }, "kind"_a);
  m.def("window_from_name", &window_from_name, "name"_a, "Parses a window_name(); ConfigError otherwise.");
  m.def(
      "window_coefficients",
      [](WindowKind k, std::size_t size) { return vector_to_array(window_coefficients(k, size)); }, "kind"_a,
      "size"_a, "The periodic window of length size (float64 array).");
  py::class_<WindowProperties>(m, "WindowProperties", "Figures of merit of a window (Harris 1978, Table I).")
      .def_readonly("coherent_gain", &WindowProperties::coherent_gain)
      .def_readonly("enbw_bins", &WindowProperties::enbw_bins)
      .def_readonly("scalloping_loss_db", &WindowProperties::scalloping_loss_db);
  m.def("window_properties", &window_properties, "kind"_a, "size"_a);

  py::enum_<SpectrumScaling>(m, "SpectrumScaling", "density (power/Hz) or power_per_bin (tones).")
      .value("density", SpectrumScaling::density)
      .value("power_per_bin", SpectrumScaling::power_per_bin);
  py::class_<Spectrum>(m, "Spectrum",
                       "An averaged two-sided spectrum: bins from -fs/2 ascending. frequency_hz and values are\n"
                       "read-only float64 views of the spectrum's own buffers.")
      .def_property_readonly(
          "frequency_hz",
          [](py::object self) { return readonly_view<double>(self.cast<const Spectrum&>().frequency_hz, self); })
      .def_property_readonly(
          "values", [](py::object self) { return readonly_view<double>(self.cast<const Spectrum&>().values, self); })
      .def_readonly("scaling", &Spectrum::scaling)
      .def_readonly("sample_rate_hz", &Spectrum::sample_rate_hz)
      .def_readonly("bin_spacing_hz", &Spectrum::bin_spacing_hz)
      .def_readonly("resolution_bandwidth_hz", &Spectrum::resolution_bandwidth_hz)
      .def_readonly("window", &Spectrum::window)
      .def_readonly("window_properties", &Spectrum::window_properties)
      .def_readonly("segments", &Spectrum::segments)
      .def_readonly("overlap", &Spectrum::overlap)
      .def_readonly("equivalent_dof", &Spectrum::equivalent_dof)
      .def("size", &Spectrum::size)
      .def("__len__", &Spectrum::size)
      .def(
          "density",
          [](const Spectrum& s, std::size_t k) {
            if (k >= s.size()) throw py::index_error("bin " + std::to_string(k) + " of " + std::to_string(s.size()));
            return s.density(k);
          },
          "k"_a, "Value of bin k as a density (power per Hz), whatever the scaling.");

  py::class_<WelchConfig>(m, "WelchConfig", "Welch settings: fft_size 2..2^22, 0 <= overlap < 1, window, fs > 0.")
      .def(py::init([](std::size_t fft_size, double overlap, WindowKind window, double sample_rate_hz) {
             return WelchConfig{fft_size, overlap, window, sample_rate_hz};
           }),
           "fft_size"_a = 1024, "overlap"_a = 0.5, "window"_a = WindowKind::hann, "sample_rate_hz"_a = 1.0)
      .def_readwrite("fft_size", &WelchConfig::fft_size)
      .def_readwrite("overlap", &WelchConfig::overlap)
      .def_readwrite("window", &WelchConfig::window)
      .def_readwrite("sample_rate_hz", &WelchConfig::sample_rate_hz);
  py::class_<WelchEstimator>(m, "WelchEstimator",
                             "Welch's averaged modified periodogram (Welch 1967), streaming over add() calls.")
      .def(py::init<const WelchConfig&>(), "config"_a)
      .def(
          "add",
          [](WelchEstimator& self, py::handle samples) {
            auto in = input_array<cf32>(samples, "samples");
            auto si = const_span(in);
            py::gil_scoped_release nogil;
            self.add(si);
          },
          "samples"_a, "Appends complex64 samples to the stream.")
      .def("merge", &WelchEstimator::merge, "other"_a, "Adds the periodograms of an estimator of the same config.")
      .def("reset", &WelchEstimator::reset)
      .def("psd", &WelchEstimator::psd, "The density estimate.")
      .def("power_per_bin", &WelchEstimator::power_per_bin, "The power-per-bin estimate.")
      .def("spectrum", &WelchEstimator::spectrum, "scaling"_a)
      .def_property_readonly("config", &WelchEstimator::config)
      .def_property_readonly("hop", &WelchEstimator::hop)
      .def_property_readonly("segments", &WelchEstimator::segments)
      .def_property_readonly("properties", &WelchEstimator::properties)
      .def("resolution_bandwidth_hz", &WelchEstimator::resolution_bandwidth_hz)
      .def("equivalent_dof", &WelchEstimator::equivalent_dof);

  m.def("band_power", &band_power, "spectrum"_a, "low_hz"_a, "high_hz"_a,
        "Power in [low_hz, high_hz] with fractional edge bins (periodic in fs).");
  m.def("total_power", &total_power, "spectrum"_a);
  py::class_<SpectralPeak>(m, "SpectralPeak", "The largest bin: index, frequency, value.")
      .def_readonly("bin", &SpectralPeak::bin)
      .def_readonly("frequency_hz", &SpectralPeak::frequency_hz)
      .def_readonly("value", &SpectralPeak::value);
  m.def(
      "spectral_peak",
      [](const Spectrum& s, std::optional<double> low_hz, std::optional<double> high_hz) {
        if (low_hz.has_value() != high_hz.has_value()) {
          throw py::value_error("spectral_peak: give both low_hz and high_hz, or neither");
        }
        return low_hz ? spectral_peak(s, *low_hz, *high_hz) : spectral_peak(s);
      },
      "spectrum"_a, "low_hz"_a = py::none(), "high_hz"_a = py::none(),
      "The largest bin, within [low_hz, high_hz] if given.");
  py::class_<OccupiedBandwidth>(m, "OccupiedBandwidth", "Symmetric-tail occupied bandwidth and its limits.")
      .def_readonly("bandwidth_hz", &OccupiedBandwidth::bandwidth_hz)
      .def_readonly("lower_hz", &OccupiedBandwidth::lower_hz)
      .def_readonly("upper_hz", &OccupiedBandwidth::upper_hz)
      .def_readonly("total_power", &OccupiedBandwidth::total_power);
  m.def("occupied_bandwidth", &occupied_bandwidth, "spectrum"_a, "fraction"_a = 0.99);
  py::class_<AdjacentChannels>(m, "AdjacentChannels", "Main channel and one neighbour on each side.")
      .def(py::init([](double bandwidth_hz, double spacing_hz, double center_hz) {
             return AdjacentChannels{bandwidth_hz, spacing_hz, center_hz};
           }),
           "bandwidth_hz"_a = 1.0, "spacing_hz"_a = 1.0, "center_hz"_a = 0.0)
      .def_readwrite("bandwidth_hz", &AdjacentChannels::bandwidth_hz)
      .def_readwrite("spacing_hz", &AdjacentChannels::spacing_hz)
      .def_readwrite("center_hz", &AdjacentChannels::center_hz);
  py::class_<AdjacentChannelPower>(m, "AdjacentChannelPower", "Channel powers and ACPRs (dB).")
      .def_readonly("main_power", &AdjacentChannelPower::main_power)
      .def_readonly("lower_power", &AdjacentChannelPower::lower_power)
      .def_readonly("upper_power", &AdjacentChannelPower::upper_power)
      .def_readonly("lower_db", &AdjacentChannelPower::lower_db)
      .def_readonly("upper_db", &AdjacentChannelPower::upper_db);
  m.def("adjacent_channel_power", &adjacent_channel_power, "spectrum"_a, "channels"_a);

  py::enum_<MaskReference>(m, "MaskReference", "What mask limits are relative to.")
      .value("absolute", MaskReference::absolute)
      .value("relative_to_peak", MaskReference::relative_to_peak);
  py::class_<MaskPoint>(m, "MaskPoint", "One corner of a mask's limit line.")
      .def(py::init([](double offset_hz, double limit_db) { return MaskPoint{offset_hz, limit_db}; }),
           "offset_hz"_a = 0.0, "limit_db"_a = 0.0)
      .def_readwrite("offset_hz", &MaskPoint::offset_hz)
      .def_readwrite("limit_db", &MaskPoint::limit_db);
  py::class_<SpectralMask>(m, "SpectralMask", "A limit line, straight in dB between points, optionally mirrored.")
      .def(py::init([](std::vector<MaskPoint> points, MaskReference reference, double center_hz, bool mirror) {
             return SpectralMask{std::move(points), reference, center_hz, mirror};
           }),
           "points"_a = std::vector<MaskPoint>{}, "reference"_a = MaskReference::relative_to_peak,
           "center_hz"_a = 0.0, "mirror"_a = true)
      .def_readwrite("points", &SpectralMask::points)
      .def_readwrite("reference", &SpectralMask::reference)
      .def_readwrite("center_hz", &SpectralMask::center_hz)
      .def_readwrite("mirror", &SpectralMask::mirror);
  m.def(
      "mask_limit_db",
      [](const SpectralMask& mask, py::object offset_hz) {
        return py::vectorize([&mask](double f) { return mask_limit_db(mask, f); })(offset_hz);
      },
      "mask"_a, "offset_hz"_a, "Limit (dB) at offsets from the mask centre; NaN where none (vectorised).");
  py::class_<MaskVerdict>(m, "MaskVerdict", "A spectrum against a mask.")
      .def_readonly("pass_", &MaskVerdict::pass)
      .def_property_readonly("passed", [](const MaskVerdict& v) { return v.pass; })
      .def("__bool__", [](const MaskVerdict& v) { return v.pass; })
      .def_readonly("worst_margin_db", &MaskVerdict::worst_margin_db)
      .def_readonly("worst_frequency_hz", &MaskVerdict::worst_frequency_hz)
      .def_readonly("reference_db", &MaskVerdict::reference_db)
      .def_readonly("bins_checked", &MaskVerdict::bins_checked);
  m.def("mask_check", &mask_check, "spectrum"_a, "mask"_a);
}

}  // namespace qamsight::python
