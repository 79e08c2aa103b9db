// init_views: eye-diagram and constellation-density accumulators (2-D histograms for figures).
#include "bindings.hpp"
#include "qamsight/views.hpp"

namespace qamsight::python {

using namespace pybind11::literals;

namespace {

/// A row-major grid of `rows` x `cols` as a read-only 2-D view owned by `owner`.
template <class T>
py::array grid_view(std::span<const T> data, std::size_t rows, std::size_t cols, py::handle owner) {
  if (data.empty()) return py::array_t<T>(std::vector<py::ssize_t>{0, static_cast<py::ssize_t>(cols)});
  py::array_t<T> a({static_cast<py::ssize_t>(rows), static_cast<py::ssize_t>(cols)},
                   {static_cast<py::ssize_t>(cols * sizeof(T)), static_cast<py::ssize_t>(sizeof(T))}, data.data(),
                   owner);
  a.attr("setflags")(py::arg("write") = false);
  return a;
}

}  // namespace

void init_views(py::module_& m) {
  py::enum_<EyeComponent>(m, "EyeComponent", "The rail an eye diagram shows.")
      .value("in_phase", EyeComponent::in_phase)
      .value("quadrature", EyeComponent::quadrature);
  py::class_<EyeConfig>(m, "EyeConfig", "Eye-diagram grid: two symbol periods across time_bins x amplitude_bins.")
      .def(py::init([](double samples_per_symbol, double decision_offset, std::size_t time_bins,
                       std::size_t amplitude_bins, double amplitude_min, double amplitude_max, bool quadrature) {
             return EyeConfig{samples_per_symbol, decision_offset, time_bins, amplitude_bins,
                              amplitude_min, amplitude_max, quadrature};
           }),
           "samples_per_symbol"_a = 8.0, "decision_offset"_a = 0.0, "time_bins"_a = 128, "amplitude_bins"_a = 128,
           "amplitude_min"_a = -1.5, "amplitude_max"_a = 1.5, "quadrature"_a = true)
      .def_readwrite("samples_per_symbol", &EyeConfig::samples_per_symbol)
      .def_readwrite("decision_offset", &EyeConfig::decision_offset)
      .def_readwrite("time_bins", &EyeConfig::time_bins)
      .def_readwrite("amplitude_bins", &EyeConfig::amplitude_bins)
      .def_readwrite("amplitude_min", &EyeConfig::amplitude_min)
      .def_readwrite("amplitude_max", &EyeConfig::amplitude_max)
      .def_readwrite("quadrature", &EyeConfig::quadrature);
  py::class_<EyeDiagram>(m, "EyeDiagram",
                         "An eye diagram as a density (time spent per cell), streaming over add() calls.\n"
                         "histogram() is a read-only (amplitude_bins, time_bins) view, row 0 at amplitude_min.")
      .def(py::init<const EyeConfig&>(), "config"_a)
      .def(
          "add",
          [](EyeDiagram& self, py::handle samples) {
            py::array any = py::array::ensure(samples);
            if (any && any.dtype().kind() != 'c') {
              if (self.config().quadrature) {
                throw py::value_error("a real signal needs an EyeConfig with quadrature=False");
              }
              auto in = input_array<float>(samples, "samples");
              auto si = const_span(in);
              py::gil_scoped_release nogil;
              self.add(si);
              return;
            }
            auto in = input_array<cf32>(samples, "samples");
            auto si = const_span(in);
            py::gil_scoped_release nogil;
            self.add(si);
          },
          "samples"_a, "Adds complex64 samples (I and Q rails), or a real float32 signal (I rail only).")
      .def("merge", &EyeDiagram::merge, "other"_a)
      .def("reset", &EyeDiagram::reset)
      .def_property_readonly("config", &EyeDiagram::config)
      .def(
          "histogram",
          [](py::object self, EyeComponent component) {
            const auto& e = self.cast<const EyeDiagram&>();
            return grid_view<double>(e.histogram(component), e.config().amplitude_bins, e.config().time_bins, self);
          },
          "component"_a = EyeComponent::in_phase)
      .def("outside", &EyeDiagram::outside, "component"_a = EyeComponent::in_phase)
      .def_property_readonly("traces", &EyeDiagram::traces)
      .def(
          "column_time",
          [](const EyeDiagram& e, py::object c) {
            return py::vectorize([&e](std::size_t i) { return e.column_time(i); })(c);
          },
          "column"_a, "Centre of a column in symbol periods (vectorised).")
      .def(
          "row_amplitude",
          [](const EyeDiagram& e, py::object r) {
            return py::vectorize([&e](std::size_t i) { return e.row_amplitude(i); })(r);
          },
          "row"_a, "Centre of a row in amplitude units (vectorised).");

  py::class_<ConstellationDensityConfig>(m, "ConstellationDensityConfig", "bins x bins cells over [-extent, extent)^2.")
      .def(py::init([](std::size_t bins, double extent) { return ConstellationDensityConfig{bins, extent}; }),
           "bins"_a = 200, "extent"_a = 1.5)
      .def_readwrite("bins", &ConstellationDensityConfig::bins)
      .def_readwrite("extent", &ConstellationDensityConfig::extent);
  py::class_<ConstellationDensity>(m, "ConstellationDensity",
                                   "Received symbols counted in a square grid; counts() is a read-only uint64\n"
                                   "(bins, bins) view, row = quadrature bin from -extent upwards.")
      .def(py::init<const ConstellationDensityConfig&>(), "config"_a)
      .def(
          "add",
          [](ConstellationDensity& self, py::handle symbols) {
            auto in = input_array<cf32>(symbols, "symbols");
            auto si = const_span(in);
            py::gil_scoped_release nogil;
            self.add(si);
          },
          "symbols"_a)
      .def("merge", &ConstellationDensity::merge, "other"_a)
      .def("reset", &ConstellationDensity::reset)
      .def_property_readonly("config", &ConstellationDensity::config)
      .def("counts",
           [](py::object self) {
             const auto& d = self.cast<const ConstellationDensity&>();
             return grid_view<std::uint64_t>(d.counts(), d.config().bins, d.config().bins, self);
           })
      .def_property_readonly("inside", &ConstellationDensity::inside)
      .def_property_readonly("outside", &ConstellationDensity::outside)
      .def("cell_of", &ConstellationDensity::cell_of, "symbol"_a, "Cell index of a symbol, or -1 outside.")
      .def(
          "bin_center",
          [](const ConstellationDensity& d, py::object i) {
            return py::vectorize([&d](std::size_t k) { return d.bin_center(k); })(i);
          },
          "i"_a, "Centre of bin i on either axis (vectorised).");
}

}  // namespace qamsight::python
